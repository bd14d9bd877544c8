// viewer/headless.cpp — see headless.hpp.
#include "viewer/headless.hpp"

#include <algorithm>
#include <fstream>
#include <iterator>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <utility>
#include <stdexcept>
#include <string_view>
#include <vector>

#include <opencv2/core.hpp>

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


// Loads `font_file` at `pixel_size` into `atlas` (emptied first) and builds its texels.
Texture build_font(ImFontAtlas& atlas, const std::filesystem::path& font_file, float pixel_size) {
  // Read here rather than by AddFontFromFileTTF, which asserts on a missing file.
  std::ifstream in(font_file, std::ios::binary);
  std::vector<char> bytes{std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
  if (!in.good() && !in.eof()) bytes.clear();
  if (bytes.size() < 12)
    throw imaging::InputError(font_file.string(), "cannot be read as a TrueType font (Debian's fonts-dejavu-core provides it)");

  atlas.Clear();
  void* owned_by_atlas = IM_ALLOC(bytes.size());
  std::copy(bytes.begin(), bytes.end(), static_cast<char*>(owned_by_atlas));
  if (atlas.AddFontFromMemoryTTF(owned_by_atlas, int(bytes.size()), pixel_size, nullptr, kGlyphRanges) == nullptr)
    throw imaging::InputError(font_file.string(), "cannot be read as a TrueType font");

  unsigned char* texels = nullptr;
  int width = 0, height = 0;
  atlas.GetTexDataAsRGBA32(&texels, &width, &height);
  if (texels == nullptr) throw imaging::InputError(font_file.string(), "has no glyphs Dear ImGui could pack into an atlas");
  // The atlas' own address: unique while it lives, and never one of the caller's images.
  atlas.TexID = static_cast<ImTextureID>(&atlas);
  // Bilinear, as Dear ImGui's OpenGL backends set GL_LINEAR for the atlas; repeat is
  // OpenGL's default wrap, which those backends leave.
  return Texture{atlas.TexID, width, height, texels, Sampling::bilinear, Wrap::repeat};
}

// One atlas per font file and size for the whole process, built on first use and shared
// by every headless context (ImGui::CreateContext's shared atlas): building it took ~5 % of
// `measure`'s CPU when each picture built its own. The same texels as a fresh build (the
// same file, size and glyph ranges through the same packer). Never freed: it lives as long
// as the process may draw.
struct SharedFont {
  ImFontAtlas* atlas = nullptr;
  Texture texture;
};

// Dear ImGui's current context is one global of the process (GImGui in Debian's
// libimgui.a is not thread-local; ImGui's allocator counts into the current context), so
// everything that calls into ImGui here — the shared atlas built, a context made current,
// its frame built, the context destroyed — runs one thread at a time under this mutex.
// Rasterizing the draw data a frame made calls no ImGui function and runs outside it.
std::mutex& imgui_mutex() {
  static std::mutex mutex;
  return mutex;
}

// The caller holds imgui_mutex().
SharedFont shared_font(const std::filesystem::path& font_file, float pixel_size) {
  // Made once and never destroyed: a thread may still draw while the process exits, and
  // LeakSanitizer (which checks after static destructors) sees the atlases reachable.
  static auto& fonts = *new std::map<std::pair<std::string, float>, SharedFont>();
  const auto key = std::make_pair(font_file.string(), pixel_size);
  if (const auto found = fonts.find(key); found != fonts.end()) return found->second;
  auto atlas = std::make_unique<ImFontAtlas>();
  const Texture texture = build_font(*atlas, font_file, pixel_size);  // throws before anything is kept
  return fonts[key] = SharedFont{atlas.release(), texture};
}

// A Dear ImGui context for one headless frame on the shared atlas. Made current only
// inside run() (under imgui_mutex(), the caller's current context current again after),
// so the draw data it made can be rasterized outside the mutex while other threads build
// their frames in their own contexts.
class HeadlessContext {
 public:
  explicit HeadlessContext(ImFontAtlas* font) {
    const std::lock_guard<std::mutex> lock(imgui_mutex());
    ImGuiContext* previous = ImGui::GetCurrentContext();
    context_ = ImGui::CreateContext(font);  // made current only when none was
    ImGui::SetCurrentContext(previous);
  }
  ~HeadlessContext() {
    const std::lock_guard<std::mutex> lock(imgui_mutex());
    ImGuiContext* previous = ImGui::GetCurrentContext();
    ImGui::SetCurrentContext(context_);  // destroyed as the current one, as ImGui expects
    ImGui::DestroyContext(context_);
    ImGui::SetCurrentContext(previous);
  }
  HeadlessContext(const HeadlessContext&) = delete;
  HeadlessContext& operator=(const HeadlessContext&) = delete;

  template <class Work>
  void run(const Work& work) {
    const std::lock_guard<std::mutex> lock(imgui_mutex());
    ImGuiContext* previous = ImGui::GetCurrentContext();
    ImGui::SetCurrentContext(context_);
    try {
      work();
    } catch (...) {
      ImGui::SetCurrentContext(previous);
      throw;
    }
    ImGui::SetCurrentContext(previous);
  }

 private:
  ImGuiContext* context_ = nullptr;
};

}  // namespace

std::filesystem::path default_font_file() { return OCCULTA_FONT_FILE; }

Texture load_font(const std::filesystem::path& font_file, float pixel_size) {
  return build_font(*ImGui::GetIO().Fonts, font_file, pixel_size);
}

Framebuffer draw_headless(int width, int height, const std::function<void()>& frame, std::span<const Texture> textures,
                          const HeadlessOptions& options) {
  if (width <= 0 || height <= 0) throw std::invalid_argument("viewer::draw_headless: the picture needs a positive width and height");
  SharedFont font;
  {
    const std::lock_guard<std::mutex> lock(imgui_mutex());
    font = shared_font(options.font_file, options.font_pixels);
  }
  HeadlessContext context(font.atlas);
  const ImDrawData* draw_data = nullptr;  // the context's own, valid while it lives
  context.run([&] {
    ImGuiIO& io = ImGui::GetIO();
    io.IniFilename = nullptr;  // a picture must not depend on, or write, window positions on disk
    io.LogFilename = nullptr;
    io.DisplaySize = ImVec2(float(width), float(height));
    io.DeltaTime = 1.0f / 60.0f;
    // render() honours ImDrawCmd::VtxOffset, so a draw list may pass 65 536 vertices with
    // 16-bit indices (a plot of many points) instead of overflowing them.
    io.BackendFlags |= ImGuiBackendFlags_RendererHasVtxOffset;
    io.BackendRendererName = "occulta viewer/raster";
    for (int i = 0; i <= options.warm_up_frames; ++i) {
      ImGui::NewFrame();
      frame();
      ImGui::Render();
    }
    draw_data = ImGui::GetDrawData();
  });

  std::vector<Texture> table(textures.begin(), textures.end());
  table.push_back(font.texture);
  Framebuffer picture(width, height, options.background);
  render(*draw_data, table, picture);
  return picture;
}

void write_png(const Framebuffer& picture, const std::filesystem::path& path) {
  const cv::Mat rgba_view(picture.height, picture.width, CV_8UC4, const_cast<std::uint32_t*>(picture.pixels.data()));
  const bool opaque = std::all_of(picture.pixels.begin(), picture.pixels.end(), [](std::uint32_t p) { return (p >> 24) == 255; });
  const std::vector<unsigned char> bytes = encode_png_rgba(rgba_view, opaque);
  if (bytes.empty()) throw imaging::InputError(path.string(), "cannot be encoded as PNG");
  // Whole or not at all (imaging/output_file.hpp): a killed run never leaves a truncated
  // picture under its final name.
  imaging::write_file_atomically(path, std::string_view(reinterpret_cast<const char*>(bytes.data()), bytes.size()));
}

}  // namespace occulta::viewer
