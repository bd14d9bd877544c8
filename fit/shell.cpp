// fit/shell.cpp — graduated cylindrical shell geometry (conventions in shell.hpp).
#include "fit/shell.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "imaging/constants.hpp"

namespace occulta::fit {

bool is_valid(const ShellParams& p) {
  return std::isfinite(p.lon) && std::isfinite(p.lat) && std::isfinite(p.tilt) && p.apex_height_rs > 0.0 &&
         p.half_angle >= 0.0 && p.aspect_ratio >= 0.0 && p.aspect_ratio < 1.0 &&
         p.half_angle + std::asin(p.aspect_ratio) < 0.5 * kPi;
}

double projected_edge_on_width(double half_angle, double aspect_ratio) {
  // Seen along x_shell from afar, a leg (axis a = (sin α, 0, cos α), cross-section circle
  // of radius t tan δ at t along it, in the plane of e₁ = (cos α, 0, −sin α) and ŷ)
  // projects onto the (y, z) sky plane as ellipses of semi-axes R = t tan δ (along y)
  // and R sin α (along z), centred at Z = t cos α. A line y = m z from Sun centre touches
  // such an ellipse when m² = R² / (Z² − R² sin² α) (discriminant of the quadratic),
  // the same m for every t (a cone is self-similar). With R/Z = tan δ / cos α:
  //   m² = sin²δ / (cos²α − sin²δ),  so the half-width is asin(sin δ / cos α) = asin(κ / cos α).
  // The front lies between its apex circle (half-width δ) and the leg-top circles (this
  // value), so this is the whole shell's projected edge-on width. Checked against the
  // projected mesh in tests/fit/shell_test.cpp.
  return 2.0 * std::asin(aspect_ratio / std::cos(half_angle));
}

double apex_cross_section_radius_rs(const ShellParams& params) {
  // r(π/2) = κ |c(π/2)| with |c(π/2)| = (b + ρ)/(1 − κ²) (shared/REFERENCES.md, GCS),
  // so apex height = |c| + r = (b + ρ)/(1 − κ).
  const ShellShape s = shell_shape(params);
  return s.kappa * (s.b + s.rho) / (1.0 - s.kappa * s.kappa);
}

double shell_signed_distance_rs(const ShellParams& params, const Eigen::Vector3d& heeq_p_rs) {
  const Eigen::Vector3d shell_p = heeq_R_shell(params).transpose() * heeq_p_rs;
  return signed_distance_rs(shell_shape(params), shell_p);
}

ShellMesh make_mesh(const ShellParams& params, const MeshResolution& res) {
  ShellMesh mesh;
  const int legs = std::max(1, res.per_leg), front = std::max(2, res.front);
  mesh.around = std::max(3, res.around);
  for (int i = 0; i < legs; ++i) mesh.u.push_back(static_cast<double>(i) / (3.0 * legs));
  for (int i = 0; i <= front; ++i) mesh.u.push_back((1.0 + static_cast<double>(i) / front) / 3.0);
  for (int i = legs - 1; i >= 0; --i) mesh.u.push_back(1.0 - static_cast<double>(i) / (3.0 * legs));
  mesh.rows = static_cast<int>(mesh.u.size());
  const Eigen::Matrix3d heeq_R = heeq_R_shell(params);
  mesh.heeq_p_rs.reserve(static_cast<size_t>(mesh.rows) * mesh.around);
  for (const double u : mesh.u) {
    for (int j = 0; j < mesh.around; ++j) {
      const double v = 2.0 * kPi * j / mesh.around;
      mesh.heeq_p_rs.push_back(heeq_R * shell_point_in_shell_frame(params, u, v));
    }
  }
  return mesh;
}

std::optional<double> surface_distance_along(const ShellParams& params, const Eigen::Vector3d& heeq_dir) {
  const ShellShape shape = shell_shape(params);
  const Eigen::Vector3d d = heeq_R_shell(params).transpose() * heeq_dir.normalized();
  // No surface point lies beyond the apex height (the front's farthest point is its apex,
  // |c(β)| + r(β) peaking at β = π/2 — checked on the mesh in the tests), so the search
  // starts just outside it and walks inward to the first sample inside the solid.
  constexpr int kSamples = 512;
  const double t_max = shape.apex_height_rs * 1.001;
  double outside = t_max;
  for (int i = kSamples - 1; i >= 1; --i) {
    const double t = t_max * i / kSamples;
    if (signed_distance_rs(shape, t * d) < 0.0) {
      double inside = t;
      while (outside - inside > 1e-9) {
        const double mid = 0.5 * (inside + outside);
        (signed_distance_rs(shape, mid * d) < 0.0 ? inside : outside) = mid;
      }
      return 0.5 * (inside + outside);
    }
    outside = t;
  }
  return std::nullopt;
}

std::vector<Eigen::Vector2d> project_mesh(const ShellMesh& mesh, const imaging::Observer& observer) {
  std::vector<Eigen::Vector2d> hpc;
  hpc.reserve(mesh.heeq_p_rs.size());
  // imaging::hpc_from_heeq with its rotation made once, not per point (the same arithmetic).
  const Eigen::Matrix3d hcc_R = imaging::hcc_R_heeq(observer);
  for (const Eigen::Vector3d& p : mesh.heeq_p_rs) {
    const Eigen::Vector3d heeq_p_km = p * kSolarRadiusKm;
    hpc.push_back(imaging::hpc_from_hcc(observer, hcc_R * heeq_p_km));
  }
  return hpc;
}

SkyOutline sky_outline(const ShellMesh& mesh, const ShellParams& params, const imaging::Observer& observer,
                       double bin_deg) {
  SkyOutline out;
  out.bin_deg = bin_deg;
  const int bins = std::max(1, static_cast<int>(std::lround(360.0 / bin_deg)));
  out.max_height_rs.assign(bins, std::numeric_limits<double>::quiet_NaN());
  const Eigen::Vector3d heeq_apex = shell_point(params, 0.5, 0.0);
  out.apex_pa_deg = imaging::position_angle_deg(imaging::hpc_from_heeq(observer, heeq_apex * kSolarRadiusKm));

  std::vector<double> pas;
  pas.reserve(mesh.heeq_p_rs.size());
  for (const Eigen::Vector2d& hpc : project_mesh(mesh, observer)) {
    if (hpc.norm() < 1e-12) continue;  // the legs' feet at Sun centre have no position angle
    const double pa = imaging::position_angle_deg(hpc);
    const int bin = std::min(bins - 1, static_cast<int>(pa / bin_deg));
    const double height = imaging::sky_height_rs(observer, hpc);
    double& best = out.max_height_rs[bin];
    if (!(best >= height)) best = height;  // NaN compares false: the first point fills the bin
    pas.push_back(pa);
  }
  // The span is the circle less its widest empty gap of bins; its ends are then taken from
  // the exact position angles, counted from the start of the gap's far side.
  int gap_start = -1, gap_len = 0;
  const auto empty = [&](int i) { return std::isnan(out.max_height_rs[((i % bins) + bins) % bins]); };
  for (int start = 0; start < bins; ++start) {
    if (!empty(start) || empty(start - 1)) continue;  // gaps are measured from where they begin
    int len = 0;
    while (len < bins && empty(start + len)) ++len;
    if (len > gap_len) gap_len = len, gap_start = start;
  }
  if (gap_len == 0) {  // every bin holds the shell: a halo
    out.pa_from_deg = out.apex_pa_deg - 180.0;
    out.pa_to_deg = out.apex_pa_deg + 180.0;
    return out;
  }
  const double origin = ((gap_start + gap_len) % bins) * bin_deg;
  double lo = 360.0, hi = 0.0;
  for (const double pa : pas) {
    const double rel = std::fmod(pa - origin + 720.0, 360.0);
    lo = std::min(lo, rel), hi = std::max(hi, rel);
  }
  const double apex_rel = std::fmod(out.apex_pa_deg - origin + 720.0, 360.0);
  out.pa_from_deg = out.apex_pa_deg - (apex_rel - lo);
  out.pa_to_deg = out.apex_pa_deg + (hi - apex_rel);
  return out;
}

}  // namespace occulta::fit
