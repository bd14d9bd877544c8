// imaging/polar.cpp — (PA, height) tables, unwrapping, NRGF.
#include "imaging/polar.hpp"

#include <cmath>
#include <cstdint>
#include <limits>
#include <vector>

#include <opencv2/imgproc.hpp>

#include "imaging/constants.hpp"

namespace occulta::imaging {

PolarGrid make_polar_grid(const RegisteredGrid& grid, double inner_rs, double outer_rs, double pa_step_deg,
                          double height_step_rs) {
  CV_Assert(pa_step_deg > 0.0 && outer_rs > inner_rs && grid.rs_per_px > 0.0);
  PolarGrid polar;
  polar.pa_count = std::max(1, int(std::lround(360.0 / pa_step_deg)));
  polar.pa_step_deg = 360.0 / polar.pa_count;
  polar.height_step_rs = height_step_rs > 0.0 ? height_step_rs : grid.rs_per_px;
  polar.height_min_rs = inner_rs;
  polar.height_count = int(std::floor((outer_rs - inner_rs) / polar.height_step_rs)) + 1;
  return polar;
}

cv::Point2d grid_pixel(const RegisteredGrid& grid, double pa_deg, double height_rs) {
  // PA counter-clockwise from north (+y) through east (−x): see polar.hpp.
  const double pa = pa_deg * kRadPerDeg, r = height_rs / grid.rs_per_px;
  return {grid.sun_center_px.x() - r * std::sin(pa), grid.sun_center_px.y() + r * std::cos(pa)};
}

double grid_pa_deg(const RegisteredGrid& grid, cv::Point2d pixel) {
  const double east = -(pixel.x - grid.sun_center_px.x()), north = pixel.y - grid.sun_center_px.y();
  double pa = std::atan2(east, north) * kDegPerRad;
  if (pa < 0.0) pa += 360.0;
  return pa >= 360.0 ? 0.0 : pa;
}

double grid_height_rs(const RegisteredGrid& grid, cv::Point2d pixel) {
  return std::hypot(pixel.x - grid.sun_center_px.x(), pixel.y - grid.sun_center_px.y()) * grid.rs_per_px;
}

namespace {

// Tables for polar samples at grid pixels `points` read from image pixel A · (x, y, 1), into
// `maps` (its fixed-point tables' buffers kept when their size and type match). `map`
// holds the float tables before cv::convertMaps (reallocated only when its size or type
// differ). Each grid pixel is bilinear.hpp's x = cx − ρ s, y = cy + ρ k, in double, then the
// affine in double: the same operations as bilinear::sample_affine (this file is compiled
// without fused multiply-adds, as that one is).
void polar_tables(const RegisteredGrid& grid, const PolarGrid& polar, const bilinear::CirclePoints& points,
                  const cv::Matx23d& a, cv::Size source, cv::Mat& map, PolarMaps& maps) {
  maps.grid = grid;
  maps.polar = polar;
  maps.source = source;
  maps.drop.release();
  map.create(points.rows(), points.cols(), CV_32FC2);
  for (int i = 0; i < points.rows(); ++i) {
    const double rho = points.radius[std::size_t(i)];
    auto* m = map.ptr<cv::Vec2f>(i);
    for (int j = 0; j < points.cols(); ++j) {
      const double x = points.cx - rho * points.sin[std::size_t(j)], y = points.cy + rho * points.cos[std::size_t(j)];
      m[j] = {float(a(0, 0) * x + a(0, 1) * y + a(0, 2)), float(a(1, 0) * x + a(1, 1) * y + a(1, 2))};
    }
  }
  cv::convertMaps(map, cv::noArray(), maps.map_xy, maps.map_frac, CV_16SC2);
}

PolarMaps polar_tables(const RegisteredGrid& grid, const PolarGrid& polar, const bilinear::CirclePoints& points,
                       const cv::Matx23d& a, cv::Size source, cv::Mat& map) {
  PolarMaps maps;
  polar_tables(grid, polar, points, a, source, map, maps);
  return maps;
}

}  // namespace

bilinear::CirclePoints polar_points(const RegisteredGrid& grid, const PolarGrid& polar) {
  bilinear::CirclePoints points;
  points.cx = grid.sun_center_px.x();
  points.cy = grid.sun_center_px.y();
  for (int i = 0; i < polar.height_count; ++i) points.radius.push_back(polar.height_rs(i) / grid.rs_per_px);
  for (int j = 0; j < polar.pa_count; ++j) {
    points.sin.push_back(std::sin(polar.pa_deg(j) * kRadPerDeg));
    points.cos.push_back(std::cos(polar.pa_deg(j) * kRadPerDeg));
  }
  return points;
}

PolarMaps make_polar_maps(const RegisteredGrid& grid, const PolarGrid& polar) {
  cv::Mat map;
  return polar_tables(grid, polar, polar_points(grid, polar), cv::Matx23d(1, 0, 0, 0, 1, 0),
                      cv::Size(grid.width, grid.height), map);
}

PolarSampling make_polar_sampling(const RegisteredGrid& grid, const PolarGrid& polar, const cv::Mat& drop_on_grid) {
  PolarSampling sampling{grid, polar, polar_points(grid, polar), {}};
  if (!drop_on_grid.empty()) {
    // The mask unwrapped the way a masked registered frame is: NaN on the masked grid
    // pixels, through the grid's own tables (or bilinear.hpp's pass, the same bits with
    // no tables: this is on the way to a view's first frame), so the same samples come
    // out NaN.
    cv::Mat pattern(grid.height, grid.width, CV_32FC1, cv::Scalar(0.0)), unwrapped, map;
    pattern.setTo(std::numeric_limits<double>::quiet_NaN(), drop_on_grid);
    const cv::Matx23d identity(1, 0, 0, 0, 1, 0);
    if (bilinear::available(pattern))
      bilinear::sample_affine(pattern, sampling.points, identity, {}, unwrapped);
    else
      to_polar(pattern, polar_tables(grid, polar, sampling.points, identity, cv::Size(grid.width, grid.height), map),
               unwrapped);
    // NaN tested sample by sample: cv::compare(CMP_NE) of a frame with itself flags NaN in
    // its scalar tail only (OpenCV 4.6's vector compare is an ordered one), which left this
    // mask all but empty until 2026-12 (a 720-column grid: 0 of its 4 796 NaN samples).
    sampling.drop.create(unwrapped.size(), CV_8UC1);
    for (int i = 0; i < unwrapped.rows; ++i) {
      const float* u = unwrapped.ptr<float>(i);
      std::uint8_t* d = sampling.drop.ptr<std::uint8_t>(i);
      for (int j = 0; j < unwrapped.cols; ++j) d[j] = std::isnan(u[j]) ? 255 : 0;
    }
  }
  return sampling;
}

void make_polar_maps(const Registration& registration, const PolarSampling& sampling, cv::Mat& scratch,
                     PolarMaps& maps) {
  polar_tables(sampling.grid, sampling.polar, sampling.points, registration.grid_to_source,
               cv::Size(registration.source.width, registration.source.height), scratch, maps);
  maps.drop = sampling.drop;
}

PolarMaps make_polar_maps(const Registration& registration, const PolarSampling& sampling) {
  cv::Mat scratch;
  PolarMaps maps;
  make_polar_maps(registration, sampling, scratch, maps);
  return maps;
}

PolarMaps make_polar_maps(const Registration& registration, const RegisteredGrid& grid, const PolarGrid& polar) {
  return make_polar_maps(registration, make_polar_sampling(grid, polar, registration.drop));
}

void to_polar(const cv::Mat& image, const PolarMaps& maps, cv::Mat& out) {
  CV_Assert(image.type() == CV_32FC1 && image.size() == maps.source);
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  out.create(maps.map_xy.size(), CV_32FC1);
  cv::remap(image, out, maps.map_xy, maps.map_frac, cv::INTER_LINEAR, cv::BORDER_CONSTANT, cv::Scalar(kNaN));
  if (!maps.drop.empty()) out.setTo(kNaN, maps.drop);
}

cv::Mat nrgf(const cv::Mat& polar) {
  CV_Assert(polar.type() == CV_32FC1);
  cv::Mat out(polar.size(), CV_32FC1);
  constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();
  for (int i = 0; i < polar.rows; ++i) {
    const float* p = polar.ptr<float>(i);
    float* o = out.ptr<float>(i);
    double sum = 0.0, sum2 = 0.0;
    int n = 0;
    for (int j = 0; j < polar.cols; ++j)
      if (std::isfinite(p[j])) {
        sum += p[j];
        ++n;
      }
    const double mean = n > 0 ? sum / n : 0.0;
    for (int j = 0; j < polar.cols; ++j)
      if (std::isfinite(p[j])) sum2 += (p[j] - mean) * (p[j] - mean);
    const double sd = n > 1 ? std::sqrt(sum2 / (n - 1)) : 0.0;
    for (int j = 0; j < polar.cols; ++j)
      o[j] = (sd > 0.0 && std::isfinite(p[j])) ? float((p[j] - mean) / sd) : kNaN;
  }
  return out;
}

}  // namespace occulta::imaging
