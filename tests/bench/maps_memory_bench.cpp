// tests/bench/maps_memory_bench.cpp — peak memory of `occulta maps` against the number of
// frames (issue 18: memory flat in frames).
//
// Budget: flat — peak resident memory at 120 frames within a few MB of that at 30 (the
// chain holds a fixed number of frames; the polar cube goes to polar.fits plane by plane
// as frames finish). Holding the cube instead would add one polar plane per frame, about
// 1.3 MB per 1024² frame, which the bench prints beside the growth it sees.
//
// Writes 120 frames of 1024² int16 Rice (bench_frames.hpp, pointing moving every frame),
// and two one-view events: the first 30 frames (hard links) and all 120. Runs
// `occulta maps` on each as a fresh process (fork, exec, wait4) and reads its peak
// resident set (ru_maxrss, getrusage(2): the child's own, in KiB on Linux). `--short` (the
// test suite) uses 4 and 8 frames and fails only when a run fails. `--occulta PATH` runs
// another build of occulta (e.g. one from before a change) on the same frames.
#include <algorithm>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "bench_frames.hpp"
#include "whole_process.hpp"

namespace fs = std::filesystem;
using occulta::bench::peak_rss_mib;

namespace {

// A one-view event over the first `count` of `frames`, linked into DIR/v<count>/.
fs::path write_event(const fs::path& dir, const std::vector<fs::path>& frames, int count) {
  const std::string view = "v" + std::to_string(count);
  fs::create_directories(dir / view);
  for (int k = 0; k < count; ++k) fs::create_hard_link(frames[std::size_t(k)], dir / view / frames[std::size_t(k)].filename());
  const fs::path event = dir / (view + ".event.json");
  std::ofstream(event) << R"({"id": "bench", "views": [{"name": "view", "files": [")" << view << R"(/*.fits"]}]})";
  return event;
}

}  // namespace

int main(int argc, char** argv) {
  bool short_mode = false;
  std::string occulta = OCCULTA_EXECUTABLE;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--short") == 0) short_mode = true;
    else if (std::strcmp(argv[i], "--occulta") == 0 && i + 1 < argc) occulta = argv[++i];
    else {
      std::fprintf(stderr, "maps_memory_bench: usage: maps_memory_bench [--short] [--occulta PATH]\n");
      return 2;
    }
  }
  const int few = short_mode ? 4 : 30, many = short_mode ? 8 : 120;
  const fs::path dir = fs::temp_directory_path() / ("occulta-maps-memory-bench-" + std::to_string(::getpid()));
  int status = 0;
  try {
    std::printf("maps_memory_bench: writing %d frames %d² int16 Rice-compressed, pointing moving, into %s\n", many,
                occulta::bench::kFrameSize, dir.c_str());
    fs::create_directories(dir / "all");
    const auto frames = occulta::bench::write_bench_frames(dir / "all", many);
    double peak[2] = {0, 0};
    std::uintmax_t cube_bytes[2] = {0, 0};
    const int counts[2] = {few, many};
    for (int i = 0; i < 2; ++i) {
      const fs::path event = write_event(dir, frames, counts[i]);
      const fs::path out = dir / ("out" + std::to_string(counts[i]));
      peak[i] = peak_rss_mib({occulta, "maps", event.string(), "--out", out.string()});
      cube_bytes[i] = fs::file_size(out / "view" / "polar.fits");
      std::printf("  %3d frames: peak resident memory %.1f MiB (polar.fits %.1f MiB)\n", counts[i], peak[i],
                  cube_bytes[i] / 1048576.0);
    }
    const double per_frame_mib = (peak[1] - peak[0]) / (many - few);
    const double plane_mib = double(cube_bytes[1] - cube_bytes[0]) / (many - few) / 1048576.0;
    std::printf("  growth %.3f MiB per added frame; holding the cube would add one polar plane, %.3f MiB, per frame "
                "(budget: flat, well under one plane)\n", per_frame_mib, plane_mib);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "maps_memory_bench: %s\n", e.what());
    status = 1;
  }
  std::error_code ignored;
  fs::remove_all(dir, ignored);
  return status;
}
