// imaging/front_ridge.cpp — the bright ridge behind a CME's leading edge (front_ridge.hpp).
#include "imaging/front_ridge.hpp"

#include <algorithm>
#include <cmath>

#include <opencv2/imgproc.hpp>

namespace occulta::imaging {

std::vector<RidgePoint> front_ridge(const PolarSequence& s, const Front& front, const RidgeOptions& o) {
  std::vector<RidgePoint> out;
  if (!front.found) return out;
  const PolarGrid& g = s.polar;
  for (int f = std::max(0, front.onset_frame); f <= front.last_frame && f < int(s.frames.size()); ++f) {
    if (f >= int(front.leading_edge_rs.size())) break;
    // 3 × 3 mean over the pixels with data: blur the zero-filled values and the data mask.
    const cv::Mat& frame = s.frames[static_cast<std::size_t>(f)];
    cv::Mat valid = frame == frame;  // NaN ≠ NaN
    cv::Mat values = frame.clone();
    values.setTo(0.0f, ~valid);
    cv::Mat weight;
    valid.convertTo(weight, CV_32F, 1.0 / 255.0);
    cv::blur(values, values, cv::Size(3, 3), cv::Point(-1, -1), cv::BORDER_REPLICATE);
    cv::blur(weight, weight, cv::Size(3, 3), cv::Point(-1, -1), cv::BORDER_REPLICATE);
    const auto smoothed = [&](int row, int col) {
      const float w = weight.at<float>(row, col);
      return w > 0.3f ? values.at<float>(row, col) / w : std::numeric_limits<float>::quiet_NaN();
    };
    std::vector<RidgePoint> frame_points;
    for (int c = 0; c < g.pa_count; ++c) {
      const float edge = front.leading_edge_rs[static_cast<std::size_t>(f)][static_cast<std::size_t>(c)];
      if (!std::isfinite(edge)) continue;
      const int top = std::min(g.height_count - 1, int(std::lround((edge - g.height_min_rs) / g.height_step_rs)));
      const int depth = std::max(2, int(std::lround(o.ridge_depth_fraction * edge / g.height_step_rs)));
      int best = -1;
      float best_v = -std::numeric_limits<float>::infinity();
      for (int r = top; r >= std::max(0, top - depth); --r) {
        const float v = smoothed(r, c);
        if (std::isfinite(v) && v > best_v) best_v = v, best = r;
      }
      if (best < 0) continue;
      double row = best;
      if (best > 0 && best < g.height_count - 1) {  // parabola through the peak and its neighbours
        const float a = smoothed(best - 1, c), b = smoothed(best + 1, c);
        const double curvature = a - 2.0 * best_v + b;
        if (std::isfinite(a) && std::isfinite(b) && curvature < 0.0)
          row += std::clamp(0.5 * (a - b) / curvature, -0.5, 0.5);
      }
      frame_points.push_back({f, s.utc_s[static_cast<std::size_t>(f)], g.pa_deg(c), g.height_rs(0) + row * g.height_step_rs,
                              best_v});
    }
    if (frame_points.empty()) continue;
    // Along PA from each end of the span inward: a column counts once its ridge reaches
    // flank_fraction × the brightest ridge within flank_window_deg further in — the
    // half-maximum edge of the front in PA, as the leading edge is taken in height.
    std::sort(frame_points.begin(), frame_points.end(), [&](const RidgePoint& a, const RidgePoint& b) {
      return std::fmod(a.pa_deg - front.pa_from_deg + 720.0, 360.0) < std::fmod(b.pa_deg - front.pa_from_deg + 720.0, 360.0);
    });
    const int n = int(frame_points.size());
    const int window = std::max(1, int(std::lround(o.flank_window_deg / g.pa_step_deg)));
    const auto inner_max = [&](int i, int step) {
      double m = 0.0;
      for (int k = 1; k <= window && i + k * step >= 0 && i + k * step < n; ++k)
        m = std::max(m, frame_points[static_cast<std::size_t>(i + k * step)].value);
      return m;
    };
    int first = 0, last = n - 1;
    while (first < last && frame_points[static_cast<std::size_t>(first)].value < o.flank_fraction * inner_max(first, 1)) ++first;
    while (last > first && frame_points[static_cast<std::size_t>(last)].value < o.flank_fraction * inner_max(last, -1)) --last;
    std::vector<double> peaks;
    for (const RidgePoint& p : frame_points) peaks.push_back(p.value);
    std::nth_element(peaks.begin(), peaks.begin() + peaks.size() / 2, peaks.end());
    const double floor = o.min_relative_peak * peaks[peaks.size() / 2];
    for (int i = first; i <= last; ++i)
      if (frame_points[static_cast<std::size_t>(i)].value >= floor) out.push_back(frame_points[static_cast<std::size_t>(i)]);
  }
  return out;
}

}  // namespace occulta::imaging
