// fit/json_file.hpp — occulta's JSON files (scenario, truth, event, result) in and out.
// Reading: an InputError naming the file when it cannot be opened or parsed. Writing:
// the file appears whole or not at all (written beside it, then renamed).
#pragma once

#include <filesystem>
#include <string>

#include <nlohmann/json.hpp>

namespace occulta::fit {

nlohmann::json read_json_file(const std::filesystem::path& path);
// JSON text of `doc` (nlohmann's dump; `indent` < 0: one line). JSON is UTF-8 (RFC 8259
// §8.1), but a path or a header text can hold any bytes: those that are not UTF-8 are
// written as U+FFFD instead of throwing. Every JSON text occulta writes comes from here.
std::string json_text(const nlohmann::json& doc, int indent = -1);
void write_json_file(const std::filesystem::path& path, const nlohmann::json& doc);
// Any text file the same way: whole or not at all (CSV rows, for instance).
void write_text_file(const std::filesystem::path& path, const std::string& text);

}  // namespace occulta::fit
