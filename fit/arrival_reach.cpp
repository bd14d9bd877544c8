// fit/arrival_reach.cpp — how far the shell reaches along a direction, relative to its
// apex, fast enough for an ensemble (conventions in fit/arrival.hpp and fit/shell.hpp).
#include <algorithm>
#include <cmath>

#include "fit/arrival.hpp"

namespace occulta::fit {

namespace {

// Whether a point (shell frame, apex height 1) lies inside the front tube: the sign of
// fit/shell's front signed distance, squared out. The point lies in the cross-section
// half-plane β with in-plane coordinates (s, y), s = |(p_x, p_z − b)|, and at −s in the
// half-plane β + π; a half-plane carries a circle when sin β ≥ −sin α. Inside when
// (±s − X₀)² + y² < r², X₀ = x0_offset + x0_slope sin β, r² = r2_offset + X₀²
// (Thernisien 2011, as fit/shell.cpp writes it).
bool inside_front(const ShellShape& s, const Eigen::Vector3d& p) {
  const double qx = p.x(), qz = p.z() - s.b;
  const double radial = std::sqrt(qx * qx + qz * qz);
  const double sin_beta = radial > 0.0 ? qz / radial : 1.0;
  const double y2 = p.y() * p.y();
  for (const double sign : {1.0, -1.0}) {
    const double sb = sign * sin_beta;
    if (sb < -s.sin_alpha) continue;
    const double x0 = s.x0_offset + s.x0_slope * sb;
    const double ds = sign * radial - x0;
    if (ds * ds + y2 < s.r2_offset + x0 * x0) return true;
  }
  return false;
}

}  // namespace

std::optional<double> front_reach_ratio(const ShellShape& s, const Eigen::Vector3d& d) {
  // Every shell point lies within α + δ of the apex axis z: cos(α + δ) = cos α cos δ − sin α sin δ.
  const double cos_extent = s.cos_alpha * s.cos_delta - s.sin_alpha * s.sin_delta;
  if (d.z() < cos_extent - 1e-12) return std::nullopt;

  // Legs: cones of half-angle δ from Sun centre about a = (±sin α, 0, cos α), cut at the
  // leg top p·a = h. A ray from Sun centre inside a cone stays inside up to t = h / (d·a).
  double t_leg = 0.0;
  for (const double side : {1.0, -1.0}) {
    const double along = side * s.sin_alpha * d.x() + s.cos_alpha * d.z();
    if (along > s.cos_delta) t_leg = std::max(t_leg, s.leg_height_rs / along);
  }

  // Front: no surface point lies beyond the apex (fit/shell.cpp), so scan inward from just
  // outside it to the legs' reach; the first sample inside brackets the outermost crossing.
  constexpr int kSamples = 192;
  const double t_max = 1.001 * s.apex_height_rs;
  const double step = (t_max - t_leg) / kSamples;
  double outside = t_max;
  for (int i = 1; i <= kSamples; ++i) {
    const double t = t_max - step * i;
    if (inside_front(s, t * d)) {
      double inside = t;
      while (outside - inside > 1e-9) {
        const double mid = 0.5 * (inside + outside);
        (inside_front(s, mid * d) ? inside : outside) = mid;
      }
      return 0.5 * (inside + outside) / s.apex_height_rs;
    }
    outside = t;
  }
  if (t_leg > 0.0) return t_leg / s.apex_height_rs;
  return std::nullopt;
}

}  // namespace occulta::fit
