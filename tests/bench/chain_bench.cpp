// tests/bench/chain_bench.cpp — the imaging chain per frame against cfitsio alone.
//
// Budget (DESIGN.md, issue 4): per 1024² int16 Rice-compressed frame, the whole chain
// (imaging/chain.hpp: read, median on the raw frame, register + polar in one remap, calibrate
// (DN/s), running difference in σ) costs
// ≤ 1.5 × what imaging::read_fits (cfitsio read + decompress + scaling) needs alone; and
// memory per view does not grow with the number of frames beyond the polar cube.
//
// Writes N synthetic frames (bench_frames.hpp: a corona falling off with height, noise, an
// occulter and field stop, a bright front moving out, and a pointing that moves by up to
// ±2 px from frame to frame, so the remap tables are rebuilt for every frame, as real
// pointing makes them) into a temporary folder, then prints, pinned to
// one core and on all cores (the chain reads the next frame on a thread of its own either
// way): the load average, read time per frame, chain time per frame without and with the
// 5×5 median filter (occulta maps' default), their ratios to the read, each stage's time
// alone; and the peak resident memory (getrusage ru_maxrss) of a fresh process streaming
// N/2 and N frames, with and without keeping the polar cube. All times are the best of a
// few passes. Not a timed test: `--short` (what ./bootstrap test runs) uses few frames and
// only fails when the chain does.
#include <sched.h>
#include <sys/resource.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <limits>
#include <string>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/calibrate.hpp"
#include "imaging/bilinear.hpp"
#include "imaging/chain.hpp"
#include "imaging/constants.hpp"
#include "imaging/difference.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/time.hpp"

#include "bench_frames.hpp"

namespace fs = std::filesystem;
namespace oi = occulta::imaging;

namespace {

constexpr int kSize = occulta::bench::kFrameSize;

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Seconds per frame, best of `passes`.
double read_time(const std::vector<fs::path>& paths, int passes) {
  double best = 1e30;
  for (int p = 0; p < passes; ++p) {
    const auto start = std::chrono::steady_clock::now();
    for (const auto& path : paths) {
      const auto image = oi::read_fits(path);
      if (image.pixels.empty()) std::abort();
    }
    best = std::min(best, seconds_since(start) / paths.size());
  }
  return best;
}

double chain_time(const std::vector<fs::path>& paths, int passes, const oi::ChainOptions& options, oi::ViewRun* last) {
  double best = 1e30;
  for (int p = 0; p < passes; ++p) {
    double checksum = 0;
    const auto start = std::chrono::steady_clock::now();
    *last = oi::run_view("bench", paths, options, [&](const oi::ChainFrame& f) { checksum += f.polar_running.at<float>(10, 10); });
    best = std::min(best, seconds_since(start) / paths.size());
    if (std::isinf(checksum)) std::printf(" ");
  }
  return best;
}

// Each stage of the chain on its own, serially on the calling thread, in ms per frame
// (best of `passes`): where the time goes.
void print_stage_times(const std::vector<fs::path>& paths, int passes) {
  const auto sequence = oi::scan_view("bench", paths);
  const oi::RegisteredGrid grid = oi::grid_for_view(sequence.frames.front().geometry);
  cv::Mat first;  // the radii from the data, as the chain finds them for these frames
  oi::register_frame(oi::read_fits(paths.front()).pixels,
                     oi::make_registration(sequence.frames.front().geometry, grid), first);
  const oi::OcculterRadii radii = oi::estimate_occulter_radii(first, grid, paths.front().string());
  oi::RegistrationCache cache(grid, oi::annulus_keep_mask(grid, radii));
  const oi::PolarGrid polar = oi::make_polar_grid(grid, radii.inner_rs, radii.outer_rs);
  // The chain's path: raw frame → polar grid in one remap (registration composed in),
  // tables built per pointing (each frame's: the pointing moves) from the shared sampling;
  // the median runs on the raw frame first.
  const oi::PolarSampling sampling =
      oi::make_polar_sampling(grid, polar, cache.for_geometry(sequence.frames.front().geometry).drop);
  // The unwrap both ways: cv::remap's (tables for each new pointing, then the remap), and
  // imaging/bilinear's one pass with no tables (the chain's with AVX-512; the same bits).
  enum { kRead, kTables, kPolar, kBilinear, kRate, kMedian, kDifference, kSigma, kDivide, kStages };
  const char* names[kStages] = {"read_fits", "tables (new pointing)", "remap to polar", "bilinear to polar (no tables)",
                                "DN/s", "median 5 (raw frame)", "difference", "ring σ", "÷σ"};
  const bool one_pass = oi::bilinear::available(oi::read_fits(paths.front()).pixels);
  std::vector<double> best(kStages, 1e30);
  for (int p = 0; p < passes; ++p) {
    std::vector<double> sum(kStages, 0.0);
    cv::Mat current, previous, running, median_scratch;
    for (std::size_t k = 0; k < paths.size(); ++k) {
      auto t = std::chrono::steady_clock::now();
      const auto lap = [&](int stage) {
        sum[stage] += seconds_since(t);
        t = std::chrono::steady_clock::now();
      };
      auto image = oi::read_fits(paths[k]);
      lap(kRead);
      // As the chain does: the median on the raw frame, where cosmic-ray hits are a few
      // detector pixels (imaging/chain.cpp), then one remap to the polar grid.
      oi::median_filter(image.pixels, 5, median_scratch);
      lap(kMedian);
      const oi::Registration& registration = cache.for_geometry(sequence.frames[k].geometry);
      const oi::PolarMaps maps = oi::make_polar_maps(registration, sampling);
      lap(kTables);
      oi::to_polar(image.pixels, maps, current);
      lap(kPolar);
      if (one_pass) {
        oi::bilinear::sample_affine(image.pixels, sampling.points, registration.grid_to_source, sampling.drop, current);
        lap(kBilinear);
      }
      oi::to_rate(current, *sequence.frames[k].exposure_s);
      lap(kRate);
      if (!previous.empty()) {
        oi::difference(current, previous, 1.0, running);
        lap(kDifference);
        const auto sigma = oi::ring_sigma(running, 2, std::max(1, polar.pa_count / 240));
        lap(kSigma);
        oi::divide_by_rows(running, sigma);
        lap(kDivide);
      }
      std::swap(current, previous);
    }
    for (int s = 0; s < kStages; ++s) best[s] = std::min(best[s], sum[s] / paths.size());
  }
  std::printf("    stages alone, ms/frame:");
  for (int s = 0; s < kStages; ++s)
    if (s != kBilinear || one_pass) std::printf(" %s %.2f%s", names[s], 1e3 * best[s], s + 1 < kStages ? "," : "\n");
}

long child_peak_rss_kb(const fs::path& dir, int frames, bool keep_cube) {
  char command[1024];
  std::snprintf(command, sizeof command, "/proc/%d/exe --rss-child %d %s '%s'", int(::getpid()), frames,
                keep_cube ? "cube" : "stream", dir.c_str());
  FILE* pipe = popen(command, "r");
  long kb = -1;
  if (pipe) {
    if (std::fscanf(pipe, "%ld", &kb) != 1) kb = -1;
    pclose(pipe);
  }
  return kb;
}

int rss_child(int frames, const std::string& mode, const fs::path& dir) {
  std::vector<fs::path> paths;
  for (int k = 0; k < frames; ++k) paths.push_back(dir / ("frame" + std::to_string(1000 + k) + ".fits"));
  if (mode == "cube") {
    const auto run = oi::polar_running_differences("bench", paths);
    if (run.running.frames.empty()) return 1;
  } else {
    oi::run_view("bench", paths, {}, [](const oi::ChainFrame&) {});
  }
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  std::printf("%ld\n", usage.ru_maxrss);  // kilobytes on Linux
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc == 5 && std::strcmp(argv[1], "--rss-child") == 0) return rss_child(std::atoi(argv[2]), argv[3], argv[4]);
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int frames = short_mode ? 6 : 24;
  const int passes = short_mode ? 1 : 3;

  const fs::path dir = fs::temp_directory_path() / ("occulta-chain-bench-" + std::to_string(::getpid()));
  fs::create_directories(dir);
  int status = 0;
  try {
    std::printf("chain_bench: writing %d frames %d² int16 Rice-compressed into %s\n", frames, kSize, dir.c_str());
    const auto paths = occulta::bench::write_bench_frames(dir, frames);
    std::printf("  file size %.2f MB per frame\n", fs::file_size(paths.front()) / 1e6);
    const int all = cv::getNumberOfCPUs();
    cpu_set_t every;
    sched_getaffinity(0, sizeof every, &every);
    double load[3] = {0, 0, 0};
    if (getloadavg(load, 3) < 0) load[0] = load[1] = -1;
    std::printf("  load average before timing %.2f (1 min), %.2f (5 min): others' work on these cores inflates "
                "both figures\n", load[0], load[1]);
    // occulta maps filters with a 5×5 median by default; the bench times the chain both ways.
    oi::ChainOptions plain, median;
    median.median_filter = 5;
    double cube_frame_mb = 0;
    // All cores first: once the process has been pinned to one CPU, OpenCV's TBB pool
    // keeps no workers after the pin is lifted (TBB warns so), which would time "all
    // cores" on one.
    for (const bool one_core : {false, true}) {
      // One core: the whole process pinned to one CPU, one OpenCV thread, so the chain's
      // read-ahead thread shares the core (the ratio is then (read + the rest) / read).
      // All cores: unpinned, read-ahead and OpenCV threads spread over them. read_fits is
      // timed the same way each time.
      if (one_core) {
        cpu_set_t one;
        CPU_ZERO(&one);
        for (int c = 0; c < CPU_SETSIZE; ++c)
          if (CPU_ISSET(c, &every)) {
            CPU_SET(c, &one);
            break;
          }
        sched_setaffinity(0, sizeof one, &one);
      }
      const int threads = one_core ? 1 : all;
      cv::setNumThreads(threads);
      oi::ViewRun run;
      const double read_s = read_time(paths, passes);
      const double plain_s = chain_time(paths, passes, plain, &run);
      const double median_s = chain_time(paths, passes, median, &run);
      const auto scan_start = std::chrono::steady_clock::now();
      const auto sequence = oi::scan_view("bench", paths);
      const double scan_s = seconds_since(scan_start) / paths.size();
      std::printf("  %s (%d OpenCV thread%s): read_fits %.2f ms/frame; whole chain %.2f ms/frame, ratio %.2f; "
                  "with the 5×5 median %.2f ms/frame, ratio %.2f (budget 1.5)\n",
                  one_core ? "1 core " : "all cores", threads, threads == 1 ? "" : "s", 1e3 * read_s, 1e3 * plain_s,
                  plain_s / read_s, 1e3 * median_s, median_s / read_s);
      std::printf("    of which the header scan (imaging/sequence) %.2f ms/frame\n", 1e3 * scan_s);
      print_stage_times(paths, passes);
      cube_frame_mb = run.polar.pa_count * double(run.polar.height_count) * sizeof(float) / (1024.0 * 1024.0);
      if (one_core)
        std::printf("  polar grid %d PA × %d heights (%.2f–%.2f R☉); remap tables built %d time(s)\n",
                    run.polar.pa_count, run.polar.height_count, run.radii.inner_rs, run.radii.outer_rs,
                    run.registration_builds);
    }
    const int half = frames / 2;
    const long s1 = child_peak_rss_kb(dir, half, false), s2 = child_peak_rss_kb(dir, frames, false);
    const long c1 = child_peak_rss_kb(dir, half, true), c2 = child_peak_rss_kb(dir, frames, true);
    std::printf("  peak memory, streaming: %d frames %.1f MB, %d frames %.1f MB (growth %.1f MB)\n", half, s1 / 1024.0,
                frames, s2 / 1024.0, (s2 - s1) / 1024.0);
    std::printf("  peak memory, keeping the polar cube: %d frames %.1f MB, %d frames %.1f MB (growth %.1f MB; "
                "the cube itself grows by %.1f MB)\n",
                half, c1 / 1024.0, frames, c2 / 1024.0, (c2 - c1) / 1024.0, (frames - half) * cube_frame_mb);
    if (s1 < 0 || s2 < 0 || c1 < 0 || c2 < 0) status = 1;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "chain_bench: %s\n", e.what());
    status = 1;
  }
  std::error_code ignored;
  fs::remove_all(dir, ignored);
  return status;
}
