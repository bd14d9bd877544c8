// tests/bench/best_of.hpp — the one timing rule of the benchmarks: the best of `repeats`
// runs of `work`, in seconds of std::chrono::steady_clock (the least disturbed run is
// the closest to the code's own cost on a shared machine — common practice).
#pragma once

#include <algorithm>
#include <chrono>

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

}  // namespace occulta::bench
