#include "viewer/image_panel.hpp"

#include <utility>

namespace occulta::viewer {

ImagePanel make_image_panel(const cv::Mat& values, const ImageExtent& extent, const ColourScale& scale,
                            ImTextureID id, Sampling sampling) {
  return image_panel_of(std::make_shared<const std::vector<std::uint8_t>>(texels(values, scale)), values.cols, values.rows,
                        extent, scale, id, sampling);
}

ImagePanel image_panel_of(std::shared_ptr<const std::vector<std::uint8_t>> texels, int width, int height,
                          const ImageExtent& extent, const ColourScale& scale, ImTextureID id, Sampling sampling) {
  ImagePanel panel;
  panel.texels = std::move(texels);
  panel.texture = Texture{id, width, height, panel.texels->data(), sampling, Wrap::clamp_to_edge};
  panel.extent = extent;
  panel.scale = scale;
  return panel;
}

ImageExtent time_map_extent(const imaging::TimeMap& map, double t_start, double t_end) {
  const int rows = map.values.rows;
  return {t_start, t_end, map.axis_start - map.axis_step / 2, map.axis_start + (rows - 0.5) * map.axis_step};
}

ImageExtent polar_extent(const imaging::PolarGrid& polar) {
  return {polar.pa_deg(0) - polar.pa_step_deg / 2, polar.pa_deg(polar.pa_count - 1) + polar.pa_step_deg / 2,
          polar.height_rs(0) - polar.height_step_rs / 2,
          polar.height_rs(polar.height_count - 1) + polar.height_step_rs / 2};
}

ImageExtent sky_extent(const imaging::RegisteredGrid& grid) {
  // Pixel (i, j) is centred at ((i − cx)·s, (j − cy)·s) R☉; its edges half a pixel out.
  const double s = grid.rs_per_px, cx = grid.sun_center_px.x(), cy = grid.sun_center_px.y();
  return {(-0.5 - cx) * s, (grid.width - 0.5 - cx) * s, (-0.5 - cy) * s, (grid.height - 0.5 - cy) * s};
}

PlotFrame draw_image_panel(ImDrawList& draw, ImVec2 outer_min, ImVec2 outer_max, const ImagePanel& panel,
                           const PanelAxes& axes, const PlotStyle& style) {
  PlotFrame frame = layout_plot(outer_min, outer_max, axes.x, axes.y, PlotMargins{true, true, &panel.scale}, style);
  if (axes.equal_scale) frame = with_equal_scale(frame);
  draw_image(draw, frame, panel.texture.id, panel.extent);
  draw_axes(draw, frame, style);
  draw_colour_bar(draw, frame, panel.scale, style);
  if (!axes.title.empty()) draw_title(draw, frame, axes.title, style);
  return frame;
}

}  // namespace occulta::viewer
