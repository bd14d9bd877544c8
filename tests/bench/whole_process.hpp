// tests/bench/whole_process.hpp — what the whole-process benchmarks measure of a
// command, as a user meets it: its wall and CPU time (run), its instructions under
// callgrind, and its peak resident memory; with the median and the load average they
// report beside them.
#pragma once

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace occulta::bench {

struct Cost {
  double wall_s = 0.0, cpu_s = 0.0;
};

// CPU time (user + system) of this process's waited-for children so far (getrusage(2)
// RUSAGE_CHILDREN), in seconds.
inline double children_cpu_s() {
  rusage usage{};
  getrusage(RUSAGE_CHILDREN, &usage);
  return double(usage.ru_utime.tv_sec + usage.ru_stime.tv_sec) +
         1e-6 * double(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
}

// Wall (steady clock) and CPU time of one run of `command` through the shell (its words
// already quoted, its output redirected as the caller wants). Throws unless it exits 0.
inline Cost run(const std::string& command) {
  const double cpu0 = children_cpu_s();
  const auto t0 = std::chrono::steady_clock::now();
  const int status = std::system(command.c_str());
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  if (status != 0) throw std::runtime_error("failed (status " + std::to_string(status) + "): " + command);
  return {wall, children_cpu_s() - cpu0};
}

// Instructions of `command` (all its threads) under callgrind: its "summary:" line. The
// command's own output and valgrind's go to /dev/null; `scratch` holds callgrind's file.
inline double callgrind_instructions(const std::string& command, const std::filesystem::path& scratch) {
  const std::filesystem::path out = scratch / "callgrind.out";
  const std::string line_of =
      "valgrind --tool=callgrind --callgrind-out-file='" + out.string() + "' " + command + " > /dev/null 2>&1";
  if (std::system(line_of.c_str()) != 0) throw std::runtime_error("failed under callgrind: " + command);
  std::ifstream in(out);
  for (std::string line; std::getline(in, line);)
    if (line.rfind("summary:", 0) == 0) return std::stod(line.substr(8));
  throw std::runtime_error("no instruction count from callgrind for: " + command);
}

inline double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  return v.size() % 2 ? v[v.size() / 2] : 0.5 * (v[v.size() / 2 - 1] + v[v.size() / 2]);
}

// The 1-minute load average (getloadavg(3)), −1 when unknown: others' work inflates wall
// times, which the benchmarks print beside it.
inline double load_average() {
  double load[3] = {-1, -1, -1};
  return getloadavg(load, 3) < 0 ? -1 : load[0];
}

// Peak resident memory of one run of `argv` as a fresh process (fork, exec, wait4; stdout
// and stderr to /dev/null), from wait4's rusage (ru_maxrss: the child's own, KiB on Linux).

// In MiB. The run must exit 0 — or 1 when
// `exit_1_ok` (measure's "a problem met on the way", README "Exit codes"); anything else
// throws, naming the command.
inline double peak_rss_mib(const std::vector<std::string>& argv, bool exit_1_ok = false) {
  std::vector<char*> args;
  for (const auto& a : argv) args.push_back(const_cast<char*>(a.c_str()));
  args.push_back(nullptr);
  std::fflush(nullptr);  // or the child would flush our buffered lines a second time
  const pid_t child = ::fork();
  if (child < 0) throw std::runtime_error("fork failed");
  if (child == 0) {
    if (!std::freopen("/dev/null", "w", stdout) || !std::freopen("/dev/null", "w", stderr)) ::_exit(127);
    ::execv(args[0], args.data());
    ::_exit(127);
  }
  int status = 0;
  rusage usage{};
  const bool exited = ::wait4(child, &status, 0, &usage) == child && WIFEXITED(status);
  if (!exited || !(WEXITSTATUS(status) == 0 || (exit_1_ok && WEXITSTATUS(status) == 1))) {
    std::string command;
    for (const auto& a : argv) command += (command.empty() ? "" : " ") + a;
    throw std::runtime_error("failed (status " + std::to_string(status) + "): " + command);
  }
  return double(usage.ru_maxrss) / 1024.0;
}

}  // namespace occulta::bench
