// tests/bench/measure_memory_bench.cpp — peak memory of `occulta measure` against the
// number of frames (issue 18: memory flat in frames).
//
// Budget: flat, as `maps` is (maps_memory_bench). Today `measure` keeps each view's polar
// running differences (frames × heights × PAs floats, fit/measurement.hpp "Memory"), so
// its peak grows by about one polar plane per frame; the bench prints the growth it sees
// beside the size of one plane (heights × PAs × 4 bytes, from the polar.fits `maps` writes
// of the same frames), so the figure shows how far from flat it is.
//
// Makes one synthetic event with `occulta synth` (one view, 4N frames of S² int16 Rice,
// the CME crossing the field over the whole window), then two one-view events over its
// first N frames and over all 4N (hard links). Runs `occulta measure` on each as a fresh
// process (fork, exec, wait4) and reads its peak resident set (ru_maxrss, getrusage(2):
// the child's own, in KiB on Linux). Full: N = 16, S = 512. `--short` (the test suite):
// N = 3, S = 128, failing only when a run fails. `--occulta PATH` runs another build of
// occulta (e.g. one from before a change) on the same frames.
#include <algorithm>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "whole_process.hpp"

namespace fs = std::filesystem;
using occulta::bench::peak_rss_mib;

namespace {

// The scenario: one observer, `frames` frames of size² over the same 160 minutes whatever
// their number, a 950 km/s CME from 2 R☉ (the sample scenario's shell, one view).
void write_scenario(const fs::path& path, int frames, int size) {
  const int cadence_s = 9600 / frames;
  std::ofstream(path) << R"({"id": "memory", "start": "2031-03-14T06:00:00", "cadence_s": )" << cadence_s
                      << R"(, "frames": )" << frames << R"(, "exposure_s": 6.0,
  "image": {"size_px": )" << size << R"(, "half_width_rs": 15.0, "occulter_rs": [2.5, 14.5]},
  "observers": [{"name": "view", "lon_deg": -62.0, "lat_deg": 1.5, "dist_au": 0.97, "roll_deg": 2.0}],
  "shell": {"lon_deg": -12.0, "lat_deg": 6.0, "tilt_deg": 30.0, "half_angle_deg": 26.0, "aspect_ratio": 0.33,
            "apex": {"time": "2031-03-14T06:00:00", "height_rs": 2.0, "speed_km_s": 950.0, "accel_m_s2": -12.0},
            "density_cm3": 5.0e5, "sheath_fraction": 0.08},
  "background": {"k_corona": "saito", "f_corona": 1.0},
  "detector": {"dn_per_s_per_bsun": 2.0e12, "electrons_per_dn": 4.0, "read_noise_dn": 3.0,
               "pixels": "int16", "compress": true},
  "jitter_px": 0.3, "cosmic_rays_per_frame": 12, "seed": 18})";
}

// A one-view event over the first `count` of the frames in `frames_dir` (sorted by name),
// linked into DIR/v<count>/.
fs::path write_event(const fs::path& dir, const fs::path& frames_dir, int count) {
  std::vector<fs::path> frames;
  for (const auto& entry : fs::directory_iterator(frames_dir))
    if (entry.path().extension() == ".fits") frames.push_back(entry.path());
  std::sort(frames.begin(), frames.end());
  if (int(frames.size()) < count) throw std::runtime_error("synth wrote " + std::to_string(frames.size()) + " frames");
  const std::string view = "v" + std::to_string(count);
  fs::create_directories(dir / view);
  for (int k = 0; k < count; ++k)
    fs::create_hard_link(frames[std::size_t(k)], dir / view / frames[std::size_t(k)].filename());
  const fs::path event = dir / (view + ".event.json");
  std::ofstream(event) << R"({"id": "memory", "views": [{"name": "view", "files": [")" << view << R"(/*.fits"]}]})";
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
      std::fprintf(stderr, "measure_memory_bench: usage: measure_memory_bench [--short] [--occulta PATH]\n");
      return 2;
    }
  }
  const int few = short_mode ? 3 : 16, many = 4 * few, size = short_mode ? 128 : 512;
  const fs::path dir = fs::temp_directory_path() / ("occulta-measure-memory-bench-" + std::to_string(::getpid()));
  int status = 0;
  try {
    std::printf("measure_memory_bench: `occulta synth` of %d frames %d² int16 Rice-compressed, one view, into %s\n",
                many, size, dir.c_str());
    fs::create_directories(dir);
    write_scenario(dir / "memory.scenario.json", many, size);
    peak_rss_mib({OCCULTA_EXECUTABLE, "synth", (dir / "memory.scenario.json").string(), "--out",
                  (dir / "synth").string(), "--quiet"}, false);
    double peak[2] = {0, 0};
    const int counts[2] = {few, many};
    for (int i = 0; i < 2; ++i) {
      const fs::path event = write_event(dir, dir / "synth" / "view", counts[i]);
      const fs::path out = dir / ("measure" + std::to_string(counts[i]));
      peak[i] = peak_rss_mib({occulta, "measure", event.string(), "--out", out.string(), "--quiet"}, true);
      if (!fs::exists(out / "result.json")) throw std::runtime_error("measure wrote no " + (out / "result.json").string());
      std::printf("  %3d frames: peak resident memory %.1f MiB\n", counts[i], peak[i]);
    }
    // One polar plane's size: from the cube `maps` writes of the same frames.
    const fs::path maps_out = dir / "maps";
    peak_rss_mib({OCCULTA_EXECUTABLE, "maps", (dir / ("v" + std::to_string(few) + ".event.json")).string(), "--out",
                  maps_out.string()}, true);
    const std::uintmax_t cube_bytes = fs::file_size(maps_out / "view" / "polar.fits");
    const double plane_mib = double(cube_bytes) / (few - 1) / 1048576.0;  // N frames, N − 1 differences
    const double per_frame_mib = (peak[1] - peak[0]) / (many - few);
    std::printf("  growth %.3f MiB per added frame = %.2f polar planes of %.3f MiB (budget: flat, well under one plane)\n",
                per_frame_mib, per_frame_mib / plane_mib, plane_mib);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "measure_memory_bench: %s\n", e.what());
    status = 1;
  }
  std::error_code ignored;
  fs::remove_all(dir, ignored);
  return status;
}
