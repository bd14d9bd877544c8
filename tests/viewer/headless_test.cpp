// tests/viewer/headless_test.cpp — one ImGui frame drawn with no display, written as PNG.
#include <chrono>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgcodecs.hpp>

#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"
#include "tests/support/support.hpp"
#include "viewer/headless.hpp"

namespace occulta::viewer {
namespace {

// A small panel of the kinds of things the window and the quicklooks draw: text with our
// symbols, a plot frame with a curve, a filled marker, a colour ramp image.
void test_panel(ImTextureID ramp) {
  ImGui::SetNextWindowPos(ImVec2(8, 8));
  ImGui::SetNextWindowSize(ImVec2(304, 224));
  ImGui::Begin("Test panel", nullptr, ImGuiWindowFlags_NoCollapse);
  ImGui::Text("Front at 4.35 R\u2609, PA 271.5\u00b0");
  ImGui::TextColored(ImVec4(1.0f, 0.75f, 0.3f, 1.0f), "difference 3.2 \u03c3, 2031-04-07 06:12 UTC");
  const ImVec2 corner = ImGui::GetCursorScreenPos();
  ImDrawList* list = ImGui::GetWindowDrawList();
  list->AddRect(corner, ImVec2(corner.x + 180, corner.y + 110), IM_COL32(200, 200, 200, 255));
  ImVec2 curve[60];
  for (int i = 0; i < 60; ++i) curve[i] = ImVec2(corner.x + 3.0f * float(i), corner.y + 100.0f - 0.025f * float(i * i));
  list->AddPolyline(curve, 60, IM_COL32(110, 190, 255, 255), 0, 1.5f);
  list->AddCircleFilled(ImVec2(corner.x + 150, corner.y + 30), 5.0f, IM_COL32(255, 90, 90, 255));
  ImGui::Dummy(ImVec2(180, 110));
  ImGui::SameLine();
  ImGui::Image(ramp, ImVec2(24, 110));
  ImGui::Button("Step");
  ImGui::End();
}

}  // namespace

TEST_CASE("headless: a panel drawn with no display, written as PNG, reads back the same") {
  std::uint8_t ramp_texels[64 * 4];
  for (int i = 0; i < 64; ++i) {
    const auto level = std::uint8_t(255 - 4 * i);
    ramp_texels[4 * i] = level;
    ramp_texels[4 * i + 1] = std::uint8_t(level / 2);
    ramp_texels[4 * i + 2] = std::uint8_t(255 - level);
    ramp_texels[4 * i + 3] = 255;
  }
  const Texture ramp{reinterpret_cast<ImTextureID>(ramp_texels), 1, 64, ramp_texels, Sampling::bilinear, Wrap::clamp_to_edge};

  ImGuiContext* callers = ImGui::CreateContext();
  const Framebuffer picture = draw_headless(320, 240, [&] { test_panel(ramp.id); }, {&ramp, 1});
  const Framebuffer again = draw_headless(320, 240, [&] { test_panel(ramp.id); }, {&ramp, 1});
  CHECK(ImGui::GetCurrentContext() == callers);
  CHECK(picture.pixels == again.pixels);  // deterministic

  // Something was drawn in the panel, and the background outside it is untouched.
  const HeadlessOptions defaults;
  long changed = 0;
  for (int y = 40; y < 220; ++y)
    for (int x = 16; x < 300; ++x) changed += picture.at(x, y) != defaults.background;
  CHECK(changed > 5000);
  CHECK(picture.at(316, 236) == defaults.background);
  const std::filesystem::path dir = test::scratch_dir("viewer-headless");
  write_png(picture, dir / "test_panel.png");
  const cv::Mat read = cv::imread((dir / "test_panel.png").string(), cv::IMREAD_UNCHANGED);
  REQUIRE(read.rows == 240);
  REQUIRE(read.cols == 320);
  REQUIRE(read.channels() == 3);  // every pixel opaque: written without alpha
  long mismatched = 0;
  for (int y = 0; y < 240; ++y) {
    for (int x = 0; x < 320; ++x) {
      const cv::Vec3b bgr = read.at<cv::Vec3b>(y, x);
      mismatched += rgba(bgr[2], bgr[1], bgr[0]) != picture.at(x, y);
    }
  }
  CHECK(mismatched == 0);
  for (const auto& entry : std::filesystem::directory_iterator(dir))  // no temporary left beside it
    CHECK_FALSE(imaging::is_pending_name(entry.path().filename().string()));

  // The caller's context is current again when the frame throws.
  CHECK_THROWS_AS(draw_headless(64, 64, [] { throw std::runtime_error("a frame that fails"); }), std::runtime_error);
  CHECK(ImGui::GetCurrentContext() == callers);
  ImGui::DestroyContext(callers);
}

TEST_CASE("headless: pictures drawn on several threads at once are the pictures drawn alone") {
  // measure draws its pictures on both cores; Dear ImGui's current context is one global,
  // so draw_headless keeps the ImGui part of each to one thread at a time. Eight threads
  // drawing at once (two panels of different sizes, each thread ten times) must give
  // exactly the pixels of one thread drawing alone, and leave the caller's context current.
  std::uint8_t ramp_texels[64 * 4];
  for (int i = 0; i < 64; ++i) {
    ramp_texels[4 * i] = std::uint8_t(4 * i);
    ramp_texels[4 * i + 1] = 90;
    ramp_texels[4 * i + 2] = std::uint8_t(255 - 4 * i);
    ramp_texels[4 * i + 3] = 255;
  }
  const Texture ramp{reinterpret_cast<ImTextureID>(ramp_texels), 1, 64, ramp_texels, Sampling::bilinear, Wrap::clamp_to_edge};
  // Each frame pauses before its ImGui calls, so that without the mutex another thread
  // would make its own context current meanwhile (the pause changes nothing with it).
  const auto panel = [&] {
    std::this_thread::sleep_for(std::chrono::microseconds(200));
    test_panel(ramp.id);
  };
  const auto draw = [&](int k) {
    return k % 2 ? draw_headless(320, 240, panel, {&ramp, 1}) : draw_headless(360, 260, panel, {&ramp, 1});
  };
  const Framebuffer alone[2] = {draw(0), draw(1)};
  ImGuiContext* callers = ImGui::CreateContext();
  std::vector<std::vector<Framebuffer>> drawn(8);
  std::vector<std::thread> threads;
  for (int t = 0; t < 8; ++t)
    threads.emplace_back([&, t] {
      for (int k = 0; k < 10; ++k) drawn[std::size_t(t)].push_back(draw(t + k));
    });
  for (std::thread& t : threads) t.join();
  CHECK(ImGui::GetCurrentContext() == callers);
  ImGui::DestroyContext(callers);
  int differ = 0;
  for (int t = 0; t < 8; ++t)
    for (int k = 0; k < 10; ++k) differ += drawn[std::size_t(t)][std::size_t(k)].pixels != alone[(t + k) % 2].pixels;
  CHECK(differ == 0);
}

TEST_CASE("headless: a draw list of more than 65 536 vertices (16-bit indices, VtxOffset)") {
  // 200 × 100 one-pixel rectangles of 4 vertices each: 80 000 vertices in one list. Every
  // pixel of the block must be drawn, the last ones included.
  const Framebuffer picture = draw_headless(220, 120, [] {
    ImDrawList* list = ImGui::GetBackgroundDrawList();
    for (int y = 0; y < 100; ++y)
      for (int x = 0; x < 200; ++x) list->AddRectFilled(ImVec2(float(10 + x), float(10 + y)), ImVec2(float(11 + x), float(11 + y)), IM_COL32(x, y, 200, 255));
  });
  long wrong = 0;
  for (int y = 0; y < 100; ++y)
    for (int x = 0; x < 200; ++x) wrong += picture.at(10 + x, 10 + y) != rgba(std::uint32_t(x), std::uint32_t(y), 200);
  CHECK(wrong == 0);
}

TEST_CASE("headless: a missing font and an unwritable PNG are one-sentence errors naming the file") {
  HeadlessOptions options;
  options.font_file = "/nonexistent/NoSuchFont.ttf";
  try {
    draw_headless(32, 32, [] {}, {}, options);
    FAIL("a missing font must be an error");
  } catch (const imaging::InputError& e) {
    CHECK(std::string(e.what()).find("/nonexistent/NoSuchFont.ttf") == 0);
  }

  const std::filesystem::path dir = test::scratch_dir("viewer-headless-errors");
  test::spit(dir / "earlier.png", "an earlier file");
  const Framebuffer small(4, 4, rgba(1, 2, 3));
  CHECK_THROWS_AS(write_png(small, dir / "no_such_folder" / "x.png"), imaging::InputError);
  // A target that cannot be replaced (a folder stands there; permissions would not stop
  // root) is an error naming it, leaves the folder as it was and no temporary beside it.
  std::filesystem::create_directories(dir / "folder.png" / "inside");
  try {
    write_png(small, dir / "folder.png");
    FAIL("a folder in the way must be an error");
  } catch (const imaging::InputError& e) {
    CHECK(std::string(e.what()).find((dir / "folder.png").string()) == 0);
  }
  CHECK(std::filesystem::is_directory(dir / "folder.png" / "inside"));
  for (const auto& entry : std::filesystem::directory_iterator(dir))
    CHECK_FALSE(imaging::is_pending_name(entry.path().filename().string()));
  // An earlier file is replaced whole.
  write_png(small, dir / "earlier.png");
  CHECK(cv::imread((dir / "earlier.png").string()).rows == 4);
}

}  // namespace occulta::viewer
