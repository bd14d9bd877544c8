// viewer/headless.hpp — one Dear ImGui frame drawn with no display: for `--snapshot` and
// every quicklook picture.
//
// draw_headless() gives the caller's ImGui calls a fresh ImGui context of the requested
// size, with our font, and draws the frame with viewer/raster (same pixels on every
// machine: no GPU, no display). write_png() writes a framebuffer as PNG (viewer/png).
//
// Conventions: sizes in framebuffer pixels (FramebufferScale 1); pixels as in raster.hpp
// (row 0 at the top, bytes R, G, B, A). The font is DejaVu Sans (fonts-dejavu-core) through
// Dear ImGui's own TrueType loader, with the glyphs our pictures use: Latin-1, Greek,
// punctuation (– — ′ ″ …), super- and subscripts, arrows, mathematical operators (− ≤ ≈ ±)
// and ☉ (R☉).
#pragma once

#include <cstdint>
#include <filesystem>
#include <functional>
#include <span>

#include "viewer/raster.hpp"

namespace occulta::viewer {

// DejaVu Sans as installed by fonts-dejavu-core (the path found when occulta was built).
std::filesystem::path default_font_file();

// Loads `font_file` at `pixel_size` (the font's em height in pixels) as the default font of
// the current ImGui context, builds the atlas and returns it as a texture whose id is also
// set as io.Fonts->TexID. The texels belong to the context's atlas: valid until the
// context is destroyed or its fonts change. A missing or unreadable font file is an
// imaging::InputError naming it.
Texture load_font(const std::filesystem::path& font_file, float pixel_size);

struct HeadlessOptions {
  float font_pixels = 15.0f;                // readable at 100 % on a screen and in a PNG
  std::filesystem::path font_file = default_font_file();
  std::uint32_t background = rgba(24, 24, 28);  // opaque: the picture has no transparency
  // Frames run before the one drawn: a window that sizes itself to its content measures
  // it in its first frame and shows from its second (Dear ImGui's auto-fit), so the
  // frame must be deterministic in its inputs, and is run 1 + warm_up_frames times.
  int warm_up_frames = 2;
};

// Runs `frame` — the ImGui calls of one frame, between NewFrame and Render — in a new
// context of width × height pixels (both > 0; no ini file, no log, 1/60 s per frame) and returns
// the rasterized picture. `textures` are the caller's images its ImGui::Image calls use
// (their ids must differ from the font's, which is the atlas' address). The caller's own
// current context, if any, is current again on return, also when `frame` throws.
// The font's atlas is built once per process for each font file and size and shared by
// every such context (the same texels each time).
// Threads: draw_headless may be called from several threads at once. Dear ImGui's
// current context is one global of the process, so `frame` runs with the others' ImGui
// work held off (one process-wide mutex); the rasterizing, most of the time, runs beside
// them. A thread that runs ImGui frames of its own context (the window's loop) must not
// run beside it.
Framebuffer draw_headless(int width, int height, const std::function<void()>& frame,
                          std::span<const Texture> textures = {}, const HeadlessOptions& options = {});

// Writes `picture` as a PNG (viewer/png.hpp): RGB when every pixel is opaque, RGBA
// otherwise; whole or not at all (imaging::write_file_atomically), so a failure (an
// imaging::InputError naming the file) leaves an earlier file whole.
void write_png(const Framebuffer& picture, const std::filesystem::path& path);

}  // namespace occulta::viewer
