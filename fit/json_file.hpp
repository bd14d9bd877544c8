// fit/json_file.hpp — occulta's JSON files (scenario, truth, event, result) in and out.
// Reading: an InputError naming the file when it cannot be opened or parsed. Writing:
// the file appears whole or not at all (written beside it, then renamed).
#pragma once

#include <filesystem>
#include <string>

#include <nlohmann/json.hpp>

namespace occulta::fit {

nlohmann::json read_json_file(const std::filesystem::path& path);
void write_json_file(const std::filesystem::path& path, const nlohmann::json& doc);
// Any text file the same way: whole or not at all (CSV rows, for instance).
void write_text_file(const std::filesystem::path& path, const std::string& text);

}  // namespace occulta::fit
