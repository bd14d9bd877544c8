// fit/arrival_drag.cpp — the drag-based model in closed form and its inverse
// (conventions in fit/arrival.hpp).
#include <algorithm>
#include <cmath>

#include "fit/arrival.hpp"

namespace occulta::fit {

DragState drag_state(double r0_km, double v0_km_s, double wind_km_s, double drag_per_km, double t_s) {
  // Vršnak et al. (2013): with u = v₀ − w, S = sign(u), x = S γ u t = γ |u| t ≥ 0,
  //   v(t) = u / (1 + x) + w,   r(t) = (S/γ) ln(1 + x) + w t + r₀.
  // log1p keeps r exact as γ|u|t → 0, where r → r₀ + v₀ t; u = 0 gives S = 0 and
  // r = r₀ + w t exactly (ballistic at the wind speed).
  const double u = v0_km_s - wind_km_s;
  const double s = u > 0.0 ? 1.0 : (u < 0.0 ? -1.0 : 0.0);
  const double x = drag_per_km * std::abs(u) * t_s;
  DragState state;
  state.speed_km_s = u / (1.0 + x) + wind_km_s;
  state.distance_km = s / drag_per_km * std::log1p(x) + wind_km_s * t_s + r0_km;
  return state;
}

double drag_time_to_distance(double r0_km, double v0_km_s, double wind_km_s, double drag_per_km, double distance_km) {
  // r(t) rises monotonically with r′(t) = v(t) ∈ [min(v₀, w), max(v₀, w)], so the root of
  // f(t) = r(t) − R lies in [0, (R − r₀)/min(v₀, w)]. Newton steps t ← t − f/v, replaced by
  // bisection whenever one leaves the bracket, which shrinks with the sign of f.
  const double gap = distance_km - r0_km;
  double lo = 0.0, hi = gap / std::min(v0_km_s, wind_km_s);
  double t = gap / v0_km_s;  // the ballistic guess
  if (!(t > lo && t < hi)) t = 0.5 * (lo + hi);
  for (int i = 0; i < 200; ++i) {
    const DragState state = drag_state(r0_km, v0_km_s, wind_km_s, drag_per_km, t);
    const double f = state.distance_km - distance_km;
    (f < 0.0 ? lo : hi) = t;
    double next = t - f / state.speed_km_s;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::abs(next - t) < 1e-6 || hi - lo < 1e-6) return next;
    t = next;
  }
  return t;
}

}  // namespace occulta::fit
