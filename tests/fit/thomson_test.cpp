// tests/fit/thomson_test.cpp — Thomson scattering and line-of-sight sums against direct
// numerical integrations done here, the point-source limit, and analytic columns.
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "fit/density.hpp"
#include "fit/thomson.hpp"
#include "imaging/constants.hpp"

using namespace occulta;
using namespace occulta::fit;

namespace {

// Thomson scattering of the limb-darkened disc by one electron, integrated here over the
// disc from the dipole law alone — no Billings coefficient enters. An unpolarised ray
// travelling along k̂ scatters into polarisation ê (⊥ line of sight) with
//   dσ/dΩ = (r_e²/2)(1 − (k̂·ê)²)      (average of (ε̂·ê)² over ε̂ ⊥ k̂; Jackson §14.7, common practice)
// and the disc's radiance along a ray leaving the surface at θ′ from its normal is
// I₀ (1 − u + u cos θ′) (linear limb darkening). The electron is at r on the z axis, the
// line of sight at χ from z: ê_t = ŷ (normal to the scattering plane), ê_r = (−cos χ, 0, sin χ).
// Incoming directions: ω from z, azimuth ψ; sin θ′ = r sin ω, and with μ = cos θ′ as the
// variable, sin ω dω = sin²Ω μ / cos ω dμ (sin Ω = 1/r), smooth on μ ∈ [0, 1].
// Simpson in μ (4000 intervals), trapezoid in ψ (16 points: exact for the degree-2
// trigonometric polynomial in ψ). Returns I_t and I_r in units of I₀ r_e².
struct DiscScattering {
  double tangential = 0.0, radial = 0.0;
};
DiscScattering disc_scattering(double r, double chi, double u) {
  const double s = 1.0 / r, s2 = s * s;
  const Eigen::Vector3d et(0.0, 1.0, 0.0), er(-std::cos(chi), 0.0, std::sin(chi));
  DiscScattering out;
  const int n_mu = 4000, n_psi = 16;
  for (int i = 0; i <= n_mu; ++i) {
    const double mu = static_cast<double>(i) / n_mu;
    const double simpson = (i == 0 || i == n_mu) ? 1.0 : (i % 2 ? 4.0 : 2.0);
    const double sin_w = s * std::sqrt(1.0 - mu * mu), cos_w = std::sqrt(1.0 - sin_w * sin_w);
    const double jac = s2 * mu / cos_w;
    const double radiance = 1.0 - u + u * mu;
    double t = 0.0, rr = 0.0;
    for (int j = 0; j < n_psi; ++j) {
      const double psi = 2.0 * kPi * j / n_psi;
      const Eigen::Vector3d k(sin_w * std::cos(psi), sin_w * std::sin(psi), cos_w);
      t += 0.5 * (1.0 - std::pow(k.dot(et), 2));
      rr += 0.5 * (1.0 - std::pow(k.dot(er), 2));
    }
    const double w = simpson / (3.0 * n_mu) * jac * radiance * (2.0 * kPi / n_psi);
    out.tangential += w * t;
    out.radial += w * rr;
  }
  return out;
}

constexpr double kMetresPerRs = kSolarRadiusKm * 1000.0;

}  // namespace

TEST_CASE("thomson: Billings coefficients equal a direct integration over the limb-darkened disc") {
  // van de Hulst (1950); Billings (1966): I_t = I₀ (π σ_e/2)[(1 − u)C + uD],
  // I_t − I_r = I₀ (π σ_e/2) sin²χ [(1 − u)A + uB]. scattering_per_electron is in units
  // of B☉ σ_e with B☉ = I₀ (1 − u/3); the disc integral above is in I₀ r_e².
  // Radii 20 ± 0.001 bracket the switch from the closed forms to their series.
  for (const double r : {1.05, 1.2, 1.5, 2.0, 3.0, 5.0, 10.0, 19.999, 20.001, 50.0, 215.0}) {
    for (const double u : {0.0, 0.6, 1.0}) {
      for (const double chi_deg : {20.0, 60.0, 90.0, 135.0}) {
        const double chi = chi_deg * kRadPerDeg;
        const DiscScattering direct = disc_scattering(r, chi, u);
        const Scattering sc = scattering_per_electron(r, std::pow(std::sin(chi), 2), u);
        const double to_i0 = 1.0 - u / 3.0;
        CAPTURE(r);
        CAPTURE(u);
        CAPTURE(chi_deg);
        CHECK(sc.tangential * to_i0 == doctest::Approx(direct.tangential).epsilon(1e-9).scale(0.0));
        CHECK(sc.radial * to_i0 == doctest::Approx(direct.radial).epsilon(1e-9).scale(0.0));
      }
    }
  }
  // The coefficients one by one against the disc integrals of shared/REFERENCES.md
  // (C = ∫(1 + cos²ω) sin ω dω, A = ∫(3cos²ω − 1) sin ω dω over [0, Ω], D and B the same
  // with the factor cos θ′), by Simpson in ω on 20000 intervals.
  for (const double r : {1.05, 2.0, 20.0}) {
    const double s = 1.0 / r, omega = std::asin(s);
    double A = 0, B = 0, C = 0, D = 0;
    const int n = 20000;
    for (int i = 0; i <= n; ++i) {
      const double w = omega * i / n, wt = ((i == 0 || i == n) ? 1.0 : (i % 2 ? 4.0 : 2.0)) * omega / (3.0 * n);
      const double mu = std::sqrt(std::max(0.0, 1.0 - std::pow(std::sin(w) / s, 2)));
      const double c2 = std::pow(std::cos(w), 2), sw = std::sin(w);
      C += wt * (1 + c2) * sw, A += wt * (3 * c2 - 1) * sw, D += wt * mu * (1 + c2) * sw, B += wt * mu * (3 * c2 - 1) * sw;
    }
    const ScatteringCoefficients k = scattering_coefficients(r);
    CAPTURE(r);
    CHECK(k.A == doctest::Approx(A).epsilon(1e-10).scale(0.0));
    CHECK(k.C == doctest::Approx(C).epsilon(1e-10).scale(0.0));
    // √ behaviour of cos θ′ at the limb limits plain Simpson to ~n^−1.5: 1e-6 here.
    CHECK(k.B == doctest::Approx(B).epsilon(1e-6).scale(0.0));
    CHECK(k.D == doctest::Approx(D).epsilon(1e-6).scale(0.0));
  }
}

TEST_CASE("thomson: far from the Sun an electron scatters like a dipole lit by a point source") {
  // van de Hulst (1950); Billings (1966): as r → ∞, A → Ω² and C → Ω², so
  // I_r / I_t → cos²χ. With limb darkening the disc's flux is π Ω² I₀ (1 − u/3) (the mean
  // of cos θ′ over the disc's area is ∫₀¹ μ · 2μ dμ = 2/3, derived here), so B and D → (2/3)Ω².
  // Relative corrections are O(Ω²) = O(1/r²): ≤ 2.5e-5 at r = 200.
  for (const double r : {200.0, 1000.0}) {
    const double omega = std::asin(1.0 / r), o2 = omega * omega;
    const ScatteringCoefficients k = scattering_coefficients(r);
    CHECK(k.A / o2 == doctest::Approx(1.0).epsilon(1e-4).scale(0.0));
    CHECK(k.C / o2 == doctest::Approx(1.0).epsilon(1e-4).scale(0.0));
    CHECK(k.B / o2 == doctest::Approx(2.0 / 3.0).epsilon(1e-4).scale(0.0));
    CHECK(k.D / o2 == doctest::Approx(2.0 / 3.0).epsilon(1e-4).scale(0.0));
    for (const double chi_deg : {10.0, 45.0, 90.0, 120.0}) {
      const double chi = chi_deg * kRadPerDeg;
      const Scattering sc = scattering_per_electron(r, std::pow(std::sin(chi), 2), 0.6);
      CHECK(sc.radial / sc.tangential == doctest::Approx(std::pow(std::cos(chi), 2)).epsilon(1e-4).scale(1.0));
      // Point source, flux F: I_t = F r_e²/2 with F = π Ω² B☉ (per B☉ σ_e: π Ω²/2).
      CHECK(sc.tangential == doctest::Approx(0.5 * kPi * o2).epsilon(1e-4).scale(0.0));
    }
  }
}

TEST_CASE("thomson: a uniform sphere's column is its chord times its density") {
  // Analytic: a ray at distance b from the centre of a sphere of radius R crosses 2√(R² − b²).
  const Eigen::Vector3d centre(3.0, 4.0, 1.0);
  const double radius = 2.0, n_m3 = 1e11;
  const DensityField sphere = [&](const Eigen::Vector3d& p) { return (p - centre).norm() <= radius ? n_m3 : 0.0; };
  const Ray base{Eigen::Vector3d(kAuKm / kSolarRadiusKm, 0.0, 0.0), Eigen::Vector3d(-1, 0, 0)};
  const Eigen::Vector3d toward = (centre - base.heeq_p_origin_rs).normalized();
  const Eigen::Vector3d side = toward.cross(Eigen::Vector3d::UnitZ()).normalized();
  for (const double offset : {0.0, 0.7, 1.5, 1.99}) {
    // Aim at a point `offset` from the centre, normal to the line from the observer.
    Ray ray = base;
    ray.heeq_dir = (centre + offset * side - ray.heeq_p_origin_rs).normalized();
    const Eigen::Vector3d oc = centre - ray.heeq_p_origin_rs;
    const double along = oc.dot(ray.heeq_dir), miss = std::sqrt(oc.squaredNorm() - along * along);
    const double half = std::sqrt(radius * radius - miss * miss);
    const double expect = n_m3 * 2.0 * half * kMetresPerRs;
    CAPTURE(offset);
    // Hint on the exact chord (a sheath hint would bound it the same way).
    const std::vector<RaySpan> exact{{along - half, along + half, 0.05}};
    CHECK(integrate_column_m2(ray, sphere, {}, exact) == doctest::Approx(expect).epsilon(1e-12).scale(0.0));
    // A loose hint (0.3 R☉ either side, sub-intervals of 0.01 R☉): the two edges each cost
    // at most one sub-interval's worth, 2 × 0.01 R☉ × n.
    const std::vector<RaySpan> loose{{along - half - 0.3, along + half + 0.3, 0.01}};
    CHECK(std::abs(integrate_column_m2(ray, sphere, {}, loose) - expect) <= 0.02 * n_m3 * kMetresPerRs);
    // A small sphere far from the Sun (chord ≪ r): brightness ≈ n σ_e chord × (per-electron
    // scattering at its centre), to the relative spread of r and χ over it, ~(R/r)² here.
  }
  {
    const Eigen::Vector3d c2(0.0, 8.0, 0.0);  // in the plane of the sky seen from +x, χ = 90°
    const double r2 = 0.02;
    const DensityField small = [&](const Eigen::Vector3d& p) { return (p - c2).norm() <= r2 ? n_m3 : 0.0; };
    Ray ray = base;
    ray.heeq_dir = (c2 - ray.heeq_p_origin_rs).normalized();
    const double along = (c2 - ray.heeq_p_origin_rs).dot(ray.heeq_dir);
    const std::vector<RaySpan> hint{{along - r2, along + r2, 0.005}};
    const Brightness b = integrate_brightness(ray, small, {}, hint);
    const double chi_sin2 = 1.0 - std::pow(c2.normalized().dot(ray.heeq_dir), 2);
    const Scattering sc = scattering_per_electron(c2.norm(), chi_sin2);
    const double column = n_m3 * 2 * r2 * kMetresPerRs;
    CHECK(b.total_bsun == doctest::Approx(column * kElectronCrossSectionM2 * sc.total()).epsilon(1e-4).scale(0.0));
    CHECK(b.polarized_bsun == doctest::Approx(column * kElectronCrossSectionM2 * sc.polarized()).epsilon(1e-4).scale(0.0));
  }
}

TEST_CASE("thomson: the background line of sight matches a brute-force quadrature") {
  // The same integrand (Baumbach–Allen × scattering) summed by composite Simpson on
  // 400 000 intervals in s over the same stretch, against the 64-node Gauss–Legendre in
  // θ (s = s₀ + p tan θ) of integrate_brightness.
  const imaging::Observer earth{0.0, 0.0, kAuKm};
  const LineOfSightOptions options;
  for (const double elong_rs : {1.1, 2.0, 4.0, 10.0, 30.0}) {
    const double theta = std::atan(elong_rs * kSolarRadiusKm / kAuKm);
    const Ray ray = ray_from_hpc(earth, Eigen::Vector2d(0.0, theta));
    const Brightness fast = integrate_brightness(ray, baumbach_allen_m3, options);
    const double s0 = -ray.heeq_p_origin_rs.dot(ray.heeq_dir);
    const double p = (ray.heeq_p_origin_rs + s0 * ray.heeq_dir).norm();
    const double half = std::sqrt(options.outer_radius_rs * options.outer_radius_rs - p * p);
    const double from = std::max(0.0, s0 - half), to = s0 + half;  // from the observer on
    const int n = 400000;
    double total = 0.0, pol = 0.0;
    for (int i = 0; i <= n; ++i) {
      const double s = from + (to - from) * i / n;
      const double wt = ((i == 0 || i == n) ? 1.0 : (i % 2 ? 4.0 : 2.0)) * (to - from) / (3.0 * n);
      const Eigen::Vector3d x = ray.heeq_p_origin_rs + s * ray.heeq_dir;
      const double r = x.norm(), cchi = x.dot(ray.heeq_dir) / r;
      const Scattering sc = scattering_per_electron(r, 1.0 - cchi * cchi);
      total += wt * baumbach_allen_m3(x) * sc.total();
      pol += wt * baumbach_allen_m3(x) * sc.polarized();
    }
    const double to_bsun = kMetresPerRs * kElectronCrossSectionM2;
    CAPTURE(elong_rs);
    CHECK(fast.total_bsun == doctest::Approx(total * to_bsun).epsilon(1e-6).scale(0.0));
    CHECK(fast.polarized_bsun == doctest::Approx(pol * to_bsun).epsilon(1e-6).scale(0.0));
    CHECK(fast.polarized_bsun < fast.total_bsun);
    // The default outer radius (1000 R☉) leaves out ≲ 1e-4 of the line of sight (thomson.hpp).
    LineOfSightOptions far = options;
    far.outer_radius_rs = 1e5;
    far.smooth_nodes = 128;
    const double all = integrate_brightness(ray, baumbach_allen_m3, far).total_bsun;
    MESSAGE("elongation ", elong_rs, " R☉: fraction beyond 1000 R☉ = ", 1.0 - fast.total_bsun / all);
    CHECK(fast.total_bsun == doctest::Approx(all).epsilon(1e-4).scale(0.0));
  }
}

TEST_CASE("thomson: a thin shell sheath is caught by its hint spans") {
  // A Gaussian sheath of σ ≈ 0.1 R☉: the spans from sheath_spans (3 nodes per σ) against
  // brute-force Simpson on 200 000 intervals over the shell's whole neighbourhood.
  const ShellSheath sheath{ShellParams{90.0 * kRadPerDeg, 0.0, 90.0 * kRadPerDeg, 8.0, 30.0 * kRadPerDeg, 0.3}, 1e5, 0.05};
  const ShellSheathField field = make_sheath_field(sheath);
  const DensityField density = [&](const Eigen::Vector3d& p) { return sheath_density_m3(field, p); };
  const imaging::Observer earth{0.0, 0.0, kAuKm};
  int checked = 0;
  for (const double height : {3.0, 5.0, 6.5, 7.8}) {
    const double theta = std::atan(height * kSolarRadiusKm / kAuKm);
    const Ray ray = ray_from_hpc(earth, Eigen::Vector2d(theta, 0.3 * theta));
    const std::vector<RaySpan> spans = sheath_spans(field, ray);
    REQUIRE_FALSE(spans.empty());
    const double hinted = integrate_column_m2(ray, density, {}, spans);
    const double a = spans.front().from_rs, b = spans.back().to_rs;
    const int n = 200000;
    double brute = 0.0;
    for (int i = 0; i <= n; ++i) {
      const double wt = ((i == 0 || i == n) ? 1.0 : (i % 2 ? 4.0 : 2.0)) * (b - a) / (3.0 * n);
      brute += wt * density(ray.heeq_p_origin_rs + (a + (b - a) * i / n) * ray.heeq_dir);
    }
    brute *= kMetresPerRs;
    CAPTURE(height);
    if (brute == 0.0) continue;
    ++checked;
    CHECK(hinted == doctest::Approx(brute).epsilon(1e-6).scale(0.0));
  }
  CHECK(checked >= 3);
}
