// fit/density.hpp — electron densities for the forward model: the quiet background
// corona and a CME shell's sheath. Positions are HEEQ in R☉; densities are returned
// in m⁻³ (1 cm⁻³ = 10⁶ m⁻³) unless a name says cm3.
#pragma once

#include <vector>

#include <Eigen/Core>

#include "fit/shell.hpp"
#include "fit/thomson.hpp"

namespace occulta::fit {

inline constexpr double kM3PerCm3 = 1e6;

// Baumbach–Allen (Allen's Astrophysical Quantities; from memory, shared/REFERENCES.md):
//   N_e(r) = 10⁸ [0.036 r^−1.5 + 1.55 r^−6 + 2.99 r^−16] cm⁻³, r in R☉.
double baumbach_allen_cm3(double r_rs);

// Saito (1977, Sol. Phys. 55, 121; from memory, shared/REFERENCES.md), φ the heliographic
// latitude (its absolute value is used):
//   N_e = 10⁸ [3.09 r^−16 (1 − 0.5 sin φ) + 1.58 r^−6 (1 − 0.95 sin φ)
//              + 0.0251 r^−2.5 (1 − √sin φ)] cm⁻³.
double saito_cm3(double r_rs, double latitude_rad);
// The same split for many latitudes at one r (fit/render's background table): the three
// radial powers once, then each latitude by its |sin φ| alone.
struct SaitoRadial {
  double r16 = 0.0, r6 = 0.0, r2_5 = 0.0;  // r^−16, r^−6, r^−2.5
};
SaitoRadial saito_radial(double r_rs);
double saito_cm3(const SaitoRadial& radial, double abs_sin_latitude);

// The same as density fields over HEEQ points (m⁻³); zero inside the Sun (r < 1).
double baumbach_allen_m3(const Eigen::Vector3d& heeq_p_rs);
double saito_m3(const Eigen::Vector3d& heeq_p_rs);  // latitude = asin(z / r) (HEEQ z is solar north)

// A CME as a thin sheath of electrons about the shell surface:
//   N_e = N_peak exp(−d² / (2 σ²)),  σ = thickness_fraction × r_apex,
// d the shell's signed distance (fit/shell.hpp, both sides of the surface), r_apex the
// apex cross-section radius. σ grows with the shell, so the sheath expands self-similarly
// with it; N_peak is the caller's (a scenario scales it with height as it likes). The
// Gaussian is cut at |d| = 5σ (exp(−12.5) ≈ 4e-6 of the peak) so that rays far from
// the surface cost nothing.
struct ShellSheath {
  ShellParams shell;
  double peak_density_cm3 = 0.0;
  double thickness_fraction = 0.1;
};

// Precomputed for many evaluations (one per frame and shell).
struct ShellSheathField {
  ShellShape shape;
  Eigen::Matrix3d shell_R_heeq = Eigen::Matrix3d::Identity();
  Eigen::Matrix3d heeq_R_shell = Eigen::Matrix3d::Identity();
  double peak_m3 = 0.0, sigma_rs = 0.0, cutoff_rs = 0.0;
};
ShellSheathField make_sheath_field(const ShellSheath& sheath);
double sheath_density_m3(const ShellSheathField& field, const Eigen::Vector3d& heeq_p_rs);

// Where along a ray the sheath can be non-zero: the ray's chords through spheres that
// bound each piece of the shell grown by the cut-off — the front (centre (0, 0, b) in the
// shell frame, radius apex height − b: no front point is farther, as X₀ and r both grow
// with sin β) and each leg (centre at mid-axis, radius √((h/2)² + (h tan δ)²)). Each
// chord carries max_step = σ, i.e. three Gauss–Legendre nodes per σ: within 1e-6 of a
// brute-force sum for rays through the front (thomson_test.cpp), ~1e-3 where a ray meets
// the small step in the distance measure at a leg top (render_test.cpp).
std::vector<RaySpan> sheath_spans(const ShellSheathField& field, const Ray& ray);

}  // namespace occulta::fit
