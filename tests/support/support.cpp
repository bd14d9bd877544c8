#include "tests/support/support.hpp"

#include <array>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <iterator>
#include <stdexcept>
#include <sys/wait.h>

#include "imaging/frame_memory.hpp"

namespace occulta::test {

std::filesystem::path scratch_dir(const std::string& name) {
  const char* root = std::getenv("OCCULTA_TEST_TMP");
  // Without it (a test binary run by hand), the build tree's own test-tmp, as under ctest:
  // two trees (Release and ASan, or two worktrees) never share scratch folders.
  std::filesystem::path base = root ? std::filesystem::path(root) : std::filesystem::path(OCCULTA_BINARY_DIR) / "test-tmp";
  std::filesystem::path dir = base / name;
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

bool sanitized_build() { return imaging::kAddressSanitized; }

std::filesystem::path source_path(const std::string& relative) {
  return std::filesystem::path(OCCULTA_SOURCE_DIR) / relative;
}

std::filesystem::path occulta_binary() { return std::filesystem::path(OCCULTA_BINARY_DIR) / "occulta"; }

std::filesystem::path synthesize_event(const std::string& name, const std::string& scenario_text) {
  const std::filesystem::path dir = scratch_dir(name);
  std::ofstream(dir / "s.scenario.json") << scenario_text;
  const CommandResult run = run_command(shell_quote(occulta_binary().string()) + " synth --quiet " +
                                        shell_quote((dir / "s.scenario.json").string()) + " --out " +
                                        shell_quote((dir / "frames").string()));
  if (run.exit_code != 0) throw std::runtime_error("occulta synth failed for " + name + ": " + run.output);
  return dir;
}

std::string slurp(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

void spit(const std::filesystem::path& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
}

std::vector<nlohmann::json> json_lines(const std::string& text) {
  std::vector<nlohmann::json> rows;
  std::istringstream lines(text);
  for (std::string line; std::getline(lines, line);)
    if (!line.empty()) rows.push_back(nlohmann::json::parse(line));
  return rows;
}

std::string shell_quote(const std::string& text) {
  std::string quoted = "'";
  for (char c : text) {
    if (c == '\'') quoted += "'\\''";
    else quoted += c;
  }
  return quoted + "'";
}

CommandResult run_command(const std::string& command_line) {
  CommandResult result;
  FILE* pipe = popen((command_line + " 2>&1").c_str(), "r");
  if (!pipe) throw std::runtime_error("could not start: " + command_line);
  std::array<char, 4096> buffer{};
  size_t n = 0;
  while ((n = fread(buffer.data(), 1, buffer.size(), pipe)) > 0) result.output.append(buffer.data(), n);
  const int status = pclose(pipe);
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return result;
}

CommandResult run_python(const std::string& script_relative, const std::string& arguments) {
  // Debian's python3 explicitly: another python3 earlier on PATH may lack astropy.
  // PYTHONNOUSERSITE keeps user-installed packages out of the reference run.
  return run_command("PYTHONNOUSERSITE=1 " + shell_quote(OCCULTA_PYTHON) + " " +
                     shell_quote(source_path(script_relative).string()) + " " + arguments);
}

}  // namespace occulta::test
