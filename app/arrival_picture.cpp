#include "app/arrival_picture.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

#include "app/quicklook.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {

namespace {

constexpr int kWidth = 720, kHeight = 320;                      // plot area, pixels
constexpr int kLeft = 56, kRight = 24, kTop = 34, kBottom = 44;  // margins for labels
constexpr int kBins = 48;
const cv::Scalar kBar(190, 190, 190), kAxis(255, 255, 255), kOuter(60, 170, 255), kMedian(80, 80, 255);

void text(cv::Mat& picture, const std::string& s, cv::Point at, const cv::Scalar& colour, double scale = 0.45) {
  cv::putText(picture, s, at, cv::FONT_HERSHEY_SIMPLEX, scale, colour, 1, cv::LINE_AA);
}

std::string hhmm(double utc_s) {
  const std::string iso = imaging::iso_from_utc_seconds(utc_s, 0);
  return iso.substr(5, 5) + " " + iso.substr(11, 5);  // MM-DD hh:mm
}

}  // namespace

cv::Mat arrival_histogram(const fit::TargetArrival& a, double boundary_utc_s) {
  cv::Mat picture(kTop + kHeight + kBottom, kLeft + kWidth + kRight, CV_8UC3, cv::Scalar::all(0));
  char caption[256];
  if (a.hits == 0) {
    std::snprintf(caption, sizeof caption, "%s: no member of %d reaches it", a.target.name.c_str(), a.members);
    text(picture, caption, {kLeft, kTop + kHeight / 2}, kAxis, 0.6);
    return with_caption(picture, std::string(caption));
  }
  // Hours after the boundary time; the axis spans the hits' range, widened to whole hours.
  const std::vector<double>& times = a.times_utc_s;  // sorted
  const double h0 = std::floor((times.front() - boundary_utc_s) / 3600.0);
  const double h1 = std::max(h0 + 1.0, std::ceil((times.back() - boundary_utc_s) / 3600.0));
  std::vector<int> counts(kBins, 0);
  for (const double t : times) {
    const double h = (t - boundary_utc_s) / 3600.0;
    counts[std::clamp(static_cast<int>((h - h0) / (h1 - h0) * kBins), 0, kBins - 1)]++;
  }
  const int peak = *std::max_element(counts.begin(), counts.end());
  const auto x_of = [&](double hours) { return kLeft + static_cast<int>(std::lround((hours - h0) / (h1 - h0) * kWidth)); };
  const int base = kTop + kHeight;
  for (int i = 0; i < kBins; ++i) {
    const int x0 = kLeft + kWidth * i / kBins, x1 = kLeft + kWidth * (i + 1) / kBins - 1;
    const int y = base - static_cast<int>(std::lround(static_cast<double>(counts[i]) / peak * (kHeight - 10)));
    if (counts[i] > 0) cv::rectangle(picture, {x0, y}, {x1, base}, kBar, cv::FILLED);
  }
  // Axes, with about eight hour ticks.
  cv::line(picture, {kLeft, base}, {kLeft + kWidth, base}, kAxis);
  cv::line(picture, {kLeft, kTop}, {kLeft, base}, kAxis);
  // The tick count is an integer bounded here, whatever span the times have: a loop on
  // `h += step` never ended for a span of 10¹⁵ h (the step vanished beside h).
  double step = 1.0;
  for (const double s : {1.0, 2.0, 3.0, 6.0, 12.0, 24.0, 48.0, 96.0, 192.0, 384.0, 768.0}) {
    step = s;
    if ((h1 - h0) / s <= 10.0) break;
  }
  while ((h1 - h0) / step > 10.0 && std::isfinite(step)) step *= 2.0;
  const double first_tick = std::ceil(h0 / step) * step;
  const double ticks = std::floor((h1 + 1e-9 - first_tick) / step);
  for (int k = 0; std::isfinite(ticks) && k <= std::min(ticks, 12.0); ++k) {
    const double h = first_tick + k * step;
    const int x = x_of(h);
    cv::line(picture, {x, base}, {x, base + 5}, kAxis);
    char label[32];
    std::snprintf(label, sizeof label, "%+.0f h", h);
    text(picture, label, {x - 16, base + 20}, kAxis, 0.4);
  }
  std::snprintf(caption, sizeof caption, "%d", peak);
  text(picture, caption, {6, kTop + 14}, kAxis, 0.4);
  text(picture, "hours after the boundary time " + hhmm(boundary_utc_s) + " UTC", {kLeft + kWidth / 2 - 150, base + 38},
       kAxis, 0.42);
  // The percentiles.
  const struct {
    double utc_s;
    const char* name;
    cv::Scalar colour;
  } marks[] = {{*a.time_p05, "p05", kOuter}, {*a.time_p50, "p50", kMedian}, {*a.time_p95, "p95", kOuter}};
  for (const auto& m : marks) {
    const int x = x_of((m.utc_s - boundary_utc_s) / 3600.0);
    cv::line(picture, {x, kTop}, {x, base}, m.colour, 2);
    text(picture, m.name, {x + 3, kTop + 12}, m.colour, 0.42);
  }
  std::snprintf(caption, sizeof caption, "%s: hit %.1f%% of %d, p05 %s  p50 %s  p95 %s UTC, speed p50 %.0f km/s",
                a.target.name.c_str(), 100.0 * a.hit_probability, a.members, hhmm(*a.time_p05).c_str(),
                hhmm(*a.time_p50).c_str(), hhmm(*a.time_p95).c_str(), *a.speed_p50);
  return with_caption(picture, caption);
}

void write_arrival_histogram(const std::filesystem::path& path, const fit::TargetArrival& arrival,
                             double boundary_utc_s) {
  // Encoded in memory and written whole or not at all, like occulta's other outputs.
  std::vector<uchar> bytes;
  if (!cv::imencode(".png", arrival_histogram(arrival, boundary_utc_s), bytes))
    throw imaging::InputError(path.string(), "cannot be encoded as PNG");
  fit::write_text_file(path, std::string(bytes.begin(), bytes.end()));
}

}  // namespace occulta::app
