// viewer/headless.cpp — see headless.hpp.
#include "viewer/headless.hpp"

#include <algorithm>
#include <fstream>
#include <iterator>
#include <stdexcept>
#include <string_view>
#include <vector>

#include <opencv2/core.hpp>
#include <opencv2/imgproc.hpp>

#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"
#include "viewer/png.hpp"

namespace occulta::viewer {
namespace {

// Unicode ranges (inclusive pairs, zero-terminated; must outlive the atlas): the glyphs
// headless.hpp lists. U+2609 is the Sun symbol of R☉.
const ImWchar kGlyphRanges[] = {
    0x0020, 0x00FF,  // Basic Latin, Latin-1 (° ± × ² ³ µ)
    0x0370, 0x03FF,  // Greek (σ θ φ Δ)
    0x2010, 0x2044,  // dashes, quotes, primes, …
    0x2070, 0x209F,  // super- and subscripts
    0x2190, 0x21FF,  // arrows
    0x2200, 0x22FF,  // mathematical operators (− ≤ ≥ ≈)
    0x2609, 0x2609,  // ☉
    0,
};

// Owns a Dear ImGui context for one headless frame and makes the caller's current again.
class ScopedContext {
 public:
  ScopedContext() : previous_(ImGui::GetCurrentContext()), context_(ImGui::CreateContext()) { ImGui::SetCurrentContext(context_); }
  ~ScopedContext() {
    ImGui::DestroyContext(context_);
    ImGui::SetCurrentContext(previous_);
  }
  ScopedContext(const ScopedContext&) = delete;
  ScopedContext& operator=(const ScopedContext&) = delete;

 private:
  ImGuiContext* previous_;
  ImGuiContext* context_;
};

}  // namespace

std::filesystem::path default_font_file() { return OCCULTA_FONT_FILE; }

Texture load_font(const std::filesystem::path& font_file, float pixel_size) {
  // Read here rather than by AddFontFromFileTTF, which asserts on a missing file.
  std::ifstream in(font_file, std::ios::binary);
  std::vector<char> bytes{std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
  if (!in.good() && !in.eof()) bytes.clear();
  if (bytes.size() < 12)
    throw imaging::InputError(font_file.string(), "cannot be read as a TrueType font (Debian's fonts-dejavu-core provides it)");

  ImGuiIO& io = ImGui::GetIO();
  io.Fonts->Clear();
  void* owned_by_atlas = IM_ALLOC(bytes.size());
  std::copy(bytes.begin(), bytes.end(), static_cast<char*>(owned_by_atlas));
  if (io.Fonts->AddFontFromMemoryTTF(owned_by_atlas, int(bytes.size()), pixel_size, nullptr, kGlyphRanges) == nullptr)
    throw imaging::InputError(font_file.string(), "cannot be read as a TrueType font");

  unsigned char* texels = nullptr;
  int width = 0, height = 0;
  io.Fonts->GetTexDataAsRGBA32(&texels, &width, &height);
  if (texels == nullptr) throw imaging::InputError(font_file.string(), "has no glyphs Dear ImGui could pack into an atlas");
  // The atlas' own address: unique while it lives, and never one of the caller's images.
  io.Fonts->TexID = static_cast<ImTextureID>(io.Fonts);
  // Bilinear, as Dear ImGui's OpenGL backends set GL_LINEAR for the atlas; repeat is
  // OpenGL's default wrap, which those backends leave.
  return Texture{io.Fonts->TexID, width, height, texels, Sampling::bilinear, Wrap::repeat};
}

Framebuffer draw_headless(int width, int height, const std::function<void()>& frame, std::span<const Texture> textures,
                          const HeadlessOptions& options) {
  if (width <= 0 || height <= 0) throw std::invalid_argument("viewer::draw_headless: the picture needs a positive width and height");
  ScopedContext context;
  ImGuiIO& io = ImGui::GetIO();
  io.IniFilename = nullptr;  // a picture must not depend on, or write, window positions on disk
  io.LogFilename = nullptr;
  io.DisplaySize = ImVec2(float(width), float(height));
  io.DeltaTime = 1.0f / 60.0f;
  // render() honours ImDrawCmd::VtxOffset, so a draw list may pass 65 536 vertices with
  // 16-bit indices (a plot of many points) instead of overflowing them.
  io.BackendFlags |= ImGuiBackendFlags_RendererHasVtxOffset;
  io.BackendRendererName = "occulta viewer/raster";

  std::vector<Texture> table(textures.begin(), textures.end());
  table.push_back(load_font(options.font_file, options.font_pixels));

  for (int i = 0; i <= options.warm_up_frames; ++i) {
    ImGui::NewFrame();
    frame();
    ImGui::Render();
  }
  Framebuffer picture(width, height, options.background);
  render(*ImGui::GetDrawData(), table, picture);
  return picture;
}

void write_png(const Framebuffer& picture, const std::filesystem::path& path) {
  // OpenCV wants B, G, R(, A) channel order.
  const cv::Mat rgba_view(picture.height, picture.width, CV_8UC4, const_cast<std::uint32_t*>(picture.pixels.data()));
  const bool opaque = std::all_of(picture.pixels.begin(), picture.pixels.end(), [](std::uint32_t p) { return (p >> 24) == 255; });
  cv::Mat encoded;
  cv::cvtColor(rgba_view, encoded, opaque ? cv::COLOR_RGBA2BGR : cv::COLOR_RGBA2BGRA);
  const std::vector<unsigned char> bytes = encode_png(encoded);
  if (bytes.empty()) throw imaging::InputError(path.string(), "cannot be encoded as PNG");
  // Whole or not at all (imaging/output_file.hpp): a killed run never leaves a truncated
  // picture under its final name.
  imaging::write_file_atomically(path, std::string_view(reinterpret_cast<const char*>(bytes.data()), bytes.size()));
}

}  // namespace occulta::viewer
