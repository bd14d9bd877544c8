// tests/fit/density_test.cpp — background corona and CME sheath densities.
#include <doctest/doctest.h>

#include <cmath>

#include "fit/density.hpp"
#include "imaging/constants.hpp"

using namespace occulta;
using namespace occulta::fit;

TEST_CASE("density: Baumbach–Allen at a few heights from the published formula") {
  // From memory of Allen's Astrophysical Quantities (as shared/REFERENCES.md states it):
  //   N_e(r) = 10⁸ [0.036 r^−1.5 + 1.55 r^−6 + 2.99 r^−16] cm⁻³.
  // At r = 1 the brackets sum to 0.036 + 1.55 + 2.99 = 4.576; at r = 4, 4^−1.5 = 1/8,
  // 4^−6 = 1/4096, 4^−16 = 2^−32 (exact powers, by hand).
  CHECK(baumbach_allen_cm3(1.0) == doctest::Approx(4.576e8).epsilon(1e-14).scale(0.0));
  CHECK(baumbach_allen_cm3(4.0) == doctest::Approx(1e8 * (0.036 / 8.0 + 1.55 / 4096.0 + 2.99 / 4294967296.0)).epsilon(1e-14).scale(0.0));
  for (const double r : {1.5, 2.0, 3.0, 10.0, 30.0})
    CHECK(baumbach_allen_cm3(r) == doctest::Approx(1e8 * (0.036 / (r * std::sqrt(r)) + 1.55 / std::pow(r, 6) +
                                                         2.99 / std::pow(r, 16))).epsilon(1e-14).scale(0.0));
  // Far out only the r^−1.5 term is left: the ratio between 20 and 40 R☉ is 2^1.5 within
  // 1e-4 (the r^−6 term is (1.55/0.036)·20^−4.5 ≈ 6e-5 of the density at 20 R☉).
  CHECK(baumbach_allen_cm3(20.0) / baumbach_allen_cm3(40.0) == doctest::Approx(std::pow(2.0, 1.5)).epsilon(1e-4).scale(0.0));
  // cm⁻³ → m⁻³ is 10⁶ (1 m³ = 10⁶ cm³), and the field is the same along any direction.
  CHECK(baumbach_allen_m3(Eigen::Vector3d(0.0, 3.0, 4.0)) == doctest::Approx(baumbach_allen_cm3(5.0) * 1e6).epsilon(1e-14).scale(0.0));
  CHECK(baumbach_allen_m3(Eigen::Vector3d(0.5, 0.0, 0.0)) == 0.0);  // inside the Sun
}

TEST_CASE("density: Saito (1977) with latitude") {
  // Saito (1977, Sol. Phys. 55, 121), from memory as shared/REFERENCES.md gives it. On the
  // equator: 10⁸ [3.09 r^−16 + 1.58 r^−6 + 0.0251 r^−2.5]; over the pole (sin φ = 1):
  // 10⁸ [1.545 r^−16 + 0.079 r^−6] — the r^−2.5 term vanishes.
  for (const double r : {1.0, 2.0, 5.0}) {
    CHECK(saito_cm3(r, 0.0) == doctest::Approx(1e8 * (3.09 * std::pow(r, -16) + 1.58 * std::pow(r, -6) + 0.0251 * std::pow(r, -2.5))).epsilon(1e-14).scale(0.0));
    CHECK(saito_cm3(r, 0.5 * kPi) == doctest::Approx(1e8 * (1.545 * std::pow(r, -16) + 0.079 * std::pow(r, -6))).epsilon(1e-14).scale(0.0));
    CHECK(saito_cm3(r, -0.4) == doctest::Approx(saito_cm3(r, 0.4)).epsilon(1e-15).scale(0.0));  // |φ|
    CHECK(saito_cm3(r, 0.4) < saito_cm3(r, 0.0));                                    // poles are thinner
  }
  // HEEQ z is solar north: a point at 30° latitude.
  const Eigen::Vector3d p = 3.0 * Eigen::Vector3d(std::cos(kPi / 6), 0.0, std::sin(kPi / 6));
  CHECK(saito_m3(p) == doctest::Approx(saito_cm3(3.0, kPi / 6) * 1e6).epsilon(1e-13).scale(0.0));
}

TEST_CASE("density: the sheath peaks on the shell surface and falls as a Gaussian of width σ") {
  const ShellSheath sheath{ShellParams{0.3, -0.2, 0.5, 10.0, 0.5, 0.35}, 2e5, 0.08};
  const ShellSheathField f = make_sheath_field(sheath);
  CHECK(f.sigma_rs == doctest::Approx(0.08 * apex_cross_section_radius_rs(sheath.shell)).epsilon(1e-15).scale(0.0));
  const Eigen::Vector3d apex = shell_point(sheath.shell, 0.5, 0.0);
  const Eigen::Vector3d out = heeq_R_shell(sheath.shell).col(2);
  CHECK(sheath_density_m3(f, apex) == doctest::Approx(2e11).epsilon(1e-9).scale(0.0));
  // One σ outward and inward along the apex direction (in the apex cross-section's plane,
  // where the distance is exact): exp(−1/2) of the peak.
  CHECK(sheath_density_m3(f, apex + f.sigma_rs * out) == doctest::Approx(2e11 * std::exp(-0.5)).epsilon(1e-9).scale(0.0));
  CHECK(sheath_density_m3(f, apex - f.sigma_rs * out) == doctest::Approx(2e11 * std::exp(-0.5)).epsilon(1e-9).scale(0.0));
  CHECK(sheath_density_m3(f, apex + 6.0 * f.sigma_rs * out) == 0.0);  // past the 5σ cut
  // Every mesh point lies inside the spans of some ray through it (the bounds hold).
  const ShellMesh mesh = make_mesh(sheath.shell, MeshResolution{6, 24, 12});
  const Eigen::Vector3d obs(215.0, 0.0, 0.0);
  for (const Eigen::Vector3d& q : mesh.heeq_p_rs) {
    const Ray ray{obs, (q - obs).normalized()};
    const double s = (q - obs).norm();
    bool inside = false;
    for (const RaySpan& span : sheath_spans(f, ray)) inside = inside || (span.from_rs <= s && s <= span.to_rs);
    CHECK(inside);
  }
}
