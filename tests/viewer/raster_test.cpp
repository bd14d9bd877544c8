// tests/viewer/raster_test.cpp — the rasterizer on draw data written by hand: blending,
// coverage and the fill rule, clipping, sampling, and its two paths agreeing. Expected
// values are computed by hand (or by the formula named beside them), not by the code.
#include <cmath>
#include <cstdint>
#include <stdexcept>
#include <vector>

#include <doctest/doctest.h>

#include "tests/viewer/hand_drawn.hpp"
#include "viewer/raster.hpp"

namespace occulta::viewer {
namespace {

std::uint32_t channel(std::uint32_t pixel, int i) { return (pixel >> (8 * i)) & 0xFF; }

// A 1 × 1 white texture: what Dear ImGui's solid shapes sample (the atlas' white pixel).
const std::uint8_t kWhiteTexel[4] = {255, 255, 255, 255};
const Texture kWhite{reinterpret_cast<ImTextureID>(1), 1, 1, kWhiteTexel, Sampling::bilinear, Wrap::clamp_to_edge};

const ImVec4 kNoClip(-1e4f, -1e4f, 1e4f, 1e4f);

}  // namespace

TEST_CASE("raster: source over in 8 bits rounds to the nearest level (Porter & Duff 1984)") {
  // Every source level s and alpha a over every destination level d (the background row
  // holds d = x in all four channels). Expected: rgb = round((s·a + d·(255 − a))/255),
  // alpha = round((255·a + d·(255 − a))/255) — Porter & Duff's "over" for straight alpha.
  Framebuffer background(256, 1, 0);
  for (std::uint32_t x = 0; x < 256; ++x) background.pixels[x] = rgba(x, x, x, x);
  test::HandDrawn scene(256, 1);
  scene.command(kNoClip, kWhite.id);
  scene.rect({0, 0}, {256, 1}, {0, 0}, {0, 0}, 0);
  long mismatches = 0;
  for (std::uint32_t a = 0; a < 256; ++a) {
    for (std::uint32_t s = 0; s < 256; ++s) {
      for (ImDrawVert& v : scene.list->VtxBuffer) v.col = rgba(s, 255 - s, s, a);
      Framebuffer fb = background;
      render(scene.data, {&kWhite, 1}, fb);
      for (std::uint32_t d = 0; d < 256; ++d) {
        const std::uint32_t p = fb.pixels[d];
        const auto expect = [&](double src) { return std::uint32_t(std::floor((src * a + double(d) * (255 - a)) / 255.0 + 0.5)); };
        if (channel(p, 0) != expect(s) || channel(p, 1) != expect(255 - s) || channel(p, 2) != expect(s) || channel(p, 3) != expect(255))
          ++mismatches;
      }
    }
  }
  CHECK(mismatches == 0);
}

TEST_CASE("raster: triangles sharing edges cover every pixel exactly once (top-left rule)") {
  // Half-transparent white over black: a pixel drawn once is 128, twice 192. Shared edges
  // pass exactly through pixel centres (vertices on half-pixels, 45° diagonals), which is
  // where a fill rule decides. The outer outline has integer corners, so no centre is on it
  // and the covered set is known: centres strictly inside.
  const ImU32 half_white = rgba(255, 255, 255, 128);
  test::HandDrawn scene(64, 64);
  scene.command(kNoClip, kWhite.id);

  // A 6 × 6 mesh over [4, 52]², inner vertices moved by 0, ½ or 1 px; diagonals and
  // windings alternate from cell to cell (Dear ImGui emits both windings).
  const int n = 7;
  std::vector<ImDrawIdx> grid;
  for (int j = 0; j < n; ++j) {
    for (int i = 0; i < n; ++i) {
      const bool border = i == 0 || j == 0 || i == n - 1 || j == n - 1;
      const float dx = border ? 0.0f : 0.5f * float((i * j) % 3), dy = border ? 0.0f : 0.5f * float((i + 2 * j) % 3);
      grid.push_back(scene.vertex(4.0f + 8.0f * float(i) + dx, 4.0f + 8.0f * float(j) + dy, 0, 0, half_white));
    }
  }
  for (int j = 0; j + 1 < n; ++j) {
    for (int i = 0; i + 1 < n; ++i) {
      const ImDrawIdx a = grid[std::size_t(j * n + i)], b = grid[std::size_t(j * n + i + 1)];
      const ImDrawIdx c = grid[std::size_t((j + 1) * n + i + 1)], d = grid[std::size_t((j + 1) * n + i)];
      if ((i + j) % 2 == 0) {
        scene.triangle(a, b, c);
        scene.triangle(a, d, c);  // the other winding
      } else {
        scene.triangle(a, b, d);
        scene.triangle(b, c, d);
      }
    }
  }
  // A fan of 36 triangles about the pixel centre (58.5, 58.5), its rim the square
  // [54, 63]²: edges from the hub at 45° run through pixel centres.
  const ImDrawIdx hub = scene.vertex(58.5f, 58.5f, 0, 0, half_white);
  std::vector<ImDrawIdx> ring;
  for (int k = 0; k < 9; ++k) ring.push_back(scene.vertex(54.0f + float(k), 54.0f, 0, 0, half_white));
  for (int k = 0; k < 9; ++k) ring.push_back(scene.vertex(63.0f, 54.0f + float(k), 0, 0, half_white));
  for (int k = 0; k < 9; ++k) ring.push_back(scene.vertex(63.0f - float(k), 63.0f, 0, 0, half_white));
  for (int k = 0; k < 9; ++k) ring.push_back(scene.vertex(54.0f, 63.0f - float(k), 0, 0, half_white));
  for (std::size_t k = 0; k < ring.size(); ++k) scene.triangle(hub, ring[k], ring[(k + 1) % ring.size()]);

  Framebuffer fb(64, 64, rgba(0, 0, 0));
  const RasterCounts counts = render(scene.data, {&kWhite, 1}, fb);
  CHECK(counts.triangles == 6 * 6 * 2 + 36);
  long wrong = 0, twice = 0;
  for (int y = 0; y < 64; ++y) {
    for (int x = 0; x < 64; ++x) {
      const bool in_mesh = x >= 4 && x < 52 && y >= 4 && y < 52;
      const bool in_fan = x >= 54 && x < 63 && y >= 54 && y < 63;
      const std::uint32_t red = channel(fb.at(x, y), 0);
      if (red == 192) ++twice;
      if (red != ((in_mesh || in_fan) ? 128u : 0u)) ++wrong;
    }
  }
  CHECK(twice == 0);
  CHECK(wrong == 0);
}

TEST_CASE("raster: a rectangle covers the pixels whose centres have x0 ≤ x < x1 and y0 < y ≤ y1") {
  // Edges through pixel centres: left ones in, right ones out; and, the top-left rule
  // taken with OpenGL's y up (raster.hpp), bottom ones (in these y-down rows) in and top
  // ones out. The rectangle (2.5, 3.5)–(6.5, 5.5): columns 2–5, rows 4–5.
  for (const bool fast : {true, false}) {
    test::HandDrawn scene(12, 12);
    scene.command(kNoClip, kWhite.id);
    if (fast)
      scene.rect({2.5f, 3.5f}, {6.5f, 5.5f}, {0, 0}, {0, 0}, rgba(255, 0, 0));
    else
      scene.rect_as_triangles({2.5f, 3.5f}, {6.5f, 5.5f}, {0, 0}, {0, 0}, rgba(255, 0, 0));
    Framebuffer fb(12, 12, rgba(0, 0, 0));
    const RasterCounts counts = render(scene.data, {&kWhite, 1}, fb);
    CHECK(counts.rectangles == (fast ? 1 : 0));
    long wrong = 0;
    for (int y = 0; y < 12; ++y)
      for (int x = 0; x < 12; ++x) wrong += channel(fb.at(x, y), 0) != ((x >= 2 && x <= 5 && y >= 4 && y <= 5) ? 255u : 0u);
    CHECK(wrong == 0);
  }
}

TEST_CASE("raster: the rectangle path draws what the triangle path draws") {
  // An 8 × 8 texture of distinct texels, drawn magnified, reduced, mirrored and at quarter-
  // pixel offsets by both paths: same coverage exactly; colours within one level (the two
  // paths compute the same UV planes with different rounding).
  std::vector<std::uint8_t> texels;
  for (int j = 0; j < 8; ++j)
    for (int i = 0; i < 8; ++i)
      for (const int value : {i * 32, j * 32, (i * j * 5) % 256, 128 + 16 * ((i + j) % 8)}) texels.push_back(std::uint8_t(value));
  for (const Sampling sampling : {Sampling::bilinear, Sampling::nearest}) {
    const Texture pattern{reinterpret_cast<ImTextureID>(2), 8, 8, texels.data(), sampling, Wrap::repeat};
    Framebuffer by_rect(96, 96, rgba(10, 20, 30)), by_triangles = by_rect;
    for (const bool fast : {true, false}) {
      test::HandDrawn scene(96, 96);
      scene.command(kNoClip, pattern.id);
      const auto draw = [&](ImVec2 p0, ImVec2 p1, ImVec2 uv0, ImVec2 uv1, ImU32 colour) {
        fast ? scene.rect(p0, p1, uv0, uv1, colour) : scene.rect_as_triangles(p0, p1, uv0, uv1, colour);
      };
      draw({1.25f, 2.75f}, {40.5f, 33.25f}, {0, 0}, {1, 1}, rgba(255, 255, 255));
      draw({60.75f, 3.5f}, {45.25f, 20.0f}, {0, 0}, {2, 1}, rgba(255, 200, 100, 180));  // mirrored in x, repeats
      draw({50.0f, 50.0f}, {53.75f, 52.5f}, {0, 0}, {1, 1}, rgba(255, 255, 255, 200));  // reduced
      draw({5.5f, 60.5f}, {90.5f, 94.5f}, {0.1f, 0.9f}, {0.7f, 0.2f}, rgba(90, 255, 255, 255));
      render(scene.data, {&pattern, 1}, fast ? by_rect : by_triangles);
    }
    int worst = 0;
    long differ = 0;
    for (std::size_t k = 0; k < by_rect.pixels.size(); ++k) {
      for (int c = 0; c < 4; ++c) worst = std::max(worst, std::abs(int(channel(by_rect.pixels[k], c)) - int(channel(by_triangles.pixels[k], c))));
      differ += by_rect.pixels[k] != by_triangles.pixels[k];
    }
    CHECK(worst <= 1);
    MESSAGE("sampling " << int(sampling) << ": " << differ << " of " << by_rect.pixels.size() << " pixels differ, by at most " << worst);
  }
}

TEST_CASE("raster: clip rectangles are truncated to pixels as the OpenGL2 backend's glScissor") {
  // imgui_impl_opengl2.cpp (Dear ImGui 1.86): glScissor((int)min.x, (int)(fb_h − max.y),
  // (int)(max.x − min.x), (int)(max.y − min.y)), y from the bottom. For ClipRect
  // (10.3, 5.7, 30.2, 20.9) on a 40 px high display: x from 10, width (int)19.9 = 19;
  // y from the bottom (int)19.1 = 19, height (int)15.2 = 15, i.e. rows 40 − 19 − 15 = 6
  // to 40 − 19 = 21 from the top. So x ∈ [10, 29), y ∈ [6, 21).
  test::HandDrawn scene(40, 40);
  scene.command(ImVec4(10.3f, 5.7f, 30.2f, 20.9f), kWhite.id);
  scene.rect({0, 0}, {40, 40}, {0, 0}, {0, 0}, rgba(0, 255, 0));
  scene.command(ImVec4(12, 30, 12, 35), kWhite.id);  // empty: zero width
  scene.rect({0, 0}, {40, 40}, {0, 0}, {0, 0}, rgba(255, 0, 0));
  scene.command(ImVec4(-50, 36, 400, 400), kWhite.id);  // beyond the framebuffer: cut to it
  scene.rect_as_triangles({-100, -100}, {100, 100}, {0, 0}, {0, 0}, rgba(0, 0, 255));
  Framebuffer fb(40, 40, rgba(0, 0, 0));
  const RasterCounts counts = render(scene.data, {&kWhite, 1}, fb);
  CHECK(counts.skipped_commands == 1);
  long wrong = 0;
  for (int y = 0; y < 40; ++y) {
    for (int x = 0; x < 40; ++x) {
      const std::uint32_t expected = y >= 36 ? rgba(0, 0, 255) : (x >= 10 && x < 29 && y >= 6 && y < 21) ? rgba(0, 255, 0) : rgba(0, 0, 0);
      wrong += fb.at(x, y) != expected;
    }
  }
  CHECK(wrong == 0);
}

TEST_CASE("raster: DisplayPos and FramebufferScale map ImGui coordinates to pixels") {
  // Pixel = (position − DisplayPos) × FramebufferScale: the rectangle (10, 12)–(15, 14)
  // with DisplayPos (5, 5) and scale 2 covers pixels x ∈ [10, 20), y ∈ [14, 18); its clip
  // rectangle (12, 0)–(100, 100) maps to x ≥ 14.
  test::HandDrawn scene(40, 30);
  scene.data.DisplayPos = ImVec2(5, 5);
  scene.data.FramebufferScale = ImVec2(2, 2);
  scene.command(ImVec4(12, 0, 100, 100), kWhite.id);
  scene.rect({10, 12}, {15, 14}, {0, 0}, {0, 0}, rgba(255, 255, 0));
  Framebuffer fb(80, 60, rgba(0, 0, 0));
  render(scene.data, {&kWhite, 1}, fb);
  long wrong = 0;
  for (int y = 0; y < 60; ++y)
    for (int x = 0; x < 80; ++x) wrong += fb.at(x, y) != ((x >= 14 && x < 20 && y >= 14 && y < 18) ? rgba(255, 255, 0) : rgba(0, 0, 0));
  CHECK(wrong == 0);
}

TEST_CASE("raster: bilinear and nearest sampling, clamped and repeated (OpenGL 4.6 §8.14, from memory)") {
  // A 2 × 2 texture drawn on 4 × 4 pixels. Pixel x samples u = (x + ½)/4, i.e. texel
  // coordinate s = 2u − ½ = −¼, ¼, ¾, 1¼: bilinear with clamp to edge weighs texel 1 by
  // 0, ¼, ¾, 1. Red: texels 0 and 200 → 0, 50, 150, 200 along a row.
  // Green: rows 100 and 40, so pixel (1, 1) is 0.75·0.75·0 + … (blue below).
  const std::uint8_t texels[16] = {0, 100, 0, 255, 200, 100, 200, 255,  // row 0
                                   0, 40, 100, 255, 200, 40, 40, 255};  // row 1
  Texture t{reinterpret_cast<ImTextureID>(3), 2, 2, texels, Sampling::bilinear, Wrap::clamp_to_edge};
  const auto draw = [&](ImVec2 uv1) {
    test::HandDrawn scene(4, 4);
    scene.command(kNoClip, t.id);
    scene.rect({0, 0}, {4, 4}, {0, 0}, uv1, rgba(255, 255, 255));
    Framebuffer fb(4, 4, rgba(0, 0, 0));
    render(scene.data, {&t, 1}, fb);
    return fb;
  };
  Framebuffer fb = draw({1, 1});
  const std::uint32_t red_row[4] = {0, 50, 150, 200};
  const std::uint32_t green_column[4] = {100, 85, 55, 40};  // 100 + (40 − 100)·{0, ¼, ¾, 1}
  for (int x = 0; x < 4; ++x) {
    CHECK(channel(fb.at(x, 0), 0) == red_row[x]);
    CHECK(channel(fb.at(0, x), 1) == green_column[x]);
  }
  // Blue at (1, 1): 0.5625·0 + 0.1875·200 + 0.1875·100 + 0.0625·40 = 58.75; with 8-bit
  // weights and two roundings we allow one level.
  CHECK(std::abs(int(channel(fb.at(1, 1), 2)) - 59) <= 1);

  t.sampling = Sampling::nearest;  // texel containing (u, v): columns 0, 0, 1, 1
  fb = draw({1, 1});
  const std::uint32_t nearest_row[4] = {0, 0, 200, 200};
  for (int x = 0; x < 4; ++x) CHECK(channel(fb.at(x, 3), 0) == nearest_row[x]);

  t.wrap = Wrap::repeat;  // u from 0 to 2: the texture twice, texels 0, 1, 0, 1
  fb = draw({2, 1});
  const std::uint32_t repeated_row[4] = {0, 200, 0, 200};
  for (int x = 0; x < 4; ++x) CHECK(channel(fb.at(x, 0), 0) == repeated_row[x]);

  t.sampling = Sampling::bilinear;  // repeat blends across the seam: s = −¼ is ¼ from texel
  fb = draw({1, 1});                 // −1 (texel 1, wrapped), so 0.25·200 + 0.75·0 = 50
  CHECK(channel(fb.at(0, 0), 0) == 50);
}

TEST_CASE("raster: a fragment is texel × vertex colour (GL_MODULATE), each product /255 rounded") {
  const std::uint8_t texel[4] = {200, 100, 50, 255};
  const Texture t{reinterpret_cast<ImTextureID>(4), 1, 1, texel, Sampling::nearest, Wrap::clamp_to_edge};
  test::HandDrawn scene(2, 2);
  scene.command(kNoClip, t.id);
  scene.rect({0, 0}, {2, 2}, {0, 0}, {1, 1}, rgba(255, 128, 0, 255));
  Framebuffer fb(2, 2, rgba(0, 0, 0));
  render(scene.data, {&t, 1}, fb);
  // 200·255/255 = 200; 100·128/255 = 50.2 → 50; 50·0 = 0; alpha 255.
  CHECK(fb.at(1, 1) == rgba(200, 50, 0, 255));
}

TEST_CASE("raster: user callbacks run in order between draws; ResetRenderState is skipped") {
  // A callback sees what was drawn before it and nothing after (it runs where it stands).
  struct Seen {
    const Framebuffer* fb = nullptr;
    std::uint32_t pixel = 0;
    int calls = 0;
  } seen;
  test::HandDrawn scene(4, 4);
  Framebuffer fb(4, 4, rgba(0, 0, 0));
  seen.fb = &fb;
  scene.command(kNoClip, kWhite.id);
  scene.rect({0, 0}, {4, 4}, {0, 0}, {0, 0}, rgba(255, 0, 0));
  ImDrawCmd callback;
  callback.UserCallback = [](const ImDrawList*, const ImDrawCmd* cmd) {
    auto* s = static_cast<Seen*>(cmd->UserCallbackData);
    s->pixel = s->fb->at(1, 1);
    ++s->calls;
  };
  callback.UserCallbackData = &seen;
  scene.list->CmdBuffer.push_back(callback);
  ImDrawCmd reset;
  reset.UserCallback = ImDrawCallback_ResetRenderState;
  scene.list->CmdBuffer.push_back(reset);
  scene.command(kNoClip, kWhite.id);
  scene.rect({0, 0}, {4, 4}, {0, 0}, {0, 0}, rgba(0, 0, 255));
  render(scene.data, {&kWhite, 1}, fb);
  CHECK(seen.calls == 1);
  CHECK(seen.pixel == rgba(255, 0, 0));
  CHECK(fb.at(1, 1) == rgba(0, 0, 255));
}

TEST_CASE("raster: a texture id missing from the table is an error, and nothing is drawn out of bounds") {
  test::HandDrawn scene(8, 8);
  scene.command(kNoClip, reinterpret_cast<ImTextureID>(99));
  scene.rect({0, 0}, {8, 8}, {0, 0}, {0, 0}, rgba(255, 0, 0));
  Framebuffer fb(8, 8, rgba(0, 0, 0));
  CHECK_THROWS_AS(render(scene.data, {&kWhite, 1}, fb), std::invalid_argument);
  const Texture empty{reinterpret_cast<ImTextureID>(99), 0, 0, nullptr};
  CHECK_THROWS_AS(render(scene.data, {&empty, 1}, fb), std::invalid_argument);
  CHECK(fb.at(3, 3) == rgba(0, 0, 0));

  // A display larger than the framebuffer, and vertices far outside it or not numbers.
  test::HandDrawn huge(5000, 5000);
  huge.command(kNoClip, kWhite.id);
  huge.triangle(huge.vertex(NAN, 0, NAN, 0, rgba(1, 2, 3)), huge.vertex(3000, 4, 0, 0, 0), huge.vertex(5, 4000, 0, 0, 0));
  huge.rect({-1e9f, -1e9f}, {1e9f, 1e9f}, {0, 0}, {0, 0}, rgba(0, 255, 0));
  Framebuffer small(8, 8, rgba(0, 0, 0));
  render(huge.data, {&kWhite, 1}, small);
  CHECK(small.at(7, 7) == rgba(0, 255, 0));
}

}  // namespace occulta::viewer
