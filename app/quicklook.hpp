// app/quicklook.hpp — the PNG quicklooks of `maps` and `measure`: image panels with real
// axes, a colour bar, a title and overlays with a legend, drawn with the plotting layer
// (viewer/plot.hpp, viewer/image_panel.hpp) and rendered headless (viewer/headless.hpp) in
// DejaVu Sans, as the window draws its panels.
//
// Conventions
// - Images are single-channel CV_32F in FITS row order (row 0 at the bottom; imaging/),
//   NaN for no data (drawn in kNoData, apart from every colour of the grey table).
// - Each panel lies in one plane, which fixes its axes and the units of its overlays:
//   sky          x to solar west, y to solar north, R☉ from Sun centre (the registered grid,
//                imaging/register.hpp; Thompson 2006's θx, θy directions), one R☉ as many
//                pixels across as up; N/E arrows, the limb, and the occulter edge and field
//                stop outlined when known;
//   polar        position angle across (°, counter-clockwise from solar north through
//                east, 0–360) × height up (R☉);
//   time_height  UTC time across (seconds since 2000, imaging/time.hpp; labels hh:mm with
//                the date where it changes) × height up (R☉).
// - A PA/height point goes onto a sky panel by sky_point().
#pragma once

#include <filesystem>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/calibrate.hpp"
#include "imaging/polar.hpp"
#include "viewer/image_panel.hpp"
#include "viewer/plot.hpp"
#include "viewer/raster.hpp"

namespace occulta::app {

enum class Plane { sky, polar, time_height };

// Colours of our own for the quicklooks' marks (on the grey table they stand out by hue).
inline constexpr ImU32 kNoData = IM_COL32(34, 40, 66, 255);        // dark blue-grey
inline constexpr ImU32 kOcculterMark = IM_COL32(255, 150, 40, 255); // occulter edge, field stop
inline constexpr ImU32 kPointMark = IM_COL32(255, 225, 0, 255);     // front and track points
inline constexpr ImU32 kFitMark = IM_COL32(255, 70, 70, 255);       // a fitted height–time law
inline constexpr ImU32 kSpanMark = IM_COL32(80, 220, 80, 255);      // the PAs bounding the CME
inline constexpr ImU32 kShellMark = IM_COL32(0, 220, 255, 255);     // the fitted shell's outline

// Marks over an image in its panel's units (see above).
struct Overlay {
  enum class Shape { line, dots, rings };  // a polyline (NaN breaks it), small filled dots, open circles
  Shape shape = Shape::line;
  std::vector<viewer::DataPoint> points;
  ImU32 colour = IM_COL32_WHITE;
  std::string label;  // its legend entry; empty: none
};

struct QuicklookPanel {
  Plane plane = Plane::sky;
  cv::Mat values;                // what the colours show
  viewer::ImageExtent extent;    // viewer::sky_extent, polar_extent or time_map_extent
  viewer::ColourScale scale;     // its label heads the colour bar: the quantity and its unit
  std::string title;             // the view, the display and the time
  std::optional<imaging::OcculterRadii> radii;  // sky: outlined; legend "occulter edge, field stop"
  std::vector<Overlay> overlays;
};

// A running difference (or any image in σ) on the grey table from −limit_sigma to
// +limit_sigma, no data in kNoData.
viewer::ColourScale sigma_scale(double limit_sigma, std::string label);

// Where a (PA, height) point lies on a sky panel: x = −h·sin(PA), y = h·cos(PA) in R☉
// (PA from north (+y) through east (−x), imaging/polar.hpp's grid_pixel without the grid).
viewer::DataPoint sky_point(double pa_deg, double height_rs);

// The occulter edge and field stop as a view's polar grid has them, for pictures drawn from
// its polar images: the chain makes that grid from the view's radii (imaging/chain.hpp),
// from the inner one up to within one height step of the outer, so the inner is exact and
// the outer is taken half a step above the last height row (off by at most half a step).
imaging::OcculterRadii polar_radii(const imaging::PolarGrid& polar);

// Pixel sizes of one panel, by plane (the picture is as wide as its panels side by side).
struct PanelSize {
  int width = 0, height = 0;
};
PanelSize panel_size(Plane plane);

struct QuicklookPicture {
  viewer::Framebuffer picture;              // opaque RGBA
  std::vector<viewer::PlotFrame> frames;    // each panel's data area as drawn (its axes' mapping)
};

// The panels side by side, each of panel_size(its plane) (the tallest sets the height),
// under `heading` on a line of its own when it is not empty.
QuicklookPicture draw_quicklook(std::span<const QuicklookPanel> panels, std::string_view heading = {});

// The same written as a PNG, whole or not at all; InputError naming the file when it cannot be.
void write_quicklook(const std::filesystem::path& path, std::span<const QuicklookPanel> panels,
                     std::string_view heading = {});

// A polar image (imaging/polar.hpp: rows = height, columns = PA) back on the registered
// grid, bilinear in PA and height, NaN outside the polar grid: the Cartesian picture of any
// running difference, without keeping the Cartesian frames of a sequence in memory.
// The remap (each grid pixel's polar column and row: an arctangent and a square root per
// pixel) is the same for every frame of a view; it is made once by polar_to_cartesian and
// used for each of its pictures.
struct PolarToCartesian {
  cv::Mat map_x, map_y;  // CV_32FC1 of the grid's size: polar column, polar row
};
PolarToCartesian polar_to_cartesian(const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar);
cv::Mat cartesian_from_polar(const cv::Mat& polar_image, const PolarToCartesian& remap);

}  // namespace occulta::app
