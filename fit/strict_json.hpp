// fit/strict_json.hpp — what every reader of occulta's own JSON files (event, scenario,
// track, result) shares to be strict: unknown keys are errors that suggest the nearest
// known key, names that become file names are restricted to a safe set, and a file of
// the wrong kind is named as such.
//
// Key paths in messages are written as in the file: `views[0].observer.lon_deg`.
#pragma once

#include <initializer_list>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::fit {

// The known word closest to `word` by edit distance (Levenshtein: insertions, deletions
// and substitutions of one character each cost 1), or "" when none is within
// max(2, |word| / 3) — further than that a suggestion is a guess, not a correction. A
// word that is a prefix of a known one, or has one as its prefix (3 letters at least),
// counts as distance 1.
std::string nearest_word(std::string_view word, const std::vector<std::string>& known);

// Throws InputError(file, …) for the first key of `object` not in `known`:
//   "unknown key `sorce` — did you mean `source`?" (or the list of known keys).
// `where` is the object's own key path ("" at the top, "views[0]" …).
void check_keys(const nlohmann::json& object, std::initializer_list<std::string_view> known, const std::string& where,
                const std::string& file);

// A name that becomes a file or folder name (event id, view name): letters, digits,
// '-', '_', '.'; not empty, not starting with '.', no "..". True when safe.
bool is_safe_name(std::string_view name);
// A safe name made from any text by the same rule: every character outside the set
// becomes '_' (so a leading '.' and every ".." go too); empty text becomes `fallback`.
// is_safe_name(safe_name_from(x, f)) holds for every x and a safe f.
std::string safe_name_from(std::string_view text, std::string_view fallback);
// Throws InputError(file, "`key_path` is \"../x\" — …") when the name is not safe.
void check_safe_name(const std::string& name, const std::string& key_path, const std::string& file);

// What kind of occulta file a document is, from its `schema` key ("occulta.result/1" →
// "result"; one of event, scenario, track, result, arrival, truth) or, for the files without one, its keys: "event" (views), "scenario"
// (observers and shell), "" when it cannot tell.
std::string file_kind(const nlohmann::json& doc);

// Throws InputError(file, "is a result file; `measure` needs an event file …") when the
// document is recognisably another kind of occulta file than `wanted`. `needed` says
// who needs what: "`measure` needs an event file or a folder of frames".
void require_kind(const nlohmann::json& doc, std::string_view wanted, const std::string& file, const std::string& needed);

}  // namespace occulta::fit
