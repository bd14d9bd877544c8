// tests/viewer/reference_test.cpp — the rasterizer against a reference renderer: the same
// ImDrawData drawn by Dear ImGui's own OpenGL2 backend (imgui_impl_opengl2, in Debian's
// libimgui.a) on Mesa's off-screen software OpenGL (OSMesa, llvmpipe) and by ours.
//
// Tolerance, measured. Both renderers snap vertices to 1/256 px, apply the top-left rule
// with OpenGL's y up and blend in 8 bits, but they round differently: llvmpipe rounds the
// fragment colour and each blend product on its own and interpolates in its own fixed
// point, so differing pixels differ by one or two levels. Measured with Mesa 22.3.6, per
// scene of 640 × 480: at most one pixel differs by more than 2/255 (the end of one thin
// line), the mean difference is 0.003–0.09/255. We require, per scene, at most 10 pixels
// differing by more than 2/255 in any channel and a mean absolute difference below
// 0.15/255. Checked to fail: with every vertex of ours moved one pixel right, every
// scene breaks both (mean 0.28–9.5/255); with the top-left rule taken with y down
// (Direct3D's way), text, shapes and images break the first (17, 181 and 300 pixels,
// whole rows at the ends of rectangles and lines, up to 214/255).
#include <GL/gl.h>
#include <GL/osmesa.h>
#include <backends/imgui_impl_opengl2.h>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <functional>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "tests/support/support.hpp"
#include "viewer/headless.hpp"
#include "viewer/raster.hpp"

// Under LeakSanitizer (the sanitizer build), Mesa's own leak is suppressed narrowly: see
// tests/lsan_osmesa.supp. The sanitizer runtime calls this before reading LSAN_OPTIONS.
extern "C" const char* __lsan_default_options() { return "suppressions=" OCCULTA_SOURCE_DIR "/tests/lsan_osmesa.supp"; }

namespace occulta::viewer {
namespace {

constexpr int kWidth = 640, kHeight = 480;
const std::uint32_t kBackground = rgba(30, 34, 40);

// A 256² test picture, opaque: smooth ramps, a 4-px checker and fine lines — what a
// bilinear sampler must get right under magnification and reduction.
std::vector<std::uint8_t> test_picture(bool with_alpha) {
  std::vector<std::uint8_t> texels;
  for (int y = 0; y < 256; ++y) {
    for (int x = 0; x < 256; ++x) {
      texels.push_back(std::uint8_t(x));
      texels.push_back(std::uint8_t((x / 4 + y / 4) % 2 ? 230 : 20));
      texels.push_back(std::uint8_t((x % 16 == 0 || y % 16 == 0) ? 255 : y));
      texels.push_back(std::uint8_t(with_alpha ? (x + y) / 2 : 255));
    }
  }
  return texels;
}

struct Comparison {
  long beyond_2 = 0;     // pixels with a channel differing by more than 2
  double within_2 = 0;   // fraction of pixels whose channels all differ by ≤ 2
  int worst = 0;         // largest channel difference
  int worst_x = 0, worst_y = 0;
  std::uint32_t ours_there = 0, reference_there = 0;
  double mean = 0;       // mean absolute channel difference (RGB)
};

std::string rgb_text(std::uint32_t p) {
  return "(" + std::to_string(p & 0xFF) + ", " + std::to_string((p >> 8) & 0xFF) + ", " + std::to_string((p >> 16) & 0xFF) + ")";
}

Comparison compare(const Framebuffer& ours, const Framebuffer& reference) {
  Comparison c;
  long close = 0;
  double sum = 0;
  for (std::size_t k = 0; k < ours.pixels.size(); ++k) {
    int pixel_worst = 0;
    for (int ch = 0; ch < 3; ++ch) {
      const int d = std::abs(int((ours.pixels[k] >> (8 * ch)) & 0xFF) - int((reference.pixels[k] >> (8 * ch)) & 0xFF));
      pixel_worst = std::max(pixel_worst, d);
      sum += d;
    }
    close += pixel_worst <= 2;
    c.beyond_2 += pixel_worst > 2;
    if (pixel_worst > c.worst) {
      c.worst = pixel_worst;
      c.worst_x = int(k % std::size_t(ours.width));
      c.worst_y = int(k / std::size_t(ours.width));
      c.ours_there = ours.pixels[k];
      c.reference_there = reference.pixels[k];
    }
  }
  c.within_2 = double(close) / double(ours.pixels.size());
  c.mean = sum / (3.0 * double(ours.pixels.size()));
  return c;
}

// Both renderers, one ImGui context, one OSMesa context.
class TwoRenderers {
 public:
  TwoRenderers() {
    setenv("LP_NUM_THREADS", "0", 1);  // llvmpipe draws on this thread: quicker to start, no threads left behind
    gl_ = OSMesaCreateContextExt(OSMESA_RGBA, 0, 0, 0, nullptr);
    REQUIRE(gl_ != nullptr);
    gl_pixels_.assign(std::size_t(kWidth) * kHeight, 0);
    REQUIRE(OSMesaMakeCurrent(gl_, gl_pixels_.data(), GL_UNSIGNED_BYTE, kWidth, kHeight));
    OSMesaPixelStore(OSMESA_Y_UP, 0);  // row 0 at the top, as ours

    imgui_ = ImGui::CreateContext();
    ImGuiIO& io = ImGui::GetIO();
    io.IniFilename = nullptr;
    io.DisplaySize = ImVec2(kWidth, kHeight);
    io.DeltaTime = 1.0f / 60.0f;
    textures_.push_back(load_font(default_font_file(), 15.0f));
    REQUIRE(ImGui_ImplOpenGL2_Init());
    ImGui_ImplOpenGL2_NewFrame();            // uploads the atlas and sets io.Fonts->TexID to its GL name
    textures_.back().id = io.Fonts->TexID;   // ours draws the same atlas under the same id

    opaque_ = test_picture(false);
    translucent_ = test_picture(true);
    add_picture(opaque_, GL_LINEAR, Sampling::bilinear);
    add_picture(translucent_, GL_LINEAR, Sampling::bilinear);
    add_picture(opaque_, GL_NEAREST, Sampling::nearest);
  }
  ~TwoRenderers() {
    glDeleteTextures(GLsizei(gl_textures_.size()), gl_textures_.data());
    ImGui_ImplOpenGL2_Shutdown();
    ImGui::DestroyContext(imgui_);
    OSMesaMakeCurrent(nullptr, nullptr, 0, 0, 0);
    OSMesaDestroyContext(gl_);
  }
  TwoRenderers(const TwoRenderers&) = delete;
  TwoRenderers& operator=(const TwoRenderers&) = delete;

  // The GL texture names, as ImTextureIDs: the linear opaque, linear translucent and nearest pictures.
  ImTextureID picture(int i) const { return textures_[std::size_t(i) + 1].id; }

  // Runs `frame` three times (windows fit their content in the first frames) and draws the
  // last with both renderers; writes both and their difference (×16) under test-tmp/<name>.
  Comparison run(const std::string& name, const std::function<void()>& frame, RasterCounts* counts = nullptr) {
    for (int i = 0; i < 3; ++i) {
      ImGui_ImplOpenGL2_NewFrame();
      ImGui::NewFrame();
      frame();
      ImGui::Render();
    }
    ImDrawData* draw_data = ImGui::GetDrawData();

    glViewport(0, 0, kWidth, kHeight);
    glClearColor(30 / 255.0f, 34 / 255.0f, 40 / 255.0f, 1.0f);
    glClear(GL_COLOR_BUFFER_BIT);
    ImGui_ImplOpenGL2_RenderDrawData(draw_data);
    glFinish();
    Framebuffer reference(kWidth, kHeight, 0);
    reference.pixels = gl_pixels_;
    for (std::uint32_t& p : reference.pixels) p |= 0xFF000000u;  // the backend's glBlendFunc also blends alpha (raster.hpp)

    Framebuffer ours(kWidth, kHeight, kBackground);
    const RasterCounts drawn = render(*draw_data, textures_, ours);
    if (counts) *counts = drawn;
    Framebuffer again(kWidth, kHeight, kBackground);
    render(*draw_data, textures_, again);
    CHECK_MESSAGE(again.pixels == ours.pixels, "the same draw data must give the same pixels");
    long translucent = 0;  // source over keeps an opaque framebuffer opaque (raster.hpp)
    for (const std::uint32_t p : ours.pixels) translucent += (p >> 24) != 255;
    CHECK(translucent == 0);

    const std::filesystem::path dir = test::scratch_dir("viewer-reference-" + name);
    Framebuffer difference(kWidth, kHeight, 0);
    for (std::size_t k = 0; k < ours.pixels.size(); ++k) {
      std::uint32_t d = 0xFF000000u;
      for (int ch = 0; ch < 3; ++ch) {
        const int delta = std::abs(int((ours.pixels[k] >> (8 * ch)) & 0xFF) - int((reference.pixels[k] >> (8 * ch)) & 0xFF));
        d |= std::uint32_t(std::min(255, 16 * delta)) << (8 * ch);
      }
      difference.pixels[k] = d;
    }
    write_png(ours, dir / "ours.png");
    write_png(reference, dir / "opengl2_osmesa.png");
    write_png(difference, dir / "difference_x16.png");

    const Comparison c = compare(ours, reference);
    MESSAGE(name << ": " << c.beyond_2 << " pixels beyond 2/255 (" << 100.0 * c.within_2 << " % within), mean " << c.mean << "/255, worst " << c.worst
                 << "/255 at (" << c.worst_x << ", " << c.worst_y << "): ours " << rgb_text(c.ours_there) << ", reference "
                 << rgb_text(c.reference_there));
    return c;
  }

 private:
  void add_picture(const std::vector<std::uint8_t>& texels, GLint filter, Sampling sampling) {
    GLuint name = 0;
    glGenTextures(1, &name);
    glBindTexture(GL_TEXTURE_2D, name);
    glTexParameteri(GL_TEXTURE_2D, GL_TEXTURE_MIN_FILTER, filter);
    glTexParameteri(GL_TEXTURE_2D, GL_TEXTURE_MAG_FILTER, filter);
    glTexParameteri(GL_TEXTURE_2D, GL_TEXTURE_WRAP_S, GL_CLAMP_TO_EDGE);
    glTexParameteri(GL_TEXTURE_2D, GL_TEXTURE_WRAP_T, GL_CLAMP_TO_EDGE);
    glPixelStorei(GL_UNPACK_ALIGNMENT, 1);
    glTexImage2D(GL_TEXTURE_2D, 0, GL_RGBA, 256, 256, 0, GL_RGBA, GL_UNSIGNED_BYTE, texels.data());
    gl_textures_.push_back(name);
    textures_.push_back(Texture{reinterpret_cast<ImTextureID>(std::uintptr_t(name)), 256, 256, texels.data(), sampling, Wrap::clamp_to_edge});
  }

  OSMesaContext gl_ = nullptr;
  std::vector<std::uint32_t> gl_pixels_;
  ImGuiContext* imgui_ = nullptr;
  std::vector<Texture> textures_;
  std::vector<GLuint> gl_textures_;
  std::vector<std::uint8_t> opaque_, translucent_;
};

void check(const Comparison& c) {
  CHECK(c.beyond_2 <= 10);
  CHECK(c.mean < 0.15);
}

void place(const char* title, ImVec2 pos, ImVec2 size) {
  ImGui::SetNextWindowPos(pos);
  ImGui::SetNextWindowSize(size);
  ImGui::Begin(title);
}

}  // namespace

TEST_CASE("raster: matches Dear ImGui's OpenGL2 backend on Mesa's software GL (OSMesa)") {
  TwoRenderers renderers;

  SUBCASE("text") {
    RasterCounts counts;
    check(renderers.run("text", [] {
      place("Text of several sizes", ImVec2(10, 10), ImVec2(420, 300));
      for (int i = 0; i < 6; ++i) ImGui::Text("Line %d: height 4.35 R\u2609, PA 271.5\u00b0, 3.2 \u03c3 — the quick brown fox", i);
      ImGui::TextColored(ImVec4(1.0f, 0.6f, 0.2f, 1.0f), "Coloured text, σ ≈ 1.5, ΔT = 12 min");
      ImGui::SetWindowFontScale(1.7f);
      ImGui::TextUnformatted("Scaled ×1.7 glyphs");
      ImGui::SetWindowFontScale(0.8f);
      ImGui::TextWrapped("Reduced, wrapped text that runs on for a while so that it wraps over more than one line of the window.");
      ImGui::End();
      ImDrawList* bg = ImGui::GetBackgroundDrawList();
      for (int i = 0; i < 8; ++i)
        bg->AddText(ImVec2(440.0f + 0.33f * float(i), 20.0f + 27.25f * float(i)), IM_COL32(255, 255 - 25 * i, 120, 255 - 20 * i), "sub-pixel x");
    }, &counts));
    CHECK(counts.rectangles > 500);  // glyphs take the rectangle path
  }

  SUBCASE("lines") {
    check(renderers.run("lines", [] {
      ImDrawList* bg = ImGui::GetBackgroundDrawList();
      for (int i = 0; i < 12; ++i) {
        const float angle = 0.13f * float(i), thickness = 0.6f + 0.45f * float(i);
        bg->AddLine(ImVec2(30.0f + 40.0f * float(i), 30.0f),
                    ImVec2(30.0f + 40.0f * float(i) + 160.0f * std::sin(angle), 30.0f + 160.0f * std::cos(angle)),
                    IM_COL32(255, 220, 100, 255), thickness);
      }
      ImVec2 curve[200];
      for (int i = 0; i < 200; ++i) curve[i] = ImVec2(20.0f + 3.0f * float(i), 330.0f + 60.0f * std::sin(0.07f * float(i)));
      bg->AddPolyline(curve, 200, IM_COL32(120, 200, 255, 255), 0, 1.0f);
      bg->AddPolyline(curve, 200, IM_COL32(255, 120, 200, 160), 0, 2.5f);
      bg->AddBezierCubic(ImVec2(30, 440), ImVec2(200, 250), ImVec2(400, 470), ImVec2(620, 300), IM_COL32(200, 255, 160, 255), 1.5f);
      bg->AddCircle(ImVec2(540, 120), 80.0f, IM_COL32(255, 255, 255, 255), 0, 1.0f);
      bg->AddRect(ImVec2(450.5f, 230.5f), ImVec2(620.5f, 300.5f), IM_COL32(255, 80, 80, 255), 8.0f, 0, 2.0f);
      bg->AddTriangle(ImVec2(470, 420), ImVec2(520, 330), ImVec2(600, 460), IM_COL32(180, 180, 255, 200), 3.0f);
    }));
  }

  SUBCASE("filled shapes") {
    check(renderers.run("shapes", [] {
      ImDrawList* bg = ImGui::GetBackgroundDrawList();
      bg->AddRectFilled(ImVec2(20, 20), ImVec2(220, 140), IM_COL32(200, 60, 60, 255), 12.0f);
      bg->AddRectFilled(ImVec2(120.5f, 80.25f), ImVec2(300.75f, 200.5f), IM_COL32(60, 200, 90, 128));
      bg->AddRectFilledMultiColor(ImVec2(320, 20), ImVec2(620, 200), IM_COL32(255, 0, 0, 255), IM_COL32(0, 255, 0, 255),
                                  IM_COL32(0, 0, 255, 255), IM_COL32(255, 255, 0, 128));
      bg->AddCircleFilled(ImVec2(120, 320), 90.0f, IM_COL32(90, 140, 255, 200));
      bg->AddCircleFilled(ImVec2(180.3f, 360.7f), 33.3f, IM_COL32(255, 255, 255, 90), 7);
      bg->AddTriangleFilled(ImVec2(260, 250), ImVec2(420, 460), ImVec2(300, 470), IM_COL32(240, 200, 40, 220));
      bg->AddNgonFilled(ImVec2(520, 340), 100.0f, IM_COL32(180, 90, 200, 170), 9);
      const ImVec2 star[5] = {ImVec2(450, 230), ImVec2(620, 250), ImVec2(600, 300), ImVec2(500, 320), ImVec2(440, 280)};
      bg->AddConvexPolyFilled(star, 5, IM_COL32(40, 220, 220, 150));
    }));
  }

  SUBCASE("images") {
    RasterCounts counts;
    check(renderers.run("images", [&renderers] {
      ImDrawList* bg = ImGui::GetBackgroundDrawList();
      bg->AddImage(renderers.picture(0), ImVec2(10, 10), ImVec2(310.5f, 310.5f), ImVec2(0.1f, 0.1f), ImVec2(0.35f, 0.35f));  // magnified ×4.8
      bg->AddImage(renderers.picture(0), ImVec2(330, 10), ImVec2(430, 110));                                                 // reduced to 100 px
      bg->AddImage(renderers.picture(1), ImVec2(330, 120), ImVec2(586, 376), ImVec2(0, 0), ImVec2(1, 1), IM_COL32(255, 200, 160, 230));
      // Nearest, with no pixel centre exactly on a texel boundary (there the texel taken
      // depends on each renderer's rounding: with u1 = 0.3, pixel 37's centre is at s = 16.0).
      bg->AddImage(renderers.picture(2), ImVec2(450, 10), ImVec2(630, 110), ImVec2(0, 0), ImVec2(0.29f, 0.17f));
      bg->AddImageRounded(renderers.picture(0), ImVec2(20, 330), ImVec2(200, 470), ImVec2(0, 0), ImVec2(1, 1), IM_COL32_WHITE, 20.0f);
      bg->AddImageQuad(renderers.picture(0), ImVec2(260, 330), ImVec2(330, 350), ImVec2(310, 470), ImVec2(220, 440));
    }, &counts));
    CHECK(counts.rectangles >= 4);
  }

  SUBCASE("clip rectangles") {
    check(renderers.run("clips", [&renderers] {
      ImDrawList* bg = ImGui::GetBackgroundDrawList();
      bg->PushClipRect(ImVec2(40.3f, 30.6f), ImVec2(250.8f, 170.2f));
      bg->AddRectFilled(ImVec2(0, 0), ImVec2(640, 480), IM_COL32(80, 120, 200, 255));
      bg->AddText(ImVec2(30, 100), IM_COL32_WHITE, "text cut by a clip rectangle at fractional coordinates");
      bg->AddImage(renderers.picture(0), ImVec2(200, 140), ImVec2(400, 340));
      bg->PopClipRect();
      place("A window with a scrolled child", ImVec2(300, 60), ImVec2(320, 380));
      ImGui::BeginChild("scrolled", ImVec2(0, 200), true);
      ImGui::SetScrollY(37.0f);
      for (int i = 0; i < 30; ++i) ImGui::Text("row %02d of a list that scrolls", i);
      ImGui::EndChild();
      ImGui::Button("A button");
      ImGui::End();
    }));
  }

  SUBCASE("widgets") {
    check(renderers.run("widgets", [] {
      place("Widgets", ImVec2(10, 10), ImVec2(300, 460));
      static bool flag = true;
      static int choice = 1, item = 0;
      static float value = 0.37f, drag = 2.5f, colour[4] = {0.9f, 0.4f, 0.1f, 0.8f};
      static char text[32] = "running difference";
      ImGui::Checkbox("a checkbox", &flag);
      ImGui::RadioButton("one", &choice, 0);
      ImGui::SameLine();
      ImGui::RadioButton("two", &choice, 1);
      ImGui::SliderFloat("slider", &value, 0.0f, 1.0f);
      ImGui::DragFloat("drag", &drag, 0.1f);
      ImGui::InputText("text", text, sizeof text);
      const char* items[] = {"calibrated", "running difference", "base difference"};
      ImGui::Combo("combo", &item, items, 3);
      ImGui::ColorEdit4("colour", colour);
      const float samples[8] = {0.1f, 0.5f, 0.3f, 0.9f, 0.6f, 0.2f, 0.8f, 0.4f};
      ImGui::PlotLines("lines", samples, 8, 0, nullptr, 0.0f, 1.0f, ImVec2(0, 50));
      ImGui::PlotHistogram("histogram", samples, 8, 0, nullptr, 0.0f, 1.0f, ImVec2(0, 50));
      ImGui::ProgressBar(0.62f);
      ImGui::SetNextItemOpen(true);
      if (ImGui::TreeNode("a tree node")) {
        ImGui::BulletText("a bullet");
        ImGui::TreePop();
      }
      if (ImGui::BeginTable("table", 3, ImGuiTableFlags_Borders | ImGuiTableFlags_RowBg)) {
        for (int row = 0; row < 3; ++row)
          for (int column = 0; column < 3; ++column) {
            ImGui::TableNextColumn();
            ImGui::Text("%d,%d", row, column);
          }
        ImGui::EndTable();
      }
      ImGui::End();
      place("Colour picker", ImVec2(320, 10), ImVec2(310, 330));
      ImGui::ColorPicker4("picker", colour, ImGuiColorEditFlags_PickerHueWheel);
      ImGui::End();
    }));
  }

  SUBCASE("the demo window") {
    check(renderers.run("demo", [] {
      ImGui::SetNextWindowPos(ImVec2(20, 20));
      ImGui::SetNextWindowSize(ImVec2(600, 440));
      ImGui::ShowDemoWindow();
    }));
  }
}

}  // namespace occulta::viewer
