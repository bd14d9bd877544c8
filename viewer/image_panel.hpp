// viewer/image_panel.hpp — an image ready for a plot: its texels, the texture that points at
// them, where it lies in data units and the colour scale that coloured it; where occulta's
// images lie (time maps, polar images, registered sky images); and a whole image panel
// (layout, image, axes, colour bar, title) in one call.
//
// Conventions: images are single-channel CV_32F in FITS row order (row 0 at the bottom;
// imaging/), NaN for no data; extents are pixel edges in data units (plot.hpp). Sky images
// are on a registered grid (imaging/register.hpp: north up, Sun centre at sun_center_px),
// so x grows to solar west and y to north, in R☉ from Sun centre (Thompson 2006's θx, θy
// directions).
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/polar.hpp"
#include "imaging/register.hpp"
#include "imaging/timeheight.hpp"
#include "viewer/plot.hpp"
#include "viewer/raster.hpp"

namespace occulta::viewer {

// Shares the texels its texture points at: a copy points at the same texels and keeps
// them alive (the window reuses one colouring over many frames: window_cache.hpp).
struct ImagePanel {
  std::shared_ptr<const std::vector<std::uint8_t>> texels;
  Texture texture;  // give it to the renderer (draw_headless's textures) with the frame
  ImageExtent extent;
  ColourScale scale;
};

// The image through `scale` (colour_table.hpp's texels) as texture `id` (any value but the
// font atlas' id, unique among the frame's textures).
ImagePanel make_image_panel(const cv::Mat& values, const ImageExtent& extent, const ColourScale& scale,
                            ImTextureID id, Sampling sampling = Sampling::nearest);

// The same over texels already made (colour_table.hpp's texels of a width × height image).
ImagePanel image_panel_of(std::shared_ptr<const std::vector<std::uint8_t>> texels, int width, int height,
                          const ImageExtent& extent, const ColourScale& scale, ImTextureID id,
                          Sampling sampling = Sampling::nearest);

// imaging::render_on_time_axis(map, t_start, t_end, columns): columns span [t_start, t_end]
// edge to edge; row i is centred on map.axis_start + i·map.axis_step (R☉ or degrees).
ImageExtent time_map_extent(const imaging::TimeMap& map, double t_start, double t_end);

// A polar image (rows = heights, columns = PAs, centres at polar.pa_deg(c), polar.height_rs(r)).
ImageExtent polar_extent(const imaging::PolarGrid& polar);

// An image on a registered grid, in R☉ from Sun centre: x to the west, y to the north.
ImageExtent sky_extent(const imaging::RegisteredGrid& grid);

struct PanelAxes {
  Axis x, y;  // their lo and hi say what part of the image shows, and which way each runs
  std::string title;
  bool equal_scale = false;  // sky images: one R☉ as many pixels across as up
};

// Lays out the panel [outer_min, outer_max] (layout_plot, with a colour bar), draws the
// image, the axes over it, the colour bar and the title, and returns the frame, for
// overlays (draw_line, draw_circle, draw_north_east, draw_legend).
PlotFrame draw_image_panel(ImDrawList& draw, ImVec2 outer_min, ImVec2 outer_max, const ImagePanel& panel,
                           const PanelAxes& axes, const PlotStyle& style = {});

}  // namespace occulta::viewer
