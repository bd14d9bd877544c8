// viewer/plot.hpp — the plotting layer: data ↔ pixels for one panel, and the axes, ticks,
// UTC time axes, image panels, colour bars, legends and titles drawn from that mapping onto
// an ImDrawList. The window's panels and the quicklook pictures draw with it.
//
// Conventions
// - Pixels are Dear ImGui's: x right, y down; pixel (i, j) covers [i, i+1) × [j, j+1).
// - A PlotFrame maps the data rectangle linearly onto its pixel rectangle: x.lo at the left
//   edge pixel_min.x, x.hi at the right edge pixel_max.x, y.lo at the bottom edge
//   pixel_max.y, y.hi at the top edge pixel_min.y (data y is up). lo > hi reverses an axis
//   (PA growing to the left, say); lo = hi is not an axis.
// - A time axis (Axis::utc) carries UTC seconds since 2000-01-01T00:00:00 (imaging/time.hpp,
//   leap seconds ignored); its labels are UTC.
// - Text uses the current Dear ImGui context's font at its size (ImGui::GetFont(),
//   ImGui::GetFontSize()): the draw_* functions run between ImGui::NewFrame() and
//   ImGui::Render(), as any drawing does. Lines one pixel wide (axes, ticks, frame) are
//   filled one-pixel rectangles on whole pixels, so they come out crisp.
// - Colours are ImU32 as IM_COL32 packs them.
#pragma once

#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <imgui.h>

#include "viewer/colour_table.hpp"

namespace occulta::viewer {

struct Axis {
  double lo = 0.0, hi = 1.0;
  std::string label;  // the quantity and its unit: "height (R☉)"; "time (UTC)"
  bool utc = false;   // values are UTC seconds since 2000: ticks at whole minutes, hours, days
  bool degrees = false;  // values are angles in degrees: ticks at multiples of 1, 2, 5, 10, 15, 30, 45, 90°
};

struct DataPoint {
  double x = 0.0, y = 0.0;
};

struct PlotFrame {
  ImVec2 pixel_min, pixel_max;  // the data area's top-left and bottom-right corners
  Axis x, y;

  ImVec2 to_pixel(double data_x, double data_y) const;
  DataPoint to_data(ImVec2 pixel) const;  // the inverse of to_pixel
};

// ---- Ticks -----------------------------------------------------------------------------

// Heckbert (1990), "Nice numbers for graph labels", Graphics Gems I, 61–63: a nice number
// is 1, 2 or 5 × 10ⁿ (10 × 10ⁿ rounds up to the next decade). round = true gives the nice
// number nearest x (fractions below 1.5, 3 and 7 go to 1, 2 and 5), round = false the
// smallest nice number ≥ x. x > 0.
double nice_number(double x, bool round);

// Heckbert's tick spacing for about `about` ticks (≥ 2) over [lo, hi]:
//   step = nice_number(nice_number(|hi − lo|, false) / (about − 1), true).
double nice_step(double lo, double hi, int about);

// The multiples of nice_step inside [min(lo, hi), max(lo, hi)], increasing; none where
// lo = hi or either is not finite (the ticks of a
// fixed axis; Heckbert's "loose" labelling instead widens the range to whole steps:
// nice_range).
std::vector<double> nice_ticks(double lo, double hi, int about);

// Heckbert's loose range: [floor(lo/step)·step, ceil(hi/step)·step] for lo < hi.
DataPoint nice_range(double lo, double hi, int about);

struct Tick {
  double value = 0.0;
  std::string label;  // "0.5", "−2", "14:30", "2031-03-05"
  std::string date;   // time axes: "YYYY-MM-DD" under the first tick and where the date changes
};

// Ticks of a value axis, labelled with as many decimals as the step needs (Heckbert's
// nfrac = max(−floor(log10 step), 0)); negative numbers with a minus sign (U+2212).
std::vector<Tick> value_ticks(double lo, double hi, int about);

// The UTC tick step for about `about` intervals over [lo_s, hi_s]: the smallest of 1, 2, 5,
// 10, 15, 30 s, 1, 2, 5, 10, 15, 30 min, 1, 2, 3, 6, 12 h, 1, 2, 5, 10, 20, 50… days that
// gives at most `about` intervals (steps that divide the day, so ticks fall on the same
// clock times every day; common practice on time axes).
double utc_tick_step(double lo_s, double hi_s, int about);

// Ticks of a UTC axis at whole multiples of utc_tick_step since 2000-01-01T00:00 (so at
// whole minutes, hours, midnight): labels hh:mm (hh:mm:ss for steps under a minute, the
// date alone for steps of a day or more); `date` set on the first tick and wherever the
// date differs from the tick before.
std::vector<Tick> utc_ticks(double lo_s, double hi_s, int about);

// Ticks of an angle axis at multiples of the smallest of 1, 2, 5, 10, 15, 30, 45 and 90°
// that are at least min_step_deg apart (steps that divide the circle and its quadrants,
// so a PA axis shows north, east, south and west; common practice), labelled as
// value_ticks does.
std::vector<Tick> degree_ticks(double lo, double hi, double min_step_deg);

// The ticks an axis this many pixels long gets (value, UTC or degrees), about one per
// spacing_px; a degree axis' labels are short, so its ticks may come 3/4 of that apart.
// A value axis that Heckbert's rule leaves with fewer than 2 ticks inside (4 where it is
// ≥ 4 spacings long) asks for twice as many, up to three times.
std::vector<Tick> axis_ticks(const Axis& axis, float length_px, float spacing_px);

// ---- Drawing ---------------------------------------------------------------------------

struct PlotStyle {
  ImU32 text = IM_COL32(225, 225, 225, 255);
  ImU32 axis = IM_COL32(190, 190, 190, 255);
  ImU32 grid = IM_COL32(255, 255, 255, 26);  // alpha 0: no grid lines
  ImU32 background = IM_COL32(16, 16, 20, 255);  // legends' box
  float tick_px = 5.0f;
  float pad_px = 4.0f;
  float x_spacing_px = 100.0f;  // about one labelled tick per this many pixels
  float y_spacing_px = 55.0f;
  float colour_bar_px = 16.0f;  // the colour strip's width
};

// What layout_plot leaves room for beside the data area.
struct PlotMargins {
  bool title = true;           // a line above for the title (and a colour bar's label)
  bool colour_bar = false;     // a colour bar at the right (draw_colour_bar)
  const ColourScale* colour_scale = nullptr;  // its ticks' widths, when colour_bar
};

// The PlotFrame inside the panel [outer_min, outer_max] that leaves room for the title,
// tick labels, axis labels and a colour bar, on whole pixels.
PlotFrame layout_plot(ImVec2 outer_min, ImVec2 outer_max, Axis x, Axis y, const PlotMargins& margins = {},
                      const PlotStyle& style = {});

// The same frame shrunk about its centre, on whole pixels, so that one data unit spans as
// many pixels across as up: for sky images (x and y in R☉), where a circle must stay round.
PlotFrame with_equal_scale(const PlotFrame& frame);

struct AxesDrawn {
  std::vector<Tick> x_ticks, y_ticks;  // the labelled ticks, as drawn
};

// The data area's outline, ticks and tick labels (a time axis' dates on a second line
// where it has any; layout_plot leaves that line out otherwise),
// grid lines, the x label centred below and the y label turned to read upwards at the left.
AxesDrawn draw_axes(ImDrawList& draw, const PlotFrame& frame, const PlotStyle& style = {});

// A title centred above the data area.
void draw_title(ImDrawList& draw, const PlotFrame& frame, std::string_view title, const PlotStyle& style = {});

struct LegendEntry {
  std::string label;
  ImU32 colour = IM_COL32_WHITE;
  bool box = false;   // a filled box (bars, areas, points) rather than a line sample
  bool ring = false;  // an open circle (points drawn as rings), rather than either
};

// The entries one under the other in a box at the data area's top-right corner, below
// `rows_above` text lines left free (for draw_marker's labels).
void draw_legend(ImDrawList& draw, const PlotFrame& frame, std::span<const LegendEntry> entries, int rows_above = 0,
                 const PlotStyle& style = {});

// The entries side by side on one text line from `at` (its top-left corner), each a sample
// (line or box) and its label: a legend outside the data area, where it hides nothing.
// Returns the width it took.
float draw_legend_row(ImDrawList& draw, ImVec2 at, std::span<const LegendEntry> entries, const PlotStyle& style = {});

// A polyline through the points (data units), clipped to the data area; a NaN point
// breaks the line.
void draw_line(ImDrawList& draw, const PlotFrame& frame, std::span<const DataPoint> points, ImU32 colour,
               float thickness_px = 1.5f);

// Bars from y = 0 (or the bottom of the data area when 0 is below it) up to heights[i],
// between edges[i] and edges[i + 1] (edges.size() == heights.size() + 1), on whole pixels
// with a one-pixel gap where bars are wide enough; clipped to the data area.
void draw_bars(ImDrawList& draw, const PlotFrame& frame, std::span<const double> edges,
               std::span<const double> heights, ImU32 colour);

// A vertical line across the data area at data x, with its label near the top beside it,
// on text line `label_row` (0 = the first; markers close together take different rows).
void draw_marker(ImDrawList& draw, const PlotFrame& frame, double x, ImU32 colour, std::string_view label,
                 int label_row = 0, float thickness_px = 2.0f);

// A circle of radius r about (cx, cy) in data units, clipped to the data area (round on
// screen only where both axes have the same scale: with_equal_scale): the solar limb, an
// occulter's edge, a height.
void draw_circle(ImDrawList& draw, const PlotFrame& frame, double cx, double cy, double r, ImU32 colour,
                 float thickness_px = 1.5f);

// Arrows to solar north and east at the data area's top-left corner, labelled N and E, for
// a sky image whose x is helioprojective θx (west positive) and y is θy (north positive),
// or any axes in R☉ along them: north points to +y, east to −x (Thompson 2006), whichever
// way the axes run on screen.
void draw_north_east(ImDrawList& draw, const PlotFrame& frame, const PlotStyle& style = {});

// Where an image lies in data units: its left, right, bottom and top edges (pixel edges,
// not centres). Texel row 0 is drawn at the top edge.
struct ImageExtent {
  double left = 0.0, right = 1.0, bottom = 0.0, top = 1.0;
};

// A texture drawn over its extent, clipped to the data area (an image panel; draw_axes
// over it). The texture's id is what the renderer's texture list carries.
void draw_image(ImDrawList& draw, const PlotFrame& frame, ImTextureID texture, const ImageExtent& extent);

// The colour bar of an image panel: a vertical strip right of the data area, as tall as
// it (scale.lo at the bottom, scale.hi at the top), with value ticks on its right and
// scale.label above it. Returns its ticks.
std::vector<Tick> draw_colour_bar(ImDrawList& draw, const PlotFrame& frame, const ColourScale& scale,
                                  const PlotStyle& style = {});

}  // namespace occulta::viewer
