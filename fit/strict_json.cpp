#include "fit/strict_json.hpp"

#include <algorithm>

#include "imaging/input_error.hpp"

namespace occulta::fit {
using nlohmann::json;

namespace {

// Levenshtein distance by the two-row dynamic programme (Wagner & Fischer 1974).
size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<size_t> previous(b.size() + 1), current(b.size() + 1);
  for (size_t j = 0; j <= b.size(); ++j) previous[j] = j;
  for (size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (size_t j = 1; j <= b.size(); ++j)
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1)});
    std::swap(previous, current);
  }
  return previous[b.size()];
}

std::string joined(const std::vector<std::string>& words) {
  std::string text;
  for (const auto& w : words) text += (text.empty() ? "`" : ", `") + w + "`";
  return text;
}

}  // namespace

std::string nearest_word(std::string_view word, const std::vector<std::string>& known) {
  std::string best;
  size_t best_distance = std::max<size_t>(2, word.size() / 3) + 1;
  for (const auto& k : known) {
    // A word cut short or run on ("--output" for "--out") counts as one edit away.
    const bool prefix = std::min(word.size(), k.size()) >= 3 && (word.starts_with(k) || std::string_view(k).starts_with(word));
    const size_t d = prefix ? 1 : edit_distance(word, k);
    if (d < best_distance) best_distance = d, best = k;
  }
  return best;
}

void check_keys(const json& object, std::initializer_list<std::string_view> known, const std::string& where,
                const std::string& file) {
  if (!object.is_object()) return;
  const std::vector<std::string> names(known.begin(), known.end());
  for (const auto& [key, value] : object.items()) {
    if (std::find(names.begin(), names.end(), key) != names.end()) continue;
    const std::string path = where.empty() ? key : where + "." + key;
    const std::string near = nearest_word(key, names);
    throw imaging::InputError(file, "unknown key `" + path + "`" +
                                        (near.empty() ? " — the keys known there are " + joined(names)
                                                      : " — did you mean `" + near + "`?"));
  }
}

namespace {
bool safe_char(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' || c == '_' || c == '.';
}
}  // namespace

bool is_safe_name(std::string_view name) {
  if (name.empty() || name.front() == '.' || name.find("..") != std::string_view::npos) return false;
  return std::all_of(name.begin(), name.end(), safe_char);
}

std::string safe_name_from(std::string_view text, std::string_view fallback) {
  std::string name;
  for (char c : text) {
    // A '.' first or after another '.' would make a hidden name or a "..": it becomes '_'.
    const bool dot_not_allowed = c == '.' && (name.empty() || name.back() == '.');
    name += safe_char(c) && !dot_not_allowed ? c : '_';
  }
  return name.empty() ? std::string(fallback) : name;
}

void check_safe_name(const std::string& name, const std::string& key_path, const std::string& file) {
  if (!is_safe_name(name))
    throw imaging::InputError(file, "`" + key_path + "` is " + json(name).dump() +
                                        " — it names files, so use letters, digits, '-', '_' and '.' only "
                                        "(not empty, not starting with '.', no \"..\")");
}

std::string file_kind(const json& doc) {
  if (!doc.is_object()) return "";
  if (doc.contains("schema") && doc["schema"].is_string()) {
    const std::string s = doc["schema"].get<std::string>();
    const std::string kind = s.starts_with("occulta.") && s.find('/') != std::string::npos ? s.substr(8, s.find('/') - 8) : "";
    for (const char* known : {"event", "scenario", "track", "result", "arrival", "truth"})
      if (kind == known) return kind;
  }
  if (doc.contains("observers") && doc.contains("shell")) return "scenario";
  if (doc.contains("views") && !doc.contains("status")) return "event";
  return "";
}

void require_kind(const json& doc, std::string_view wanted, const std::string& file, const std::string& needed) {
  const std::string kind = file_kind(doc);
  if (!kind.empty() && kind != wanted) throw imaging::InputError(file, "is " + std::string(std::string_view("aeiou").find(kind.front()) != std::string_view::npos ? "an " : "a ") + kind + " file; " + needed);
}

}  // namespace occulta::fit
