// viewer/colour_table.hpp — values ↔ colours: occulta's colour tables, a value range mapped
// onto one of them, and float images turned into texels for an image panel.
//
// Conventions
// - A table maps a fraction f ∈ [0, 1] to a colour, linearly in 8-bit sRGB between its stops
//   (common practice for display colour maps); fractions outside [0, 1] take the end colour.
// - A ColourScale maps a value v to f = (v − lo) / (hi − lo): lo is the table's first colour,
//   hi its last. NaN (no data) takes `no_data`.
// - Colours are ImU32 as IM_COL32 packs them (bytes R, G, B, A in memory).
// - Images keep FITS row order (row 0 = the bottom of the picture, DEVELOPERS.md); texels
//   are row 0 at the top, as a texture is drawn (viewer/raster.hpp), so texels() flips them.
//
// The tables, named by what they look like:
// - grey: black → white, for brightness and NRGF images;
// - blue_red: blue → near-white → red, symmetric about its middle, for differences in σ
//   (a ColourScale from −k to +k puts zero on the near-white middle);
// - amber: black → brown → orange → pale yellow, a sequential table for counts and
//   brightness where grey is too flat.
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <imgui.h>
#include <opencv2/core.hpp>

namespace occulta::viewer {

enum class ColourTable { grey, blue_red, amber };

struct ColourStop {
  float at;  // fraction, increasing from 0 to 1 along a table
  std::uint8_t r, g, b;
};

// Every table, in the order of the enum.
std::span<const ColourTable> colour_tables();
std::span<const ColourStop> colour_stops(ColourTable table);
std::string_view colour_table_name(ColourTable table);          // "grey", "blue_red", "amber"
std::optional<ColourTable> colour_table_named(std::string_view name);

// The table's colour at fraction f (clamped to [0, 1]), opaque.
ImU32 colour_at(ColourTable table, double fraction);

struct ColourScale {
  ColourTable table = ColourTable::grey;
  double lo = 0.0, hi = 1.0;  // lo ≠ hi; lo > hi reverses the table
  std::string label;          // what the values are, with their unit: "difference (σ)"
  ImU32 no_data = IM_COL32(0, 0, 0, 255);
};

ImU32 colour_of(const ColourScale& scale, double value);

// RGBA8 texels (width = values.cols, height = values.rows, rows flipped: see above) of a
// single-channel CV_32F image, each value through colour_of().
std::vector<std::uint8_t> texels(const cv::Mat& values, const ColourScale& scale);

}  // namespace occulta::viewer
