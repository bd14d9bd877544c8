// app/provenance.hpp — what a result was made from: the version, each input file with
// its SHA-256 (FIPS 180-4, through OpenSSL), the options, and the time taken.
#pragma once

#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::app {

// Lower-case hex SHA-256 of a file's bytes; InputError naming the file when unreadable.
std::string sha256_file(const std::filesystem::path& path);

// SHA-256 already taken, by path (sha256_file's text).
using KnownSha256 = std::map<std::filesystem::path, std::string>;

// The SHA-256 of each file that can be read, by path (one that cannot is left out: the
// provenance taken later names it). For taking them on another thread while the work
// that reads the same files runs.
KnownSha256 sha256_files(const std::vector<std::filesystem::path>& files);

// {"version", "inputs": [{"path", "sha256"}], "options", "elapsed_s"}; an input found in
// `known` is not read again.
nlohmann::json provenance(const std::vector<std::filesystem::path>& inputs, const nlohmann::json& options,
                          double elapsed_s, const KnownSha256& known = {});

}  // namespace occulta::app
