// app/quicklook.cpp — see quicklook.hpp.
#include "app/quicklook.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <utility>

#include <opencv2/imgproc.hpp>

#include "imaging/constants.hpp"
#include "viewer/headless.hpp"

namespace occulta::app {

namespace {

constexpr ImU32 kLimb = IM_COL32(255, 255, 255, 150);  // 1 R☉
constexpr float kPad = 4.0f;

// What the legend lists: the occulter outline where drawn, then each labelled overlay.
std::vector<viewer::LegendEntry> legend_of(const QuicklookPanel& p) {
  std::vector<viewer::LegendEntry> entries;
  if (p.plane == Plane::sky && p.radii) entries.push_back({"occulter edge, field stop", kOcculterMark, false});
  for (const Overlay& o : p.overlays)
    if (!o.label.empty())
      entries.push_back({o.label, o.colour, o.shape == Overlay::Shape::dots, o.shape == Overlay::Shape::rings});
  return entries;
}

void draw_overlay(ImDrawList& draw, const viewer::PlotFrame& frame, const Overlay& o) {
  if (o.shape == Overlay::Shape::line) {
    viewer::draw_line(draw, frame, o.points, o.colour, 2.0f);
    return;
  }
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  for (const viewer::DataPoint& d : o.points) {
    if (!std::isfinite(d.x) || !std::isfinite(d.y)) continue;
    const ImVec2 p = frame.to_pixel(d.x, d.y);
    if (o.shape == Overlay::Shape::dots)  // 3 × 3 pixels about the point's pixel
      draw.AddRectFilled(ImVec2(std::floor(p.x) - 1, std::floor(p.y) - 1), ImVec2(std::floor(p.x) + 2, std::floor(p.y) + 2),
                         o.colour);
    else
      draw.AddCircle(p, 5.0f, o.colour, 16, 2.0f);
  }
  draw.PopClipRect();
}

// One panel in [lo, hi]: the image with its axes, colour bar and title, the plane's own
// marks, the overlays, and the legend on a line along the bottom, where it hides no data.
viewer::PlotFrame draw_panel(ImDrawList& draw, ImVec2 lo, ImVec2 hi, const QuicklookPanel& p,
                             const viewer::ImagePanel& image) {
  const std::vector<viewer::LegendEntry> legend = legend_of(p);
  const float line = ImGui::GetFontSize();
  const ImVec2 plot_hi(hi.x, legend.empty() ? hi.y : std::floor(hi.y - line - kPad));

  viewer::PanelAxes axes;
  axes.title = p.title;
  const viewer::ImageExtent& e = p.extent;
  switch (p.plane) {
    case Plane::sky:
      axes.x = viewer::Axis{e.left, e.right, "x (R☉, solar west)"};
      axes.y = viewer::Axis{e.bottom, e.top, "y (R☉, solar north)"};
      axes.equal_scale = true;
      break;
    case Plane::polar:
      axes.x = viewer::Axis{e.left, e.right, "position angle (°, from north through east)", false, true};
      axes.y = viewer::Axis{e.bottom, e.top, "height (R☉)"};
      break;
    case Plane::time_height:
      axes.x = viewer::Axis{e.left, e.right, "time (UTC)", true};
      axes.y = viewer::Axis{e.bottom, e.top, "height (R☉)"};
      break;
  }
  const viewer::PlotFrame frame = viewer::draw_image_panel(draw, lo, plot_hi, image, axes);
  if (p.plane == Plane::sky) {
    viewer::draw_circle(draw, frame, 0, 0, 1.0, kLimb, 1.0f);
    if (p.radii) {
      viewer::draw_circle(draw, frame, 0, 0, p.radii->inner_rs, kOcculterMark);
      viewer::draw_circle(draw, frame, 0, 0, p.radii->outer_rs, kOcculterMark);
    }
  }
  for (const Overlay& o : p.overlays) draw_overlay(draw, frame, o);
  if (p.plane == Plane::sky) viewer::draw_north_east(draw, frame);
  // The legend just below the x axis' label, which ends as far below the data area as
  // layout_plot's bottom margin (an equal-scale frame sits higher than the margin's).
  if (!legend.empty()) {
    const float bottom_margin = plot_hi.y - viewer::layout_plot(lo, plot_hi, axes.x, axes.y).pixel_max.y;
    viewer::draw_legend_row(draw, ImVec2(frame.pixel_min.x, std::floor(frame.pixel_max.y + bottom_margin + kPad)), legend);
  }
  return frame;
}

// The image at most as large as its panel: an image larger than that is averaged down by
// the smallest whole factor that fits (cv::INTER_AREA: each texel the mean of the k × k
// image pixels under it, no data where any of them has none) rather than sampled, which
// would alias its noise; and fewer values become texels faster.
cv::Mat shown_values(const QuicklookPanel& p) {
  const PanelSize panel = panel_size(p.plane);
  const int k = std::max({1, (p.values.cols + panel.width - 1) / panel.width, (p.values.rows + panel.height - 1) / panel.height});
  if (k == 1) return p.values;
  cv::Mat smaller;
  cv::resize(p.values, smaller, cv::Size(std::max(1, p.values.cols / k), std::max(1, p.values.rows / k)), 0, 0, cv::INTER_AREA);
  return smaller;
}

}  // namespace

viewer::ColourScale sigma_scale(double limit_sigma, std::string label) {
  return viewer::ColourScale{viewer::ColourTable::grey, -limit_sigma, limit_sigma, std::move(label), kNoData};
}

viewer::DataPoint sky_point(double pa_deg, double height_rs) {
  const double pa = pa_deg * kRadPerDeg;
  return {-height_rs * std::sin(pa), height_rs * std::cos(pa)};
}

imaging::OcculterRadii polar_radii(const imaging::PolarGrid& polar) {
  imaging::OcculterRadii radii;
  radii.inner_rs = polar.height_min_rs;
  radii.outer_rs = polar.height_rs(polar.height_count - 1) + 0.5 * polar.height_step_rs;
  return radii;
}

PanelSize panel_size(Plane plane) {
  switch (plane) {
    case Plane::sky: return {640, 560};
    case Plane::polar: return {900, 460};
    case Plane::time_height: return {900, 460};
  }
  return {620, 600};
}

QuicklookPicture draw_quicklook(std::span<const QuicklookPanel> panels, std::string_view heading) {
  std::vector<viewer::ImagePanel> images;
  std::vector<viewer::Texture> textures;
  int width = 0, height = 0;
  for (std::size_t i = 0; i < panels.size(); ++i) {
    // Ids 1, 2, …: any value but the font atlas' address (viewer/headless.hpp).
    images.push_back(viewer::make_image_panel(shown_values(panels[i]), panels[i].extent, panels[i].scale,
                                              reinterpret_cast<ImTextureID>(std::uintptr_t(i + 1))));
    textures.push_back(images.back().texture);
    width += panel_size(panels[i].plane).width;
    height = std::max(height, panel_size(panels[i].plane).height);
  }
  viewer::HeadlessOptions options;
  options.warm_up_frames = 0;  // no window sizes itself to its content here: one frame suffices
  const int heading_px = heading.empty() ? 0 : int(std::ceil(options.font_pixels + 2 * kPad));
  QuicklookPicture out;
  const auto frame = [&] {
    out.frames.clear();  // each warm-up frame lays the panels out again
    ImDrawList& draw = *ImGui::GetBackgroundDrawList();
    if (!heading.empty())
      draw.AddText(ImVec2(2 * kPad, kPad), viewer::PlotStyle{}.text, heading.data(), heading.data() + heading.size());
    float x = 0.0f;
    for (std::size_t i = 0; i < panels.size(); ++i) {
      const PanelSize size = panel_size(panels[i].plane);
      out.frames.push_back(draw_panel(draw, ImVec2(x, float(heading_px)),
                                      ImVec2(x + float(size.width), float(heading_px + height)), panels[i], images[i]));
      x += float(size.width);
    }
  };
  out.picture = viewer::draw_headless(std::max(width, 1), height + heading_px, frame, textures, options);
  return out;
}

void write_quicklook(const std::filesystem::path& path, std::span<const QuicklookPanel> panels, std::string_view heading) {
  viewer::write_png(draw_quicklook(panels, heading).picture, path);
}

PolarToCartesian polar_to_cartesian(const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar) {
  PolarToCartesian remap{cv::Mat(grid.height, grid.width, CV_32FC1), cv::Mat(grid.height, grid.width, CV_32FC1)};
  for (int y = 0; y < grid.height; ++y)
    for (int x = 0; x < grid.width; ++x) {
      const cv::Point2d p(x, y);
      remap.map_x.at<float>(y, x) = float(imaging::grid_pa_deg(grid, p) / polar.pa_step_deg);
      remap.map_y.at<float>(y, x) = float((imaging::grid_height_rs(grid, p) - polar.height_min_rs) / polar.height_step_rs);
    }
  return remap;
}

cv::Mat cartesian_from_polar(const cv::Mat& polar_image, const PolarToCartesian& remap) {
  // PA wraps through north: one column of the far side appended lets the remap interpolate across.
  cv::Mat wrapped;
  cv::hconcat(polar_image, polar_image.col(0), wrapped);
  cv::Mat out;
  cv::remap(wrapped, out, remap.map_x, remap.map_y, cv::INTER_LINEAR, cv::BORDER_CONSTANT, cv::Scalar(NAN));
  return out;
}

}  // namespace occulta::app
