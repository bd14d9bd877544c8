// tests/support — what every suite needs: a scratch folder, a way to run a command
// (Debian's python3 with astropy/numpy/scipy, fitsverify, the occulta binary) and read
// what it printed, and paths into the source tree.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::test {

// A fresh, empty folder for one test case: $OCCULTA_TEST_TMP/<name> (or the build tree's
// test-tmp/<name>), emptied when made. It is left behind afterwards to look at.
std::filesystem::path scratch_dir(const std::string& name);

// Whether this build runs under AddressSanitizer (the build-asan/ tree): suites whose
// cost is dominated by sanitized child processes run a smaller case there.
bool sanitized_build();

// A path inside the source tree, e.g. source_path("tests/external/write_fits.py").
std::filesystem::path source_path(const std::string& relative);

// The built occulta executable.
std::filesystem::path occulta_binary();

struct CommandResult {
  int exit_code = -1;
  std::string output;  // stdout and stderr together
};

// Runs a shell command line; output captured.
CommandResult run_command(const std::string& command_line);

// Runs one of the tests/external/*.py scripts with Debian's python3.
CommandResult run_python(const std::string& script_relative, const std::string& arguments);

// A synthetic event for a test: writes the scenario text to
// $OCCULTA_TEST_TMP/<name>/s.scenario.json, runs `occulta synth --quiet` into
// <name>/frames/ and returns <name>/ (a fresh folder). Throws std::runtime_error with
// what synth printed when it fails.
std::filesystem::path synthesize_event(const std::string& name, const std::string& scenario_text);

// A file's bytes, whole; and a file made of exactly these bytes (tests that damage files).
std::string slurp(const std::filesystem::path& path);
void spit(const std::filesystem::path& path, const std::string& bytes);

// Single-quotes a string for the shell.
std::string shell_quote(const std::string& text);

// What the reference scripts under tests/external print: one JSON object per line (blank
// lines skipped). Throws nlohmann::json::parse_error on a line that is not JSON.
std::vector<nlohmann::json> json_lines(const std::string& text);

}  // namespace occulta::test
