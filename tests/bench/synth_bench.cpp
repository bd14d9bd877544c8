// Benchmark: a synthetic 512² frame with background corona and one shell.
// Budgets: < 1 s per frame on one core (issue "synthetic observations"); the render on one
// core ≤ 0.3 s (issue 18). Prints the render alone (one thread — its CPU time, which other
// processes' load does not inflate as it does wall time — then all threads) and a whole
// `synth` frame (render + F corona + noise + masks + FITS write), each against its budget.
// --short: fewer repetitions, for the test suite.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <thread>
#include <time.h>

#include "fit/render.hpp"
#include "fit/scenario.hpp"
#include "fit/synth.hpp"
#include "imaging/constants.hpp"
#include "tests/bench/best_of.hpp"

namespace {
using namespace occulta;
using bench::best_of;

double thread_cpu_s() {
  timespec ts{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

}  // namespace

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int repeats = short_mode ? 1 : 5;
  constexpr double kBudgetS = 1.0;

  // One view of a 512² frame, ±15 R☉, a shell at 8 R☉ heading 40° from the plane of the sky.
  fit::Scenario s;
  s.id = "bench";
  s.frames = 1;
  s.size_px = 512;
  s.half_width_rs = 15.0;
  s.observers.push_back({"a", -50.0, 0.0, 1.0, 0.0, 0.0, s.cadence_s, s.frames});
  fit::ScenarioShell shell;
  shell.lon_deg = -10.0;
  shell.half_angle_deg = 30.0;
  shell.aspect_ratio = 0.35;
  shell.apex.height_rs = 8.0;
  shell.apex.speed_km_s = 800.0;
  s.shells.push_back(shell);
  s.background.k_corona = "saito";
  s.cosmic_rays_per_frame = 10;

  imaging::Header header;
  imaging::write_geometry(header, fit::frame_geometry(s, 0, 0));
  const imaging::ImageGeometry geometry = imaging::read_geometry(header, "bench");
  fit::RenderScene scene;
  scene.background = fit::BackgroundCorona::saito;
  scene.sheaths.push_back({s.shells[0].at(0.0), 1e5, 0.08});

  double one_cpu = 1e30;
  const double one = best_of(repeats, [&] {
    const double t0 = thread_cpu_s();
    fit::render_frame(geometry, scene, 1);
    one_cpu = std::min(one_cpu, thread_cpu_s() - t0);
  });
  const int threads = int(std::max(1u, std::thread::hardware_concurrency()));
  const double all = best_of(repeats, [&] { fit::render_frame(geometry, scene, threads); });
  const auto dir = std::filesystem::temp_directory_path() / "occulta-synth-bench";
  const double whole = best_of(repeats, [&] { fit::synthesize(s, dir); });
  std::filesystem::remove_all(dir);

  std::printf("synth bench: 512x512 frame, Saito K corona + one shell sheath (best of %d)\n", repeats);
  std::printf("  render, 1 thread   %7.1f ms CPU (%.1f ms wall)   %.2f x the 0.3 s budget\n", one_cpu * 1e3, one * 1e3,
              one_cpu / 0.3);
  std::printf("  render, %d threads  %7.1f ms   %.2f x the 1 s budget\n", threads, all * 1e3, all / kBudgetS);
  std::printf("  whole synth frame  %7.1f ms   %.2f x the 1 s budget (render on all threads, noise, FITS write)\n",
              whole * 1e3, whole / kBudgetS);
  return 0;
}
