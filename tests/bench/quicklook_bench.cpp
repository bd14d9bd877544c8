// Benchmark: the quicklook pictures of `maps` and `measure` (app/quicklook), drawn with the
// plotting layer and rendered headless, at the sizes a 1024² frame gives: a sky panel from a
// 1024² image, a polar panel of 720 PAs × 480 heights, a time–height map of 30 frames
// (480 columns × 480 heights) with a track and a law, and shell.png's three 1024² sky
// panels. Budget (task of issue 14's quicklooks): ≤ 50 ms per picture, one core.
// Prints the render alone and render + PNG encoding + writing, with ratios to the budget.
// --short: fewer repetitions, for the test suite.
#include <algorithm>
#include <cmath>
#include <ctime>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <string>

#include <opencv2/core.hpp>

#include "app/quicklook.hpp"
#include "imaging/output_file.hpp"
#include "viewer/headless.hpp"
#include "tests/bench/best_of.hpp"

namespace {
using namespace occulta;

// Noise in σ with a bright ring, NaN inside `hole` pixels of the centre and outside the
// inscribed circle: what a running difference on the registered grid looks like.
cv::Mat sky_values(int size, double hole) {
  cv::Mat v(size, size, CV_32F);
  cv::randn(v, 0.0, 1.0);  // cv::theRNG's fixed default seed: the same picture every run
  const double c = (size - 1) / 2.0;
  for (int y = 0; y < size; ++y)
    for (int x = 0; x < size; ++x) {
      const double r = std::hypot(x - c, y - c);
      if (r < hole || r > c) v.at<float>(y, x) = NAN;
      else if (std::abs(r - 0.6 * c) < 6.0 && x > c) v.at<float>(y, x) += 6.0f;
    }
  return v;
}

// The same rule on this process' CPU time (std::clock): on a machine shared with other
// work the wall time waits for the cores, the CPU time much less.
template <typename Work>
double best_cpu_of(int repeats, const Work& work) {
  double best = 1e30;
  for (int i = 0; i < repeats; ++i) {
    const std::clock_t t0 = std::clock();
    work();
    best = std::min(best, double(std::clock() - t0) / CLOCKS_PER_SEC);
  }
  return best;
}

}  // namespace

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int repeats = short_mode ? 2 : 10;
  constexpr double kBudgetS = 0.050;
  const std::filesystem::path dir = std::filesystem::temp_directory_path() / "occulta_quicklook_bench";
  std::filesystem::create_directories(dir);

  const double rs_per_px = 30.0 / 1024.0;
  const viewer::ImageExtent sky_extent{-512 * rs_per_px, 512 * rs_per_px, -512 * rs_per_px, 512 * rs_per_px};
  imaging::OcculterRadii radii;
  radii.inner_rs = 2.5;
  radii.outer_rs = 15.0;
  app::Overlay edge{app::Overlay::Shape::dots, {}, app::kPointMark, "leading edge"};
  app::Overlay outline{app::Overlay::Shape::line, {}, app::kShellMark, "shell outline"};
  for (int k = 0; k < 240; ++k) {
    edge.points.push_back(app::sky_point(230.0 + 0.5 * k, 9.0));
    outline.points.push_back(app::sky_point(230.0 + 0.5 * k, 9.4));
  }
  const app::QuicklookPanel sky{app::Plane::sky, sky_values(1024, 85.0), sky_extent, app::sigma_scale(4.0, "running difference (σ)"),
                                "bench · running difference, north up · 2031-03-14 08:30 UTC", radii, {edge, outline}};

  cv::Mat polar_values(480, 720, CV_32F);
  cv::randn(polar_values, 0.0, 1.0);
  const app::QuicklookPanel polar{app::Plane::polar, polar_values, viewer::ImageExtent{-0.25, 359.75, 2.5, 15.0},
                                  app::sigma_scale(4.0, "running difference (σ)"), "bench · unwrapped", {}, {}};

  const double t0 = 978'000'000.0, t1 = t0 + 29 * 600.0;
  cv::Mat th_values(480, 480, CV_32F);
  cv::randn(th_values, 0.0, 1.0);
  app::Overlay track{app::Overlay::Shape::rings, {}, app::kPointMark, "track points"};
  app::Overlay law{app::Overlay::Shape::line, {}, app::kFitMark, "fitted law"};
  for (int k = 0; k < 30; ++k) track.points.push_back({t0 + 600.0 * k, 3.0 + 0.4 * k});
  for (int k = 0; k <= 100; ++k) law.points.push_back({t0 + (t1 - t0) * k / 100.0, 3.0 + 11.6 * k / 100.0});
  const app::QuicklookPanel time_height{app::Plane::time_height, th_values, viewer::ImageExtent{t0, t1, 2.5, 15.0},
                                        app::sigma_scale(4.0, "running difference (σ)"), "bench · time–height", {},
                                        {track, law}};
  const app::QuicklookPanel three[] = {sky, sky, sky};

  struct Case {
    const char* name;
    std::span<const app::QuicklookPanel> panels;
  } cases[] = {{"sky 1024x1024 (front.png)", {&sky, 1}},
               {"polar 720x480", {&polar, 1}},
               {"time-height 480x480 + track", {&time_height, 1}},
               {"shell.png: 3 x sky 1024x1024", three}};
  std::printf("quicklook bench: one picture, one core (best of %d); budget 50 ms per picture\n", repeats);
  for (const Case& c : cases) {
    viewer::Framebuffer picture;
    const double render = bench::best_of(repeats, [&] { picture = app::draw_quicklook(c.panels).picture; });
    const double render_cpu = best_cpu_of(repeats, [&] { picture = app::draw_quicklook(c.panels).picture; });
    const double png = bench::best_of(repeats, [&] { viewer::write_png(picture, dir / "bench.png"); });
    const double png_cpu = best_cpu_of(repeats, [&] { viewer::write_png(picture, dir / "bench.png"); });
    // Of which the file itself: the same bytes written whole (fsync of file and folder).
    const std::string bytes(std::filesystem::file_size(dir / "bench.png"), 'x');
    const double file = bench::best_of(repeats, [&] { imaging::write_file_atomically(dir / "bytes", bytes); });
    std::printf("  %-29s render %5.1f ms wall, %5.1f ms CPU; PNG encoded and written %5.1f ms wall, %5.1f ms CPU "
                "(the file's write and fsync alone %5.1f ms wall, %zu kB); picture CPU %.2f x budget\n",
                c.name, render * 1e3, render_cpu * 1e3, png * 1e3, png_cpu * 1e3, file * 1e3, bytes.size() / 1000,
                (render_cpu + png_cpu) / kBudgetS);
  }
  std::filesystem::remove_all(dir);
  return 0;
}
