// tests/bench/maps_bench.cpp — `occulta maps` as a user runs it (the whole process, outputs
// written) against the floor: a bare cfitsio program reading the same files
// (read_floor.cpp).
//
// Budget (issue 18): `occulta maps`, whole process on both cores, ≤ 1.5 × the read; goal
// 1.0 (the chain hides behind reading the next frames).
//
// Writes N frames of 1024² int16 Rice (bench_frames.hpp: the pointing moves by up to ±2 px
// from frame to frame) and a one-view event file, then runs, paired in one loop so that
// both see the same load: read_floor on the files; `occulta maps` with its default 5×5
// median; `occulta maps --median 0`. Each is a fresh process (fork/exec through
// std::system). Prints each one's median wall time and the median of the paired ratios,
// and its CPU time (user + system of the child, getrusage RUSAGE_CHILDREN): on a loaded
// machine wall time includes others' work, CPU time does not. `--short` (the test suite)
// uses 6 frames and one round and fails only when a run fails. `--write DIR N` only writes
// N frames and DIR/bench.event.json and keeps them (for profiling by hand).
// `--instructions` also counts the instructions of one read and one `maps` run under
// valgrind's callgrind (minutes; not in `./bootstrap bench`) and prints their ratio: unlike
// times, the count does not change with the machine's load. (This machine's virtual CPU
// has no hardware counters, so `perf stat -e instructions` cannot count them.)
// `--paired OTHER` adds another build's executable to each round (its `maps`, default
// median, on the same files and after the same read): its medians and the paired ratio
// of this build to it, to compare two builds under the same load.
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "bench_frames.hpp"
#include "whole_process.hpp"

namespace fs = std::filesystem;
using occulta::bench::callgrind_instructions;
using occulta::bench::Cost;
using occulta::bench::load_average;
using occulta::bench::median;
using occulta::bench::run;

static void write_event(const fs::path& dir, int frames) {
  fs::create_directories(dir / "view");
  occulta::bench::write_bench_frames(dir / "view", frames);
  std::ofstream(dir / "bench.event.json") << R"({"id": "bench", "views": [{"name": "view", "files": ["view/*.fits"]}]})";
}

int main(int argc, char** argv) {
  if (argc == 4 && std::strcmp(argv[1], "--write") == 0) {
    write_event(argv[2], std::atoi(argv[3]));
    return 0;
  }
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const bool instructions = argc > 1 && std::strcmp(argv[1], "--instructions") == 0;
  const std::string other = argc == 3 && std::strcmp(argv[1], "--paired") == 0 ? argv[2] : "";
  const int frames = short_mode ? 6 : 30;
  const int rounds = short_mode ? 1 : 5;
  const fs::path dir = fs::temp_directory_path() / ("occulta-maps-bench-" + std::to_string(::getpid()));
  int status = 0;
  try {
    std::printf("maps_bench: writing %d frames %d² int16 Rice-compressed, pointing moving up to ±2 px frame to frame, "
                "into %s\n", frames, occulta::bench::kFrameSize, dir.c_str());
    write_event(dir, frames);
    std::vector<fs::path> paths;
    for (const auto& entry : fs::directory_iterator(dir / "view")) paths.push_back(entry.path());
    std::sort(paths.begin(), paths.end());
    std::string files;
    for (const auto& p : paths) files += " '" + p.string() + "'";
    const std::string read = std::string("'") + OCCULTA_READ_FLOOR + "'" + files + " > /dev/null";
    const std::string maps = std::string("'") + OCCULTA_EXECUTABLE + "' maps '" + (dir / "bench.event.json").string() +
                             "' --out '" + (dir / "out").string() + "' > /dev/null";
    if (instructions) {
      // The read command without its redirection: callgrind_instructions adds its own.
      const std::string read_files = std::string("'") + OCCULTA_READ_FLOOR + "'" + files;
      const std::string maps_run = std::string("'") + OCCULTA_EXECUTABLE + "' maps '" +
                                   (dir / "bench.event.json").string() + "' --out '" + (dir / "out").string() + "'";
      const double read_count = callgrind_instructions(read_files, dir), maps_count = callgrind_instructions(maps_run, dir);
      std::printf("  instructions (callgrind), %d frames: read floor %.3g, occulta maps (5×5 median) %.3g; ratio %.2f "
                  "(budget 1.5)\n", frames, read_count, maps_count, maps_count / read_count);
    }
    const double load_before = load_average();
    std::printf("  load average before timing %.2f (1 min): others' work inflates wall times, not CPU times\n", load_before);
    std::vector<double> read_wall, read_cpu, maps_wall, maps_cpu, plain_wall, plain_cpu;
    std::vector<double> ratio_wall, ratio_plain_wall, ratio_cpu, ratio_plain_cpu;
    std::vector<double> other_wall, other_cpu, ratio_other_wall, ratio_other_cpu;
    const std::string other_maps = "'" + other + "' maps '" + (dir / "bench.event.json").string() + "' --out '" +
                                   (dir / "out").string() + "' > /dev/null";
    for (int r = 0; r < rounds; ++r) {
      const Cost c_read = run(read), c_maps = run(maps), c_plain = run(maps + " --median 0");
      if (!other.empty()) {
        const Cost c_other = run(other_maps);
        other_wall.push_back(c_other.wall_s), other_cpu.push_back(c_other.cpu_s);
        ratio_other_wall.push_back(c_maps.wall_s / c_other.wall_s), ratio_other_cpu.push_back(c_maps.cpu_s / c_other.cpu_s);
      }
      read_wall.push_back(c_read.wall_s), read_cpu.push_back(c_read.cpu_s);
      maps_wall.push_back(c_maps.wall_s), maps_cpu.push_back(c_maps.cpu_s);
      plain_wall.push_back(c_plain.wall_s), plain_cpu.push_back(c_plain.cpu_s);
      ratio_wall.push_back(c_maps.wall_s / c_read.wall_s), ratio_plain_wall.push_back(c_plain.wall_s / c_read.wall_s);
      ratio_cpu.push_back(c_maps.cpu_s / c_read.cpu_s), ratio_plain_cpu.push_back(c_plain.cpu_s / c_read.cpu_s);
    }
    std::printf("  %d frames, median of %d paired rounds, whole processes:\n", frames, rounds);
    std::printf("    read floor (cfitsio only)   wall %.3f s, CPU %.3f s\n", median(read_wall), median(read_cpu));
    std::printf("    occulta maps (5×5 median)   wall %.3f s, CPU %.3f s; ratio to the read: wall %.2f (budget 1.5), "
                "CPU %.2f\n", median(maps_wall), median(maps_cpu), median(ratio_wall), median(ratio_cpu));
    std::printf("    occulta maps --median 0     wall %.3f s, CPU %.3f s; ratio to the read: wall %.2f (budget 1.5), "
                "CPU %.2f\n", median(plain_wall), median(plain_cpu), median(ratio_plain_wall), median(ratio_plain_cpu));
    if (!other.empty())
      std::printf("    %s maps (5×5 median)   wall %.3f s, CPU %.3f s; this build over it: wall %.3f, CPU %.3f "
                  "(medians of the paired ratios)\n", other.c_str(), median(other_wall), median(other_cpu),
                  median(ratio_other_wall), median(ratio_other_cpu));
    const double load_after = load_average();
    // The figure the issue's budget is about, on a line of its own (grep "wall ratio").
    std::printf("  maps wall ratio %.2f × the read (budget 1.5, goal 1.0): occulta maps, whole process, default "
                "median, %d frames, median of %d paired rounds; load average %.2f before, %.2f after (quote it only "
                "from a quiet machine; CPU ratio %.2f)\n", median(ratio_wall), frames, rounds, load_before, load_after,
                median(ratio_cpu));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "maps_bench: %s\n", e.what());
    status = 1;
  }
  std::error_code ignored;
  fs::remove_all(dir, ignored);
  return status;
}
