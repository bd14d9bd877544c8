// viewer/height_time.cpp — see height_time.hpp.
#include "viewer/height_time.hpp"

#include <cmath>
#include <numbers>

#include "fit/measurement.hpp"
#include "imaging/constants.hpp"
#include "viewer/cme_list.hpp"

namespace occulta::viewer {

std::optional<double> height_time_pa(const WindowState& state, const std::string& view) {
  if (std::isfinite(state.height_time_pa_deg)) return state.height_time_pa_deg;
  // The shown CME's automatic track in this view (viewer/cme_list.hpp): where it was followed.
  if (const fit::ViewMeasurement* seen = shown_sighting(state, view);
      seen && !seen->by_analyst && std::isfinite(seen->track_pa_deg))
    return seen->track_pa_deg;
  double s = 0.0, c = 0.0;
  int n = 0;
  for (const MarkedPoint& p : state.points)
    if (p.view == view) s += std::sin(p.pa_deg * std::numbers::pi / 180.0), c += std::cos(p.pa_deg * std::numbers::pi / 180.0), ++n;
  if (n == 0) return std::nullopt;
  return pa_deg_at(-s, c);  // atan2(s, c) as a PA in [0, 360)
}

cv::Mat time_height_map(const ViewPictures& view, double pa_deg, double band_deg) {
  const imaging::PolarGrid& g = view.polar;
  cv::Mat map(g.height_count, int(view.frames.size()), CV_32F, cv::Scalar(std::numeric_limits<float>::quiet_NaN()));
  const int reach = std::max(0, int(std::lround(band_deg / g.pa_step_deg)));
  const int centre = int(std::lround(pa_deg / g.pa_step_deg));
  for (int k = 0; k < map.cols; ++k) {
    const cv::Mat& polar = view.frames[std::size_t(k)].polar;
    if (polar.rows != g.height_count || polar.cols != g.pa_count) continue;
    for (int r = 0; r < g.height_count; ++r) {
      double sum = 0.0;
      int n = 0;
      for (int d = -reach; d <= reach; ++d) {
        const float v = polar.at<float>(r, ((centre + d) % g.pa_count + g.pa_count) % g.pa_count);
        if (std::isfinite(v)) sum += v, ++n;
      }
      if (n > 0) map.at<float>(r, k) = float(sum / n);
    }
  }
  return map;
}

ImageExtent time_height_extent(const ViewPictures& view) {
  const std::size_t n = view.frames.size();
  const double first = n ? view.frames.front().utc_s : 0.0, last = n ? view.frames.back().utc_s : 1.0;
  const double step = n > 1 ? (last - first) / double(n - 1) : 600.0;
  return {first - 0.5 * step, last + 0.5 * step, view.polar.height_rs(0) - 0.5 * view.polar.height_step_rs,
          view.polar.height_rs(view.polar.height_count - 1) + 0.5 * view.polar.height_step_rs};
}

std::optional<fit::HeightTimeFit> height_time_fit(const WindowState& state, const ViewPictures& view) {
  std::vector<fit::HeightTimePoint> points;
  for (const MarkedPoint& p : state.points)
    if (p.view == view.name) points.push_back({p.utc_s, p.height_rs, 0.0});
  if (points.size() < 3) return std::nullopt;
  const double resolution_rs = view.polar.height_step_rs / std::sqrt(12.0);
  fit::HeightTimeFit chosen = fit::choose_height_time_model(points, true, 2.0, resolution_rs).chosen;
  if (chosen.status != fit::FitStatus::ok) return std::nullopt;
  return chosen;
}

double height_sigma_rs(const fit::HeightTimeFit& fit, double utc_s) {
  const double tau = utc_s - fit.law.ref_time_s;
  const Eigen::Vector3d j(1.0, tau / kSolarRadiusKm, 0.5 * tau * tau / (1000.0 * kSolarRadiusKm));
  return std::sqrt(std::max(0.0, j.dot(fit.covariance * j)));
}

}  // namespace occulta::viewer
