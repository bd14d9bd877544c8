// Benchmark: the analyst's window at work (issue 15, "The analyst's window, part 2").
//  1. One 1280×800 frame with both views of the sample, their shell outlines, marked points
//     and a tie's epipolar line: draw_window (Dear ImGui) and our rasterizer, on one core.
//     Budget ≤ 16 ms, goal 8 ms. The outline is remembered between frames of one time
//     (shell_overlay.hpp); "new time" is a frame whose outlines must be made anew (playing).
//  2. The fit action over 2 views × 10 frames of points (5 per frame) as the window runs
//     it: the rest of the measurement over the imaging its loader made (fit/measurement.hpp
//     measure_imaged). Budget ≤ 0.5 s. Beside it, paired, the whole measurement with the
//     chain rerun (what the fit cost before). Then the fit once on a worker while this
//     thread keeps drawing frames, as the window does: frames drawn and the longest.
// --short: fewer repetitions, for the test suite.
#include <algorithm>
#include <chrono>
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
  for (const fit::EventView& v : session.input->event.views)
    views.push_back(viewer::load_view({v.name, v.files, fit::chain_options(session.input->event, v, 5)}));

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
  const auto frame = [&] {
    const std::vector<viewer::ShownView> shown = viewer::shown_views(s, views);
    std::vector<viewer::Texture> textures = viewer::textures_of(shown);
    textures.push_back(font);
    ImGui::NewFrame();
    (void)viewer::draw_window(s, shown, views);
    ImGui::Render();
    viewer::Framebuffer fb(s.width, s.height, look.background);
    viewer::render(*ImGui::GetDrawData(), textures, fb);
  };
  for (int i = 0; i < 3; ++i) frame();  // Dear ImGui lays out windows over its first frames
  const int repeats = short_run ? 3 : 30;
  const double same = bench::best_of(repeats, frame);
  int k = 0;
  const double fresh = bench::best_of(repeats, [&] {
    apply(s, viewer::action::Frame{k++ % 14});  // a new time each frame: outlines made anew
    frame();
  });
  std::printf("window frame 1280x800, 2 views + outlines + %zu points + epipolar line: %.2f ms (budget 16, goal 8; ratio %.2f)\n",
              s.points.size(), same * 1e3, same * 1e3 / 16.0);
  std::printf("  at a new time (outlines made anew):                       %.2f ms (ratio %.2f)\n", fresh * 1e3,
              fresh * 1e3 / 16.0);

  const viewer::ViewImagings imaged = viewer::imaging_of(views);
  const double fit = bench::best_of(short_run ? 1 : 3, [&] { (void)viewer::run_fit(s, session, "analyst", imaged); });
  const double whole = bench::best_of(short_run ? 1 : 3, [&] { (void)viewer::run_fit(s, session, "analyst"); });
  std::printf("fit action, 2 views x 10 frames x 5 points, over the loader's imaging: %.3f s (budget 0.5; ratio %.2f)\n",
              fit, fit / 0.5);
  std::printf("  the whole measurement, chain rerun (paired):                       %.3f s (%.1f x the fit action)\n", whole,
              whole / fit);

  // The fit on a worker while frames are drawn (present.cpp's loop, without the display).
  const auto started = std::chrono::steady_clock::now();
  auto fitting = std::async(std::launch::async,
                            [asked = s, &session, &imaged] { return viewer::run_fit(asked, session, "analyst", imaged); });
  int drawn = 0;
  double longest = 0.0;
  while (fitting.wait_for(std::chrono::seconds(0)) != std::future_status::ready) {
    longest = std::max(longest, bench::best_of(1, frame));
    ++drawn;
  }
  const viewer::action::FitDone done = fitting.get();
  const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  ImGui::DestroyContext();
  std::printf("  on a worker while drawing: %.3f s, %d frames drawn meanwhile, the longest %.1f ms (%s)\n", took, drawn,
              longest * 1e3, done.measured ? done.measured->status.c_str() : done.message.c_str());
  return 0;
}
