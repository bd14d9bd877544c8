// Benchmark: the analyst's window at work (issue 15, "The analyst's window, part 2").
//  1. One 1280×800 frame with both views of the sample, their shell outlines, the
//     height–time panels, 100 marked points and a tie's epipolar line: shown_views (the
//     images coloured, the outlines made — or taken from the window's cache,
//     window_cache.hpp), draw_window (Dear ImGui) and our rasterizer, on one core, as the
//     window's loop runs them (present.cpp). Budget ≤ 16 ms, goal 8 ms. Two frames:
//       steady    the state drawn again (the cursor moving, a control dragged): the cache
//                 holds the colourings and outlines;
//       new time  the displayed time changes: by a step (or playing), whose pictures and
//                 outlines the loop made ahead after showing the last frame
//                 (prepare_neighbours), or by a jump to a time not shown before, whose
//                 images are coloured and outlines made in the frame (the height–time maps
//                 stay).
//     Each is the best of N in this thread's CPU time (best_cpu_of), which load on the
//     machine does not inflate, with its parts; the wall-clock best beside it.
//  2. The fit action over 2 views × 10 frames of points (5 per frame) as the window runs
//     it: the rest of the measurement over the imaging its loader made (fit/measurement.hpp
//     measure_imaged). Budget ≤ 0.5 s. Beside it, paired, the whole measurement with the
//     chain rerun (what the fit cost before). Then the fit once on a worker while this
//     thread keeps drawing frames, as the window does: frames drawn and the longest.
// --short: fewer repetitions, for the test suite.
#include <algorithm>
#include <chrono>
#include <ctime>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <future>

#include "fit/measurement.hpp"
#include "tests/bench/best_of.hpp"
#include "viewer/session.hpp"
#include "viewer/ui.hpp"

namespace {
using namespace occulta;
namespace fs = std::filesystem;
}  // namespace

int main(int argc, char** argv) {
  const bool short_run = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const fs::path event = fs::path(OCCULTA_BENCH_SOURCE_DIR) / "sample_frames/sample-2031-03-14.event.json";
  viewer::Session session;
  session.input = fit::load_measurement_input(event);
  std::vector<viewer::ViewPictures> views;
  for (std::size_t i = 0; i < session.input->event.views.size(); ++i) {  // the frames inside the window, as app/view.cpp
    const fit::EventView& v = session.input->event.views[i];
    views.push_back(viewer::load_view({v.name, session.input->windows[i].inside, fit::chain_options(session.input->event, v, 5)}));
  }

  viewer::WindowState s;
  s.views = {"east", "west"};
  s.event_id = session.input->event.id;
  apply(s, viewer::action::Timeline{viewer::frame_times(views)});
  for (const auto& v : views) apply(s, viewer::action::ViewFrames{v.name, viewer::frame_times(v)});
  apply(s, viewer::action::SetShell{.shown = true, .lon_deg = -12.0, .lat_deg = 6.0, .tilt_deg = 30.0, .half_angle_deg = 26.0,
                                    .aspect_ratio = 0.33, .apex_height_rs = 2.0, .speed_km_s = 950.0, .accel_m_s2 = -12.0});
  // 5 points per frame on 10 frames of each view, along the west (east view) and east
  // (west view) limbs where the sample's CME goes.
  for (int k = 2; k < 12; ++k) {
    const double t = s.timeline_utc_s[std::size_t(k)], h = 3.0 + 0.8 * (k - 2);
    for (int i = 0; i < 5; ++i) {
      apply(s, viewer::action::AddPoint{"east", t, 250.0 + 8.0 * i, h});
      apply(s, viewer::action::AddPoint{"west", t, 60.0 + 8.0 * i, h});
    }
  }
  apply(s, viewer::action::TieMode{true});
  apply(s, viewer::action::TieFirst{{"east", s.timeline_utc_s[8], 7.0, 1.0}});
  apply(s, viewer::action::Frame{8});

  // The window's own loop (present.cpp), without the display: colour the shown frames,
  // draw the window with Dear ImGui, rasterize it.
  ImGui::CreateContext();
  ImGuiIO& io = ImGui::GetIO();
  io.IniFilename = nullptr;
  io.DisplaySize = ImVec2(float(s.width), float(s.height));
  io.DeltaTime = 1.0f / 60.0f;
  io.BackendFlags |= ImGuiBackendFlags_RendererHasVtxOffset;
  const viewer::HeadlessOptions look;
  const viewer::Texture font = viewer::load_font(look.font_file, look.font_pixels);
  viewer::WindowCache cache;
  // One frame of the loop; its parts' CPU time added to `parts` (prepare, Dear ImGui, raster).
  double parts[3] = {0, 0, 0};
  const auto frame = [&](viewer::WindowCache& c) {
    double t[4];
    t[0] = bench::thread_cpu_s();
    const std::vector<viewer::ShownView> shown = viewer::shown_views(s, views, &c);
    std::vector<viewer::Texture> textures = viewer::textures_of(shown);
    textures.push_back(font);
    t[1] = bench::thread_cpu_s();
    ImGui::NewFrame();
    (void)viewer::draw_window(s, shown, views);
    ImGui::Render();
    t[2] = bench::thread_cpu_s();
    viewer::Framebuffer fb(s.width, s.height, look.background);
    viewer::render(*ImGui::GetDrawData(), textures, fb);
    t[3] = bench::thread_cpu_s();
    for (int i = 0; i < 3; ++i) parts[i] = t[i + 1] - t[i];
  };
  for (int i = 0; i < 3; ++i) frame(cache);  // Dear ImGui lays out windows over its first frames
  const int repeats = short_run ? 3 : 60;
  // The best frame's parts (the parts of the run whose total was the least).
  const auto measure = [&](auto before) {
    struct Figure {
      double cpu = 1e30, wall = 1e30, parts[3] = {0, 0, 0};
    } best;
    for (int i = 0; i < repeats; ++i) {
      viewer::WindowCache c = before();
      double cpu = 0;
      const double wall = bench::best_of(1, [&] { cpu = bench::best_cpu_of(1, [&] { frame(c); }); });
      best.wall = std::min(best.wall, wall);
      if (cpu < best.cpu) {
        best.cpu = cpu;
        std::copy(parts, parts + 3, best.parts);
      }
    }
    return best;
  };
  const auto steady = measure([&] { return cache; });  // a copy shares the texels: nothing coloured anew
  int k = 0;
  const auto fresh = measure([&] {
    // The cache as it stands at frame 8, then another frame time: it has neither its
    // images nor its outlines.
    apply(s, viewer::action::Frame{8});
    viewer::WindowCache at_8 = cache;
    k = k % 13 + 1;
    apply(s, viewer::action::Frame{k < 8 ? k : k + 1});
    return at_8;
  });
  // A step: the loop made the next time's pictures and outlines after showing frame 8.
  const auto stepped = measure([&] {
    apply(s, viewer::action::Frame{8});
    viewer::WindowCache at_8 = cache;
    while (viewer::prepare_neighbours(at_8, s, views)) {
    }
    apply(s, viewer::action::Step{1});
    return at_8;
  });
  apply(s, viewer::action::Frame{8});
  std::printf("window frame 1280x800, 2 views + outlines + height-time panels + %zu points + epipolar line, thread CPU time, best of %d:\n",
              s.points.size(), repeats);
  std::printf("  steady:   %.2f ms (budget 16, goal 8; ratio %.2f) = colour+outlines %.2f + Dear ImGui %.2f + raster %.2f; wall %.2f ms\n",
              steady.cpu * 1e3, steady.cpu * 1e3 / 16.0, steady.parts[0] * 1e3, steady.parts[1] * 1e3, steady.parts[2] * 1e3,
              steady.wall * 1e3);
  std::printf("  new time, a step or playing (made ahead): %.2f ms (ratio %.2f) = %.2f + %.2f + %.2f; wall %.2f ms\n",
              stepped.cpu * 1e3, stepped.cpu * 1e3 / 16.0, stepped.parts[0] * 1e3, stepped.parts[1] * 1e3,
              stepped.parts[2] * 1e3, stepped.wall * 1e3);
  std::printf("  new time, a jump (coloured and outlined in the frame): %.2f ms (ratio %.2f) = %.2f + %.2f + %.2f; wall %.2f ms\n",
              fresh.cpu * 1e3, fresh.cpu * 1e3 / 16.0, fresh.parts[0] * 1e3, fresh.parts[1] * 1e3, fresh.parts[2] * 1e3,
              fresh.wall * 1e3);
  // The work done ahead, after a frame is shown: one neighbouring time's worth.
  const double ahead = bench::best_cpu_of(repeats / 2 + 1, [&] {
    viewer::WindowCache at_8 = cache;
    (void)viewer::prepare_neighbours(at_8, s, views);
  });
  std::printf("  made ahead after a frame is shown (one neighbouring time): %.2f ms\n", ahead * 1e3);
  // Without the cache (what every frame cost before it): each image and map coloured, each
  // outline made, every frame.
  const double uncached = bench::best_cpu_of(repeats / 2 + 1, [&] {
    viewer::WindowCache none;
    frame(none);
  });
  std::printf("  without the cache (all coloured and outlined each frame): %.2f ms\n", uncached * 1e3);

  const viewer::ViewImagings imaged = viewer::imaging_of(views);
  const double fit = bench::best_of(short_run ? 1 : 3, [&] { (void)viewer::run_fit(s, session, "analyst", imaged); });
  // Its CPU time (every thread of this process; nothing else runs meanwhile): what load
  // on the machine does not inflate.
  const std::clock_t cpu_start = std::clock();
  (void)viewer::run_fit(s, session, "analyst", imaged);
  const double fit_cpu = double(std::clock() - cpu_start) / CLOCKS_PER_SEC;
  const double whole = bench::best_of(short_run ? 1 : 3, [&] { (void)viewer::run_fit(s, session, "analyst"); });
  std::printf("fit action, 2 views x 10 frames x 5 points, over the loader's imaging: %.3f s, CPU %.3f s (budget 0.5; ratio %.2f)\n",
              fit, fit_cpu, fit / 0.5);
  std::printf("  the whole measurement, chain rerun (paired):                       %.3f s (%.1f x the fit action)\n", whole,
              whole / fit);

  // The fit on a worker while frames are drawn (present.cpp's loop, without the display).
  const auto started = std::chrono::steady_clock::now();
  auto fitting = std::async(std::launch::async,
                            [asked = s, &session, &imaged] { return viewer::run_fit(asked, session, "analyst", imaged); });
  int drawn = 0;
  double longest = 0.0;
  while (fitting.wait_for(std::chrono::seconds(0)) != std::future_status::ready) {
    longest = std::max(longest, bench::best_of(1, [&] { frame(cache); }));
    ++drawn;
  }
  const viewer::action::FitDone done = fitting.get();
  const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  ImGui::DestroyContext();
  std::printf("  on a worker while drawing: %.3f s, %d frames drawn meanwhile, the longest %.1f ms (%s)\n", took, drawn,
              longest * 1e3, done.measured ? done.measured->status.c_str() : done.message.c_str());
  return 0;
}
