// app/provenance.hpp — what a result was made from: the version, each input file with
// its SHA-256 (FIPS 180-4, through OpenSSL), the options, and the time taken.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::app {

// Lower-case hex SHA-256 of a file's bytes; InputError naming the file when unreadable.
std::string sha256_file(const std::filesystem::path& path);

// {"version", "inputs": [{"path", "sha256"}], "options", "elapsed_s"}
nlohmann::json provenance(const std::vector<std::filesystem::path>& inputs, const nlohmann::json& options,
                          double elapsed_s);

}  // namespace occulta::app
