// tests/bench/best_of.hpp — the one timing rule of the benchmarks: the best of `repeats`
// runs of `work`, in seconds of std::chrono::steady_clock (the least disturbed run is
// the closest to the code's own cost on a shared machine — common practice), or of the
// thread's CPU clock (best_cpu_of), which load on the machine does not inflate.
#pragma once

#include <algorithm>
#include <chrono>

#include <time.h>

namespace occulta::bench {

template <typename Work>
double best_of(int repeats, const Work& work) {
  double best = 1e30;
  for (int i = 0; i < repeats; ++i) {
    const auto t0 = std::chrono::steady_clock::now();
    work();
    best = std::min(best, std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
  }
  return best;
}

// This thread's CPU time so far (CLOCK_THREAD_CPUTIME_ID), in seconds.
inline double thread_cpu_s() {
  timespec t{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return double(t.tv_sec) + 1e-9 * double(t.tv_nsec);
}

// The same rule on this thread's CPU clock: on a machine shared with other work the wall
// clock also counts the time this thread waited for a core.
template <typename Work>
double best_cpu_of(int repeats, const Work& work) {
  double best = 1e30;
  for (int i = 0; i < repeats; ++i) {
    const double t0 = thread_cpu_s();
    work();
    best = std::min(best, thread_cpu_s() - t0);
  }
  return best;
}

}  // namespace occulta::bench
