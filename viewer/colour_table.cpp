#include "viewer/colour_table.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>

namespace occulta::viewer {

namespace {

// Our own stops. blue_red's two halves have equal steps in lightness from the middle out,
// so +kσ and −kσ look equally strong (chosen by eye, not measured).
constexpr std::array<ColourStop, 2> kGrey{{{0.0f, 0, 0, 0}, {1.0f, 255, 255, 255}}};
constexpr std::array<ColourStop, 5> kBlueRed{{{0.00f, 30, 60, 150},
                                              {0.25f, 95, 140, 210},
                                              {0.50f, 236, 236, 232},
                                              {0.75f, 222, 120, 90},
                                              {1.00f, 160, 28, 36}}};
constexpr std::array<ColourStop, 4> kAmber{{{0.00f, 0, 0, 0},
                                            {0.35f, 120, 48, 8},
                                            {0.70f, 235, 140, 30},
                                            {1.00f, 255, 244, 200}}};

constexpr std::array<ColourTable, 3> kTables{ColourTable::grey, ColourTable::blue_red, ColourTable::amber};

std::uint8_t mix(std::uint8_t a, std::uint8_t b, double t) {
  return static_cast<std::uint8_t>(std::lround(a + (b - a) * t));
}

}  // namespace

std::span<const ColourTable> colour_tables() { return kTables; }

std::span<const ColourStop> colour_stops(ColourTable table) {
  switch (table) {
    case ColourTable::grey: return kGrey;
    case ColourTable::blue_red: return kBlueRed;
    case ColourTable::amber: return kAmber;
  }
  return kGrey;
}

std::string_view colour_table_name(ColourTable table) {
  switch (table) {
    case ColourTable::grey: return "grey";
    case ColourTable::blue_red: return "blue_red";
    case ColourTable::amber: return "amber";
  }
  return "grey";
}

std::optional<ColourTable> colour_table_named(std::string_view name) {
  for (const ColourTable t : kTables)
    if (colour_table_name(t) == name) return t;
  return std::nullopt;
}

ImU32 colour_at(ColourTable table, double fraction) {
  const std::span<const ColourStop> stops = colour_stops(table);
  const double f = std::isnan(fraction) ? 0.0 : std::clamp(fraction, 0.0, 1.0);
  std::size_t i = 1;
  while (i + 1 < stops.size() && f > stops[i].at) ++i;
  const ColourStop& a = stops[i - 1];
  const ColourStop& b = stops[i];
  const double t = std::clamp((f - a.at) / (b.at - a.at), 0.0, 1.0);
  return IM_COL32(mix(a.r, b.r, t), mix(a.g, b.g, t), mix(a.b, b.b, t), 255);
}

ImU32 colour_of(const ColourScale& scale, double value) {
  if (std::isnan(value)) return scale.no_data;
  return colour_at(scale.table, (value - scale.lo) / (scale.hi - scale.lo));
}

std::vector<std::uint8_t> texels(const cv::Mat& values, const ColourScale& scale) {
  CV_Assert(values.type() == CV_32FC1);
  // One lookup table of 1024 entries over [lo, hi] instead of a search per pixel: the
  // table is piecewise linear, so 1024 steps are finer than its 8-bit output.
  constexpr int kSteps = 1024;
  std::array<ImU32, kSteps + 1> lookup{};
  for (int i = 0; i <= kSteps; ++i) lookup[i] = colour_at(scale.table, static_cast<double>(i) / kSteps);
  const double to_step = kSteps / (scale.hi - scale.lo);
  std::vector<std::uint8_t> out(static_cast<std::size_t>(values.rows) * values.cols * 4);
  for (int row = 0; row < values.rows; ++row) {
    const float* v = values.ptr<float>(values.rows - 1 - row);  // FITS row 0 → last texel row
    std::uint8_t* t = out.data() + static_cast<std::size_t>(row) * values.cols * 4;
    for (int col = 0; col < values.cols; ++col, t += 4) {
      ImU32 c = scale.no_data;
      if (!std::isnan(v[col])) {
        const double s = std::clamp((v[col] - scale.lo) * to_step, 0.0, static_cast<double>(kSteps));
        c = lookup[static_cast<std::size_t>(std::lround(s))];
      }
      t[0] = static_cast<std::uint8_t>(c >> IM_COL32_R_SHIFT);
      t[1] = static_cast<std::uint8_t>(c >> IM_COL32_G_SHIFT);
      t[2] = static_cast<std::uint8_t>(c >> IM_COL32_B_SHIFT);
      t[3] = static_cast<std::uint8_t>(c >> IM_COL32_A_SHIFT);
    }
  }
  return out;
}

}  // namespace occulta::viewer
