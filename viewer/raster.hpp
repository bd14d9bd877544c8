// viewer/raster.hpp — our CPU rasterizer: Dear ImGui's draw data into an RGBA8 framebuffer.
//
// Dear ImGui describes a frame as lists of textured, coloured triangles with a clip
// rectangle per command (ImDrawData). render() draws them on the CPU, so the window, the
// headless snapshots and every quicklook picture need no GPU and give the same pixels.
//
// Conventions
// - Framebuffer: width × height pixels, row 0 at the top, x to the right. Pixel (x, y)
//   covers [x, x+1) × [y, y+1) and is sampled at its centre (x + ½, y + ½), as OpenGL and
//   Direct3D 10+ sample. Framebuffer pixel = (ImGui position − DisplayPos) × FramebufferScale.
// - Pixels are std::uint32_t whose bytes in memory are R, G, B, A — IM_COL32's layout and
//   OpenGL's GL_RGBA/GL_UNSIGNED_BYTE on the little-endian machines we build for (checked
//   at compile time). Colours are straight (not premultiplied) alpha, as Dear ImGui's are.
// - A fragment is texel × vertex colour, per channel (OpenGL's GL_MODULATE, what Dear
//   ImGui's OpenGL2 backend sets). It is blended "source over" (Porter & Duff 1984,
//   "Compositing Digital Images", SIGGRAPH '84), the GL_SRC_ALPHA, GL_ONE_MINUS_SRC_ALPHA
//   of Dear ImGui's backends:  rgb = src.rgb·src.a + dst.rgb·(1 − src.a). Alpha follows
//   Porter & Duff's own "over":  a = src.a + dst.a·(1 − src.a), so a framebuffer cleared
//   opaque stays opaque (the backends' glBlendFunc would give src.a² + dst.a·(1 − src.a)).
//   Arithmetic is in 8 bits with exact rounding of x/255.
// - Coverage: a pixel is drawn when its centre is inside the triangle (edge functions,
//   Pineda 1988, "A Parallel Algorithm for Polygon Rasterization", SIGGRAPH '88). Centres
//   exactly on an edge follow the top-left rule, so two triangles sharing an edge cover
//   each pixel along it exactly once (what OpenGL 4.6 §14.6.1 requires, from memory). We
//   take "top" in OpenGL's window coordinates, y up, as Mesa's llvmpipe does (measured in
//   tests/viewer), so in these y-down rows a left edge and a *bottom* edge are in: a
//   rectangle covers the centres with x0 ≤ x < x1 and y0 < y ≤ y1. (Direct3D
//   applies the same rule with y down and takes top edges; over Dear ImGui's draw data
//   that choice moved whole rows against the OpenGL reference, where lines and rectangles
//   end on half pixels.) Vertices are snapped to 1/256 px (8 sub-pixel bits, as llvmpipe)
//   and clamped to ±2²⁰ px.
// - Clipping: each command's ClipRect is mapped to pixels and truncated to integers the way
//   Dear ImGui's OpenGL2 backend computes its glScissor box; a pixel is drawn when its
//   centre is inside.
// - Sampling (OpenGL 4.6 §8.14, from memory): texel (i, j) has its centre at
//   ((i + ½)/W, (j + ½)/H) in (u, v); `nearest` takes the texel containing (u, v),
//   `bilinear` weighs the four around it with 8-bit weights (GL_LINEAR without mipmaps —
//   a picture drawn much smaller than its texture aliases: downscale it first, with
//   OpenCV). Row 0 of a texture is at v = 0 (the top of an ImGui::Image).
// - Fast paths (same coverage and the same sampling as the general path): two triangles
//   forming an axis-aligned rectangle with axis-aligned UVs and one colour (glyphs,
//   images, solid rectangles, as ImDrawList::PrimRect/PrimRectUV and ImFont::RenderText
//   emit them); triangles of one UV (solid fills, anti-aliased fringes).
// - Deterministic: the same draw data and textures give the same pixels.
#pragma once

#include <bit>
#include <cstdint>
#include <span>
#include <vector>

#include <imgui.h>

namespace occulta::viewer {

static_assert(std::endian::native == std::endian::little, "pixels are R, G, B, A bytes in a little-endian uint32");
static_assert(sizeof(ImDrawIdx) == 2 || sizeof(ImDrawIdx) == 4);

// A pixel value from its channels (0–255 each): the same packing as IM_COL32.
constexpr std::uint32_t rgba(std::uint32_t r, std::uint32_t g, std::uint32_t b, std::uint32_t a = 255) {
  return r | (g << 8) | (b << 16) | (a << 24);
}

enum class Sampling { nearest, bilinear };
enum class Wrap { clamp_to_edge, repeat };  // GL_CLAMP_TO_EDGE, GL_REPEAT

// A texture the caller owns (the font atlas, a frame image): `texels` holds width × height
// straight-alpha RGBA8 texels, row after row with no padding, and must outlive render().
struct Texture {
  ImTextureID id = nullptr;  // what draw commands carry: io.Fonts->TexID, ImGui::Image's first argument
  int width = 0;
  int height = 0;
  const std::uint8_t* texels = nullptr;
  Sampling sampling = Sampling::bilinear;
  Wrap wrap = Wrap::clamp_to_edge;
};

struct Framebuffer {
  int width = 0;
  int height = 0;
  std::vector<std::uint32_t> pixels;  // row-major, row 0 at the top

  Framebuffer() = default;
  Framebuffer(int w, int h, std::uint32_t fill) : width(w), height(h), pixels(std::size_t(w) * std::size_t(h), fill) {}
  std::uint32_t at(int x, int y) const { return pixels[std::size_t(y) * std::size_t(width) + std::size_t(x)]; }
};

// What render() did, for tests and the benchmark: triangles by path, rectangles by path.
struct RasterCounts {
  long rectangles = 0;      // two-triangle axis-aligned quads drawn by the rectangle path
  long triangles = 0;       // triangles drawn by the general path
  long skipped_commands = 0;  // commands whose clip rectangle is empty
};

// Draws every command list of `draw_data` over `framebuffer`, in order. Every ImTextureID
// the commands use must be in `textures`, with texels and a positive size
// (std::invalid_argument otherwise: a programming error, not bad input; what was drawn
// before stays). User callbacks are called as Dear ImGui's backends call them;
// ImDrawCallback_ResetRenderState is a no-op here (no state to reset). Pixels outside
// the framebuffer are never touched, whatever DisplaySize says.
RasterCounts render(const ImDrawData& draw_data, std::span<const Texture> textures, Framebuffer& framebuffer);

}  // namespace occulta::viewer
