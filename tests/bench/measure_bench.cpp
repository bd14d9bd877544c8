// Benchmark: `measure` on the committed sample event (2 views × 16 frames of 384²).
// Budget (issue "finding the CME"): < 3 s on this machine. Prints the time and its ratio.
// --short: one run, for the test suite.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <sstream>

#include "app/measure.hpp"
#include "tests/bench/best_of.hpp"

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const std::filesystem::path source(OCCULTA_BENCH_SOURCE_DIR);
  occulta::app::MeasureOptions options;
  options.input = (source / "sample_frames/sample-2031-03-14.event.json").string();
  options.out_dir = (std::filesystem::temp_directory_path() / "occulta-measure-bench").string();
  options.quiet = true;
  std::ostringstream sink;
  const double best = occulta::bench::best_of(short_mode ? 1 : 5, [&] { occulta::app::run_measure(options, sink); });
  std::filesystem::remove_all(options.out_dir);
  std::printf("measure bench: sample event, 2 views x 16 frames of 384x384 (best of %d)\n", short_mode ? 1 : 5);
  std::printf("  measure            %7.2f s    %.2f x the 3 s budget\n", best, best / 3.0);
  return 0;
}
