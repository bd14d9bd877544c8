// Benchmark: `measure` on the committed sample event (2 views × 16 frames of 384²).
// Budget (issue "finding the CME"): < 3 s on this machine. Prints the time and its ratio.
// --short: one run, for the test suite.
//
// Whole process (issue 18: `measure` of the sample, whole process, half of its time before
// issue 18): `--paired OTHER [OTHER…] [--rounds N]` runs this build's `occulta measure` of
// the sample and each OTHER executable's (an earlier build: the one before issue 18, main)
// as fresh processes, one after the other in each round so that all see the same load, and
// prints each one's median wall and CPU time (user + system of the child, getrusage
// RUSAGE_CHILDREN) and the median of the per-round ratios this / OTHER, with the load
// average before and after. Wall time is what a user waits for (and what drawing the
// pictures on both cores shortens); on a loaded machine it includes others' work, CPU time
// does not. `--instructions` also counts one run of each under valgrind's callgrind
// (minutes; unaffected by the load) and prints their ratio.

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include "app/measure.hpp"
#include "tests/bench/best_of.hpp"
#include "tests/bench/whole_process.hpp"

namespace fs = std::filesystem;
using occulta::bench::callgrind_instructions;
using occulta::bench::Cost;
using occulta::bench::load_average;
using occulta::bench::median;
using occulta::bench::run;

namespace {

int paired(const std::vector<std::string>& others, int rounds, bool instructions, const fs::path& event) {
  std::vector<std::string> builds = {OCCULTA_EXECUTABLE};
  builds.insert(builds.end(), others.begin(), others.end());
  const fs::path scratch = fs::temp_directory_path() / "occulta-measure-bench-paired";
  fs::create_directories(scratch);
  std::vector<std::string> commands;
  for (std::size_t b = 0; b < builds.size(); ++b)
    commands.push_back("'" + builds[b] + "' measure '" + event.string() + "' --out '" +
                       (scratch / ("out" + std::to_string(b))).string() + "' --quiet > /dev/null 2>&1");
  for (const std::string& c : commands) run(c);  // warm: files in the page cache, libraries loaded
  std::vector<std::vector<double>> wall(builds.size()), cpu(builds.size()), wall_ratio(builds.size()), cpu_ratio(builds.size());
  const double load_before = load_average();
  for (int r = 0; r < rounds; ++r) {
    std::vector<Cost> cost;
    for (const std::string& c : commands) cost.push_back(run(c));
    for (std::size_t b = 0; b < builds.size(); ++b) {
      wall[b].push_back(cost[b].wall_s);
      cpu[b].push_back(cost[b].cpu_s);
      wall_ratio[b].push_back(cost[0].wall_s / cost[b].wall_s);
      cpu_ratio[b].push_back(cost[0].cpu_s / cost[b].cpu_s);
    }
  }
  const double load_after = load_average();
  std::printf("measure bench: `occulta measure` of the sample event as whole processes, median of %d paired rounds "
              "(load average %.2f before, %.2f after, on %u cores)\n",
              rounds, load_before, load_after, std::max(1u, std::thread::hardware_concurrency()));
  for (std::size_t b = 0; b < builds.size(); ++b) {
    std::printf("  %s\n    wall %.3f s, CPU %.3f s", builds[b].c_str(), median(wall[b]), median(cpu[b]));
    if (b > 0)
      std::printf("; this build / it: wall %.3f, CPU %.3f (rounds' wall ratios %.3f-%.3f)", median(wall_ratio[b]),
                  median(cpu_ratio[b]), *std::min_element(wall_ratio[b].begin(), wall_ratio[b].end()),
                  *std::max_element(wall_ratio[b].begin(), wall_ratio[b].end()));
    std::printf("\n");
  }
  if (instructions) {
    std::vector<double> counts;
    for (const std::string& c : commands) counts.push_back(callgrind_instructions(c, scratch));
    std::printf("  instructions (callgrind, all threads):");
    for (std::size_t b = 0; b < builds.size(); ++b) std::printf(" %.4g", counts[b]);
    for (std::size_t b = 1; b < builds.size(); ++b) std::printf("; this build / build %zu: %.3f", b + 1, counts[0] / counts[b]);
    std::printf("\n");
  }
  fs::remove_all(scratch);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const fs::path source(OCCULTA_BENCH_SOURCE_DIR);
  const fs::path event = source / "sample_frames/sample-2031-03-14.event.json";
  bool short_mode = false, instructions = false;
  int rounds = 7;
  std::vector<std::string> others;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--short") short_mode = true;
    else if (a == "--instructions") instructions = true;
    else if (a == "--rounds" && i + 1 < argc) rounds = std::max(1, std::atoi(argv[++i]));
    else if (a == "--paired") {
      while (i + 1 < argc && std::strncmp(argv[i + 1], "--", 2) != 0) others.push_back(argv[++i]);
    } else {
      std::fprintf(stderr, "usage: measure_bench [--short] | --paired OTHER_OCCULTA [OTHER…] [--rounds N] [--instructions]\n");
      return 2;
    }
  }
  if (!others.empty()) return paired(others, rounds, instructions, event);

  occulta::app::MeasureOptions options;
  options.input = event.string();
  options.out_dir = (fs::temp_directory_path() / "occulta-measure-bench").string();
  options.quiet = true;
  std::ostringstream sink;
  const double best = occulta::bench::best_of(short_mode ? 1 : 5, [&] { occulta::app::run_measure(options, sink); });
  fs::remove_all(options.out_dir);
  std::printf("measure bench: sample event, 2 views x 16 frames of 384x384 (best of %d)\n", short_mode ? 1 : 5);
  std::printf("  measure            %7.2f s    %.2f x the 3 s budget\n", best, best / 3.0);
  return 0;
}
