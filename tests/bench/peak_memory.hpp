// tests/bench/peak_memory.hpp — the peak memory of a whole command, as the memory
// benchmarks measure it: `argv` run as a fresh process (fork, exec, wait4; stdout and
// stderr to /dev/null) and its own peak resident set read from wait4's rusage (ru_maxrss,
// getrusage(2): the child's, in KiB on Linux).
#pragma once

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <stdexcept>
#include <string>
#include <vector>

namespace occulta::bench {

// Peak resident memory of one run of `argv`, in MiB. The run must exit 0 — or 1 when
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
