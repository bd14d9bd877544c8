// Benchmark: viewer/raster, one 1280×800 frame from ImDrawData to the framebuffer (the
// clear included) on one core. Budget (issue 14, "The analyst's window, part 1"): ≤ 16 ms,
// goal 8 ms.
// The frame: two 1024² frame images drawn at 600² side by side (bilinear, reduced), a
// timeline row of widgets under them, and a plot panel of axes, ticks, labels, a 400-point
// curve and 60 markers — the window issue 14 describes. Prints the whole frame, the parts
// (each alone on a cleared framebuffer), and how many rectangles took the fast path.
// --short: fewer repetitions, for the test suite; --png PATH: also write the frame.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <utility>
#include <vector>

#include "tests/bench/best_of.hpp"
#include "viewer/headless.hpp"
#include "viewer/raster.hpp"

namespace {
using namespace occulta;
using bench::best_cpu_of;
using bench::best_of;

constexpr int kWidth = 1280, kHeight = 800, kFrame = 1024;

// A deterministic 1024² picture with structure at every scale (a bright ring, rays, fine
// ripples), opaque, standing in for a registered frame.
std::vector<std::uint8_t> frame_picture(int seed) {
  std::vector<std::uint8_t> texels(std::size_t(kFrame) * kFrame * 4);
  for (int y = 0; y < kFrame; ++y) {
    for (int x = 0; x < kFrame; ++x) {
      const double dx = x - 512.0, dy = y - 512.0, r = std::hypot(dx, dy), pa = std::atan2(dx, dy);
      const double value = 0.5 + 0.35 * std::sin(r / 40.0 + seed) * std::cos(9.0 * pa) + 0.15 * std::sin(x * 0.9) * std::sin(y * 0.7);
      const auto level = std::uint8_t(std::clamp(value, 0.0, 1.0) * 255.0);
      std::uint8_t* t = &texels[(std::size_t(y) * kFrame + std::size_t(x)) * 4];
      t[0] = level;
      t[1] = std::uint8_t(level * 0.85);
      t[2] = std::uint8_t(255 - level / 2);
      t[3] = 255;
    }
  }
  return texels;
}

void views(ImTextureID a, ImTextureID b) {
  ImGui::SetNextWindowPos(ImVec2(0, 0));
  ImGui::SetNextWindowSize(ImVec2(kWidth, 640));
  ImGui::Begin("views", nullptr, ImGuiWindowFlags_NoDecoration);
  ImGui::Image(a, ImVec2(600, 600));
  ImGui::SameLine();
  ImGui::Image(b, ImVec2(600, 600));
  ImGui::End();
}

void timeline() {
  ImGui::SetNextWindowPos(ImVec2(0, 640));
  ImGui::SetNextWindowSize(ImVec2(kWidth, 40));
  ImGui::Begin("timeline", nullptr, ImGuiWindowFlags_NoDecoration);
  ImGui::Button("play");
  ImGui::SameLine();
  ImGui::Button("<");
  ImGui::SameLine();
  ImGui::Button(">");
  ImGui::SameLine();
  static int frame = 7;
  ImGui::SetNextItemWidth(800);
  ImGui::SliderInt("##frame", &frame, 0, 31);
  ImGui::SameLine();
  ImGui::Text("2031-04-07 06:12:30 UTC  frame 8 of 32");
  ImGui::End();
}

void plot() {
  ImGui::SetNextWindowPos(ImVec2(0, 680));
  ImGui::SetNextWindowSize(ImVec2(kWidth, 120));
  ImGui::Begin("plot", nullptr, ImGuiWindowFlags_NoDecoration);
  ImDrawList* list = ImGui::GetWindowDrawList();
  const ImVec2 o = ImGui::GetCursorScreenPos();
  const ImVec2 lo(o.x + 50, o.y + 85), hi(o.x + 1250, o.y + 5);
  list->AddRect(ImVec2(lo.x, hi.y), ImVec2(hi.x, lo.y), IM_COL32(200, 200, 200, 255));
  char label[32];
  for (int i = 0; i <= 24; ++i) {
    const float x = lo.x + (hi.x - lo.x) * float(i) / 24.0f;
    list->AddLine(ImVec2(x, lo.y), ImVec2(x, lo.y - 5), IM_COL32(200, 200, 200, 255));
    std::snprintf(label, sizeof label, "%02d:%02d", 6 + i / 4, 15 * (i % 4));
    list->AddText(ImVec2(x - 16, lo.y + 2), IM_COL32(220, 220, 220, 255), label);
  }
  for (int i = 0; i <= 4; ++i) {
    const float y = lo.y + (hi.y - lo.y) * float(i) / 4.0f;
    list->AddLine(ImVec2(lo.x, y), ImVec2(lo.x + 5, y), IM_COL32(200, 200, 200, 255));
    std::snprintf(label, sizeof label, "%d R\u2609", 2 + 5 * i);
    list->AddText(ImVec2(o.x, y - 7), IM_COL32(220, 220, 220, 255), label);
  }
  ImVec2 curve[400];
  for (int i = 0; i < 400; ++i) curve[i] = ImVec2(lo.x + 3.0f * float(i), lo.y - 0.0005f * float(i * i) - 3.0f * std::sin(0.2f * float(i)));
  list->AddPolyline(curve, 400, IM_COL32(110, 190, 255, 255), 0, 1.5f);
  for (int i = 0; i < 60; ++i) list->AddCircleFilled(curve[i * 6 + 3], 3.0f, IM_COL32(255, 120, 90, 255));
  ImGui::End();
}

struct Timing {
  double wall = 0;  // best of, steady clock
  double cpu = 0;   // best of, this thread's CPU clock
};

}  // namespace

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int repeats = short_mode ? 5 : 60;
  constexpr double kBudgetS = 0.016, kGoalS = 0.008;

  const std::vector<std::uint8_t> east = frame_picture(0), west = frame_picture(2);
  const viewer::Texture frames[2] = {
      {reinterpret_cast<ImTextureID>(std::uintptr_t(1)), kFrame, kFrame, east.data()},
      {reinterpret_cast<ImTextureID>(std::uintptr_t(2)), kFrame, kFrame, west.data()}};

  ImGuiContext* context = ImGui::CreateContext();
  ImGuiIO& io = ImGui::GetIO();
  io.IniFilename = nullptr;
  io.DisplaySize = ImVec2(kWidth, kHeight);
  io.DeltaTime = 1.0f / 60.0f;
  std::vector<viewer::Texture> table(std::begin(frames), std::end(frames));
  table.push_back(viewer::load_font(viewer::default_font_file(), 15.0f));

  // Times one part (or all) of the frame: the ImGui calls run once (three frames, so that
  // windows settle), then render() of the same draw data is timed, clear included.
  viewer::Framebuffer fb(kWidth, kHeight, 0);
  viewer::RasterCounts counts;
  const auto time_frame = [&](auto&& ui) {
    for (int i = 0; i < 3; ++i) {
      ImGui::NewFrame();
      ui();
      ImGui::Render();
    }
    const ImDrawData& data = *ImGui::GetDrawData();
    const auto draw = [&] {
      std::fill(fb.pixels.begin(), fb.pixels.end(), viewer::rgba(24, 24, 28));
      counts = viewer::render(data, table, fb);
    };
    return Timing{best_of(repeats, draw), best_cpu_of(repeats, draw)};
  };
  const Timing images = time_frame([&] { views(frames[0].id, frames[1].id); });
  const Timing widgets = time_frame([] { timeline(); });
  const Timing panel = time_frame([] { plot(); });
  const auto fill = [&] { std::fill(fb.pixels.begin(), fb.pixels.end(), viewer::rgba(24, 24, 28)); };
  const Timing clear{best_of(repeats, fill), best_cpu_of(repeats, fill)};
  const Timing whole = time_frame([&] {
    views(frames[0].id, frames[1].id);
    timeline();
    plot();
  });
  for (int i = 1; i + 1 < argc; ++i)
    if (std::strcmp(argv[i], "--png") == 0) viewer::write_png(fb, argv[i + 1]);
  ImGui::DestroyContext(context);

  std::printf("raster bench: one %dx%d frame, two %d^2 images at 600^2 + timeline + plot, one core (best of %d)\n", kWidth,
              kHeight, kFrame, repeats);
  std::printf("                     wall     thread CPU\n");
  std::printf("  whole frame       %6.2f ms  %6.2f ms   %.2f x the 16 ms budget, %.2f x the 8 ms goal (CPU)\n", whole.wall * 1e3,
              whole.cpu * 1e3, whole.cpu / kBudgetS, whole.cpu / kGoalS);
  for (const auto& [name, t] : {std::pair{"images alone  ", images}, {"timeline alone", widgets}, {"plot alone    ", panel},
                                {"clear alone   ", clear}})
    std::printf("  %s    %6.2f ms  %6.2f ms\n", name, t.wall * 1e3, t.cpu * 1e3);
  std::printf("  rectangles by the fast path %ld, triangles by the general path %ld\n", counts.rectangles, counts.triangles);
  return 0;
}
