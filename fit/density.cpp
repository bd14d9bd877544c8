// fit/density.cpp — background corona and CME sheath densities (formulas in density.hpp).
#include "fit/density.hpp"

#include <algorithm>
#include <cmath>

namespace occulta::fit {

namespace {

// Chord of a ray through a sphere: distances along the ray where it enters and leaves.
void add_chord(std::vector<RaySpan>& spans, const Ray& ray, const Eigen::Vector3d& centre, double radius,
               double step) {
  const Eigen::Vector3d oc = centre - ray.heeq_p_origin_rs;
  const double along = oc.dot(ray.heeq_dir);
  const double miss2 = oc.squaredNorm() - along * along;
  if (miss2 >= radius * radius) return;
  const double half = std::sqrt(radius * radius - miss2);
  spans.push_back(RaySpan{along - half, along + half, step});
}

}  // namespace

double baumbach_allen_cm3(double r_rs) {
  return 1e8 * (0.036 * std::pow(r_rs, -1.5) + 1.55 * std::pow(r_rs, -6.0) + 2.99 * std::pow(r_rs, -16.0));
}

SaitoRadial saito_radial(double r_rs) {
  return {std::pow(r_rs, -16.0), std::pow(r_rs, -6.0), std::pow(r_rs, -2.5)};
}

double saito_cm3(const SaitoRadial& radial, double s) {
  return 1e8 * (3.09 * radial.r16 * (1.0 - 0.5 * s) + 1.58 * radial.r6 * (1.0 - 0.95 * s) +
                0.0251 * radial.r2_5 * (1.0 - std::sqrt(s)));
}

double saito_cm3(double r_rs, double latitude_rad) {
  return saito_cm3(saito_radial(r_rs), std::sin(std::abs(latitude_rad)));
}

double baumbach_allen_m3(const Eigen::Vector3d& heeq_p_rs) {
  const double r = heeq_p_rs.norm();
  return r < 1.0 ? 0.0 : baumbach_allen_cm3(r) * kM3PerCm3;
}

double saito_m3(const Eigen::Vector3d& heeq_p_rs) {
  const double r = heeq_p_rs.norm();
  return r < 1.0 ? 0.0 : saito_cm3(r, std::asin(heeq_p_rs.z() / r)) * kM3PerCm3;
}

ShellSheathField make_sheath_field(const ShellSheath& sheath) {
  ShellSheathField f;
  f.shape = shell_shape(sheath.shell);
  f.heeq_R_shell = heeq_R_shell(sheath.shell);
  f.shell_R_heeq = f.heeq_R_shell.transpose();
  f.peak_m3 = sheath.peak_density_cm3 * kM3PerCm3;
  f.sigma_rs = sheath.thickness_fraction * apex_cross_section_radius_rs(sheath.shell);
  f.cutoff_rs = 5.0 * f.sigma_rs;
  return f;
}

double sheath_density_m3(const ShellSheathField& f, const Eigen::Vector3d& heeq_p_rs) {
  const double d = signed_distance_rs(f.shape, f.shell_R_heeq * heeq_p_rs);
  if (std::abs(d) > f.cutoff_rs) return 0.0;
  const double x = d / f.sigma_rs;
  return f.peak_m3 * std::exp(-0.5 * x * x);
}

std::vector<RaySpan> sheath_spans(const ShellSheathField& f, const Ray& ray) {
  std::vector<RaySpan> spans;
  const ShellShape& s = f.shape;
  const double step = f.sigma_rs;
  add_chord(spans, ray, f.heeq_R_shell * Eigen::Vector3d(0.0, 0.0, s.b), s.apex_height_rs - s.b + f.cutoff_rs, step);
  const double h = s.leg_height_rs, leg_radius = h * s.sin_delta / s.cos_delta;
  const double bound = std::sqrt(0.25 * h * h + leg_radius * leg_radius) + f.cutoff_rs;
  for (const double side : {1.0, -1.0}) {
    const Eigen::Vector3d axis(side * s.sin_alpha, 0.0, s.cos_alpha);
    add_chord(spans, ray, f.heeq_R_shell * (0.5 * h * axis), bound, step);
  }
  return merge_spans(std::move(spans));
}

}  // namespace occulta::fit
