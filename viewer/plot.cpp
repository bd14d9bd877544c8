// viewer/plot.cpp — the mapping of a PlotFrame and the ticks of its axes (plot.hpp);
// the drawing is in plot_draw.cpp.
#include "viewer/plot.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "imaging/time.hpp"

namespace occulta::viewer {

ImVec2 PlotFrame::to_pixel(double data_x, double data_y) const {
  const double fx = (data_x - x.lo) / (x.hi - x.lo);
  const double fy = (data_y - y.lo) / (y.hi - y.lo);
  return {static_cast<float>(pixel_min.x + fx * (static_cast<double>(pixel_max.x) - pixel_min.x)),
          static_cast<float>(pixel_max.y - fy * (static_cast<double>(pixel_max.y) - pixel_min.y))};
}

DataPoint PlotFrame::to_data(ImVec2 pixel) const {
  const double fx = (static_cast<double>(pixel.x) - pixel_min.x) / (static_cast<double>(pixel_max.x) - pixel_min.x);
  const double fy = (static_cast<double>(pixel_max.y) - pixel.y) / (static_cast<double>(pixel_max.y) - pixel_min.y);
  return {x.lo + fx * (x.hi - x.lo), y.lo + fy * (y.hi - y.lo)};
}

// ---- Heckbert (1990) -------------------------------------------------------------------

double nice_number(double x, bool round) {
  const double exponent = std::floor(std::log10(x));
  const double power = std::pow(10.0, exponent);
  const double f = x / power;  // in [1, 10)
  double nice = 10.0;
  if (round) {
    nice = f < 1.5 ? 1.0 : f < 3.0 ? 2.0 : f < 7.0 ? 5.0 : 10.0;
  } else {
    nice = f <= 1.0 ? 1.0 : f <= 2.0 ? 2.0 : f <= 5.0 ? 5.0 : 10.0;
  }
  return nice * power;
}

double nice_step(double lo, double hi, int about) {
  const double range = nice_number(std::abs(hi - lo), false);
  return nice_number(range / std::max(1, about - 1), true);
}

namespace {

// The whole multiples k·step inside [lo, hi] (lo < hi) as k: a tick a rounding error
// outside an edge still counts, and each value is k·step (no accumulated sum).
// No ticks (an empty range) when there would be more than kMostTicks, or when k is so
// large that k + 1 == k in double: the loops over k then always end (issue 13: no loop
// runs on an input-controlled value without a bound).
std::pair<double, double> multiples(double lo, double hi, double step) {
  constexpr double kSlack = 1e-9, kMostTicks = 1000.0;
  const double k0 = std::ceil(lo / step - kSlack), k1 = std::floor(hi / step + kSlack);
  if (!(k1 - k0 <= kMostTicks) || k0 + 1.0 == k0 || k1 + 1.0 == k1) return {1.0, 0.0};
  return {k0, k1};
}

}  // namespace

std::vector<double> nice_ticks(double lo, double hi, int about) {
  const double step = nice_step(lo, hi, about);
  if (!std::isfinite(step) || step <= 0.0) return {};  // lo = hi, or not numbers: no axis
  const auto [k0, k1] = multiples(std::min(lo, hi), std::max(lo, hi), step);
  std::vector<double> ticks;
  for (double k = k0; k <= k1; k += 1.0) ticks.push_back(k == 0.0 ? 0.0 : k * step);
  return ticks;
}

DataPoint nice_range(double lo, double hi, int about) {
  const double step = nice_step(lo, hi, about);
  return {std::floor(lo / step) * step, std::ceil(hi / step) * step};
}

std::vector<Tick> value_ticks(double lo, double hi, int about) {
  const double step = nice_step(lo, hi, about);
  if (!std::isfinite(step) || step <= 0.0) return {};
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
  std::vector<Tick> ticks;
  for (const double v : nice_ticks(lo, hi, about)) {
    char text[64];
    std::snprintf(text, sizeof text, "%.*f", decimals, std::abs(v));
    ticks.push_back({v, (v < 0.0 ? "\u2212" : "") + std::string(text), {}});
  }
  return ticks;
}

// ---- UTC -------------------------------------------------------------------------------

double utc_tick_step(double lo_s, double hi_s, int about) {
  constexpr double kDay = 86400.0;
  static constexpr double kSteps[] = {1,    2,    5,    10,    15,    30,    60,    120,   300,
                                      600,  900,  1800, 3600,  7200,  10800, 21600, 43200, kDay};
  const double span = std::abs(hi_s - lo_s);
  const double most = std::max(1, about);
  if (!std::isfinite(span)) return kDay;
  for (const double s : kSteps)
    if (span / s <= most) return s;
  // Whole days beyond: 1, 2, 5 × 10ⁿ days, the smallest giving at most `about` intervals
  // (the search ends: span is finite).
  for (double decade = 1.0;; decade *= 10.0)
    for (const double m : {1.0, 2.0, 5.0})
      if (span / (m * decade * kDay) <= most) return m * decade * kDay;
}

std::vector<Tick> utc_ticks(double lo_s, double hi_s, int about) {
  if (!std::isfinite(lo_s) || !std::isfinite(hi_s)) return {};
  const double step = utc_tick_step(lo_s, hi_s, about);
  const auto [k0, k1] = multiples(std::min(lo_s, hi_s), std::max(lo_s, hi_s), step);
  std::vector<Tick> ticks;
  std::string previous_date;
  for (double k = k0; k <= k1; k += 1.0) {
    const double t = k * step;
    const std::string iso = imaging::iso_from_utc_seconds(t, 0);  // YYYY-MM-DDThh:mm:ss
    const std::string date = iso.substr(0, 10);
    Tick tick{t, {}, {}};
    if (step >= 86400.0) {
      tick.label = date;
    } else {
      tick.label = iso.substr(11, step < 60.0 ? 8 : 5);
      if (date != previous_date) tick.date = date;
    }
    previous_date = date;
    ticks.push_back(std::move(tick));
  }
  return ticks;
}

std::vector<Tick> degree_ticks(double lo, double hi, double min_step_deg) {
  if (!std::isfinite(lo) || !std::isfinite(hi) || lo == hi) return {};
  double step = 90.0;
  for (const double s : {1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 45.0, 90.0})
    if (s >= min_step_deg) {
      step = s;
      break;
    }
  const double a = std::min(lo, hi), b = std::max(lo, hi);
  std::vector<Tick> ticks;
  // At most 361 ticks: a step of 1° over a full turn.
  for (double k = std::ceil(a / step - 1e-9); k * step <= b + 1e-9 * step && ticks.size() <= 361; k += 1.0) {
    const double v = k * step;
    char label[32];
    std::snprintf(label, sizeof label, "%.0f", std::abs(v));
    ticks.push_back({v, (v < 0.0 ? "\u2212" : "") + std::string(label), {}});
  }
  return ticks;
}

std::vector<Tick> axis_ticks(const Axis& axis, float length_px, float spacing_px) {
  const int about = std::max(2, static_cast<int>(std::abs(length_px) / spacing_px));
  if (axis.utc) return utc_ticks(axis.lo, axis.hi, about);
  if (axis.degrees && length_px != 0.0f)
    return degree_ticks(axis.lo, axis.hi, 0.75 * spacing_px * std::abs(axis.hi - axis.lo) / std::abs(length_px));
  // Heckbert's steps are loose: a fixed axis may keep few of them inside (2–30 R☉ in steps
  // of 10 keeps 3, in steps of 50 none). Twice as many are asked for, at most three times,
  // until it has 2 labels, or 4 where it has room for them.
  const std::size_t wanted = std::abs(length_px) >= 4.0f * spacing_px ? 4 : 2;
  int ask = about;
  std::vector<Tick> ticks = value_ticks(axis.lo, axis.hi, ask);
  for (int i = 0; i < 3 && ticks.size() < wanted; ++i) ticks = value_ticks(axis.lo, axis.hi, ask *= 2);
  return ticks;
}

}  // namespace occulta::viewer
