// imaging/timeheight.cpp — band profiles, time–height and time–PA maps, time axis.
#include "imaging/timeheight.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace occulta::imaging {

namespace {

constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();

float median_of(std::vector<float>& values) {
  if (values.empty()) return kNaN;
  const auto mid = values.begin() + values.size() / 2;
  std::nth_element(values.begin(), mid, values.end());
  if (values.size() % 2 == 1) return *mid;
  return 0.5f * (*mid + *std::max_element(values.begin(), mid));
}

// Columns whose PA lies in the band, wrapping through 0/360.
std::vector<int> band_columns(const PolarGrid& grid, double pa_deg, double half_width_deg) {
  std::vector<int> columns;
  for (int j = 0; j < grid.pa_count; ++j) {
    const double d = std::remainder(grid.pa_deg(j) - pa_deg, 360.0);  // in [−180, 180]
    if (std::abs(d) <= half_width_deg + 1e-9) columns.push_back(j);
  }
  return columns;
}

}  // namespace

std::vector<float> band_profile(const cv::Mat& polar, const PolarGrid& grid, double pa_deg, double half_width_deg) {
  CV_Assert(polar.type() == CV_32FC1 && polar.rows == grid.height_count && polar.cols == grid.pa_count);
  const std::vector<int> columns = band_columns(grid, pa_deg, half_width_deg);
  std::vector<float> profile(polar.rows), values;
  for (int i = 0; i < polar.rows; ++i) {
    values.clear();
    const float* p = polar.ptr<float>(i);
    for (int j : columns)
      if (std::isfinite(p[j])) values.push_back(p[j]);
    profile[i] = median_of(values);
  }
  return profile;
}

std::vector<float> ring_profile(const cv::Mat& polar, const PolarGrid& grid, double height_rs, double half_band_rs) {
  CV_Assert(polar.type() == CV_32FC1 && polar.rows == grid.height_count && polar.cols == grid.pa_count);
  std::vector<int> rows;
  for (int i = 0; i < grid.height_count; ++i)
    if (std::abs(grid.height_rs(i) - height_rs) <= half_band_rs + 1e-9) rows.push_back(i);
  std::vector<float> profile(polar.cols), values;
  for (int j = 0; j < polar.cols; ++j) {
    values.clear();
    for (int i : rows) {
      const float v = polar.ptr<float>(i)[j];
      if (std::isfinite(v)) values.push_back(v);
    }
    profile[j] = median_of(values);
  }
  return profile;
}

TimeMap time_height(const PolarSequence& sequence, double pa_deg, double half_width_deg) {
  return time_height(sequence.polar, sequence.utc_s, [&](std::size_t k) { return sequence.frames[k]; }, pa_deg,
                     half_width_deg);
}

TimeMap time_height(const PolarGrid& polar, const std::vector<double>& utc_s,
                    const std::function<cv::Mat(std::size_t)>& frame, double pa_deg, double half_width_deg) {
  TimeMap map;
  map.utc_s = utc_s;
  map.axis_start = polar.height_min_rs;
  map.axis_step = polar.height_step_rs;
  map.values.create(polar.height_count, int(utc_s.size()), CV_32FC1);
  // Frames in parallel (each its own column): `frame` may read each from a file.
  cv::parallel_for_(cv::Range(0, int(utc_s.size())), [&](const cv::Range& frames) {
    for (int k = frames.start; k < frames.end; ++k) {
      const auto profile = band_profile(frame(std::size_t(k)), polar, pa_deg, half_width_deg);
      for (int i = 0; i < map.values.rows; ++i) map.values.at<float>(i, k) = profile[i];
    }
  });
  return map;
}

TimeMap time_pa(const PolarSequence& sequence, double height_rs, double half_band_rs) {
  TimeMap map;
  map.utc_s = sequence.utc_s;
  map.axis_start = 0.0;
  map.axis_step = sequence.polar.pa_step_deg;
  map.values.create(sequence.polar.pa_count, int(sequence.frames.size()), CV_32FC1);
  for (std::size_t k = 0; k < sequence.frames.size(); ++k) {
    const auto profile = ring_profile(sequence.frames[k], sequence.polar, height_rs, half_band_rs);
    for (int j = 0; j < map.values.rows; ++j) map.values.at<float>(j, int(k)) = profile[j];
  }
  return map;
}

cv::Mat render_on_time_axis(const TimeMap& map, double t_start, double t_end, int columns, double max_gap_s) {
  CV_Assert(columns >= 1 && t_end > t_start && int(map.utc_s.size()) == map.values.cols);
  cv::Mat out(map.values.rows, columns, CV_32FC1, cv::Scalar(kNaN));
  if (map.utc_s.empty()) return out;
  std::vector<double> times = map.utc_s;
  if (max_gap_s <= 0.0) {
    std::vector<double> steps;
    for (std::size_t k = 1; k < times.size(); ++k) steps.push_back(times[k] - times[k - 1]);
    if (steps.empty()) {
      max_gap_s = t_end - t_start;
    } else {
      std::nth_element(steps.begin(), steps.begin() + steps.size() / 2, steps.end());
      max_gap_s = 1.5 * steps[steps.size() / 2];
    }
  }
  const double step = (t_end - t_start) / columns;
  for (int c = 0; c < columns; ++c) {
    const double t = t_start + (c + 0.5) * step;  // column centre
    // Nearest frame in time (times are sorted, oldest first).
    const auto after = std::lower_bound(times.begin(), times.end(), t);
    std::size_t best = after == times.end() ? times.size() - 1 : std::size_t(after - times.begin());
    if (after != times.begin() && (after == times.end() || t - *(after - 1) < *after - t)) best = std::size_t(after - times.begin()) - 1;
    if (std::abs(times[best] - t) > 0.5 * max_gap_s) continue;
    map.values.col(int(best)).copyTo(out.col(c));
  }
  return out;
}

}  // namespace occulta::imaging
