// viewer/stereo.cpp — see stereo.hpp.
#include "viewer/stereo.hpp"

#include <cmath>
#include <algorithm>
#include <deque>
#include <numbers>

#include "imaging/constants.hpp"

namespace occulta::viewer {
namespace {

// The grid's WCS for an observer (wcslib set-up is the costly part: remembered).
const imaging::ImageGeometry& grid_wcs(const imaging::RegisteredGrid& grid, const imaging::Observer& observer) {
  struct Entry {
    imaging::RegisteredGrid grid;
    imaging::Observer observer;
    imaging::ImageGeometry geometry;
  };
  thread_local std::deque<Entry> remembered;
  for (const Entry& e : remembered)
    if (e.grid.width == grid.width && e.grid.height == grid.height && e.grid.sun_center_px == grid.sun_center_px &&
        e.grid.rs_per_px == grid.rs_per_px && e.observer.lon_rad == observer.lon_rad &&
        e.observer.lat_rad == observer.lat_rad && e.observer.dist_km == observer.dist_km)
      return e.geometry;
  remembered.push_front({grid, observer, imaging::grid_geometry(grid, observer)});
  if (remembered.size() > 16) remembered.pop_back();
  return remembered.front().geometry;
}

}  // namespace

std::optional<LineOfSight> line_of_sight(const imaging::RegisteredGrid& grid, const imaging::Observer& observer,
                                         double x_rs, double y_rs) {
  const Eigen::Vector2d pixel(grid.sun_center_px.x() + x_rs / grid.rs_per_px, grid.sun_center_px.y() + y_rs / grid.rs_per_px);
  const Eigen::Vector2d hpc = imaging::hpc_from_pixel(grid_wcs(grid, observer), pixel);
  if (!hpc.allFinite()) return std::nullopt;
  // Two points along the line of sight (Thompson 2006 eq. 15, through heeq_from_hpc).
  const Eigen::Vector3d near = imaging::heeq_from_hpc(observer, hpc, 0.0);
  const Eigen::Vector3d far = imaging::heeq_from_hpc(observer, hpc, observer.dist_km);
  return LineOfSight{near, (far - near).normalized()};
}

std::optional<Eigen::Vector2d> sky_position(const imaging::RegisteredGrid& grid, const imaging::Observer& observer,
                                            const Eigen::Vector3d& heeq_p_km) {
  // In front of the observer: a positive component along its line toward Sun centre.
  const Eigen::Vector3d obs = observer.heeq_p_obs_km();
  if ((heeq_p_km - obs).dot(-obs) <= 0.0) return std::nullopt;
  const Eigen::Vector2d pixel = imaging::pixel_from_hpc(grid_wcs(grid, observer), imaging::hpc_from_heeq(observer, heeq_p_km));
  if (!pixel.allFinite()) return std::nullopt;
  return Eigen::Vector2d((pixel.x() - grid.sun_center_px.x()) * grid.rs_per_px,
                         (pixel.y() - grid.sun_center_px.y()) * grid.rs_per_px);
}

std::vector<Eigen::Vector2d> epipolar_line(const LineOfSight& seen, const imaging::RegisteredGrid& grid,
                                           const imaging::Observer& observer, double reach_rs, int samples) {
  // The line's points within reach of Sun centre: |o + s ŵ|² ≤ R², s = s₀ ± √(R² − d²).
  const double reach_km = reach_rs * kSolarRadiusKm;
  const double s0 = -seen.heeq_p_obs_km.dot(seen.heeq_direction);
  const double d2 = (seen.heeq_p_obs_km + s0 * seen.heeq_direction).squaredNorm();
  std::vector<Eigen::Vector2d> line;
  if (d2 >= reach_km * reach_km || samples < 2) return line;
  const double half = std::sqrt(reach_km * reach_km - d2);
  const double from = std::max(0.0, s0 - half), to = s0 + half;
  for (int i = 0; i < samples; ++i) {
    const double s = from + (to - from) * i / (samples - 1);
    if (const auto p = sky_position(grid, observer, seen.heeq_p_obs_km + s * seen.heeq_direction)) line.push_back(*p);
  }
  return line;
}

std::optional<Triangulated> triangulate(const LineOfSight& a, const LineOfSight& b) {
  // Closest points of two lines p = oa + s ŵa, q = ob + t ŵb (common practice: the
  // normal equations of min |p − q|²).
  const Eigen::Vector3d w0 = a.heeq_p_obs_km - b.heeq_p_obs_km;
  const double A = a.heeq_direction.dot(a.heeq_direction), B = a.heeq_direction.dot(b.heeq_direction),
               C = b.heeq_direction.dot(b.heeq_direction), D = a.heeq_direction.dot(w0), E = b.heeq_direction.dot(w0);
  const double det = A * C - B * B;
  if (det < 1e-10) return std::nullopt;
  const double s = (B * E - C * D) / det, t = (A * E - B * D) / det;
  const Eigen::Vector3d p = a.heeq_p_obs_km + s * a.heeq_direction, q = b.heeq_p_obs_km + t * b.heeq_direction;
  Triangulated out;
  out.heeq_p_rs = 0.5 * (p + q) / kSolarRadiusKm;
  out.distance_rs = out.heeq_p_rs.norm();
  out.lon_deg = std::atan2(out.heeq_p_rs.y(), out.heeq_p_rs.x()) * 180.0 / std::numbers::pi;
  out.lat_deg = std::asin(out.heeq_p_rs.z() / out.distance_rs) * 180.0 / std::numbers::pi;
  out.miss_rs = (p - q).norm() / kSolarRadiusKm;
  out.angle_deg = std::acos(std::clamp(B, -1.0, 1.0)) * 180.0 / std::numbers::pi;
  return out;
}

}  // namespace occulta::viewer

namespace occulta::viewer {

std::optional<LineOfSight> line_of_sight(const SkyMark& mark, const std::vector<ViewPictures>& views) {
  for (const ViewPictures& v : views) {
    if (v.name != mark.view) continue;
    const int k = nearest_frame(v, mark.utc_s);
    if (k < 0) return std::nullopt;
    return line_of_sight(v.grid, v.frames[std::size_t(k)].observer, mark.x_rs, mark.y_rs);
  }
  return std::nullopt;
}

std::optional<TiePoint> tie_marks(const SkyMark& a, const SkyMark& b, const std::vector<ViewPictures>& views) {
  if (a.view == b.view) return std::nullopt;
  const auto la = line_of_sight(a, views), lb = line_of_sight(b, views);
  if (!la || !lb) return std::nullopt;
  const auto met = triangulate(*la, *lb);
  if (!met) return std::nullopt;
  return TiePoint{a, b, met->lon_deg, met->lat_deg, met->distance_rs, met->miss_rs};
}

}  // namespace occulta::viewer
