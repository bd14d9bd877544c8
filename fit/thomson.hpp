// fit/thomson.hpp — Thomson-scattered white light: what one electron sends toward an
// observer, and the sum of that along a line of sight through a density model.
//
// van de Hulst (1950, BAN 11, 135); Billings (1966, A Guide to the Solar Corona);
// Howard & Tappin (2009, Space Sci. Rev. 147, 31). The formulas are those of
// shared/REFERENCES.md, written there from memory and checked in tests/fit/thomson_test.cpp
// against a direct integration over the limb-darkened disc and the point-source limit.
//
// Units. Brightness is in units of the mean solar brightness B☉ = I₀ (1 − u/3), I₀ the
// disc-centre radiance, u the limb-darkening coefficient. One electron scatters toward
// the observer an intensity (power per steradian)
//     I_t = B☉ σ_e · tangential,   I_r = B☉ σ_e · radial,        σ_e = r_e² (m²),
// where `tangential` and `radial` (below, dimensionless) belong to the polarisation
// perpendicular to / in the scattering plane (tangential / radial to the limb in the
// image). So a column of N electrons per m² at one place has radiance
//     B / B☉ = N σ_e (tangential + radial),   pB / B☉ = N σ_e (tangential − radial),
// and a line of sight sums N_e σ_e (…) ds over its length (N_e in m⁻³, ds in m).
// Positions are HEEQ, in R☉ (imaging/constants.hpp) unless a name says km.
#pragma once

#include <functional>
#include <span>
#include <vector>

#include <Eigen/Core>

#include "imaging/geometry.hpp"

namespace occulta::fit {

inline constexpr double kElectronRadiusM = 2.8179403262e-15;                 // r_e, CODATA 2018
inline constexpr double kElectronCrossSectionM2 = kElectronRadiusM * kElectronRadiusM;  // σ_e = r_e²
// Limb-darkening coefficient in the visible, u ≈ 0.56–0.63 (from memory, Allen's
// Astrophysical Quantities, as shared/REFERENCES.md gives it); 0.6 sits in that range.
inline constexpr double kDefaultLimbDarkening = 0.6;

// Billings' coefficients at distance r (R☉, r > 1) from Sun centre, sin Ω = 1/r:
//   A = cos Ω sin²Ω,  C = 4/3 − cos Ω − cos³Ω/3,
//   B = −(1/8)[1 − 3 sin²Ω − (cos²Ω/sin Ω)(1 + 3 sin²Ω) ln((1 + sin Ω)/cos Ω)],
//   D =  (1/8)[5 + sin²Ω − (cos²Ω/sin Ω)(5 − sin²Ω) ln((1 + sin Ω)/cos Ω)].
// Far from the Sun (sin Ω < 0.05) B and D come from their power series in sin Ω (derived
// in thomson.cpp), as the closed forms lose digits to cancellation there.
struct ScatteringCoefficients {
  double A = 0.0, B = 0.0, C = 0.0, D = 0.0;
};
ScatteringCoefficients scattering_coefficients(double r_rs);

// Per-electron scattering toward an observer, in units of B☉ σ_e (see the top):
//   tangential = (π/2) [(1 − u) C + u D] / (1 − u/3)
//   tangential − radial = (π/2) sin²χ [(1 − u) A + u B] / (1 − u/3)
// χ is the scattering angle, between the Sun–electron line and the line of sight.
struct Scattering {
  double tangential = 0.0, radial = 0.0;
  double total() const { return tangential + radial; }
  double polarized() const { return tangential - radial; }
};
Scattering scattering_per_electron(double r_rs, double sin2_chi, double limb_darkening = kDefaultLimbDarkening);

// --- lines of sight ----------------------------------------------------------------------
// Electron density (m⁻³) at a HEEQ point (R☉). Must be safe to call from several threads.
using DensityField = std::function<double(const Eigen::Vector3d& heeq_p_rs)>;

struct Ray {
  Eigen::Vector3d heeq_p_origin_rs{0.0, 0.0, 0.0};  // where the ray starts: the observer
  Eigen::Vector3d heeq_dir{1.0, 0.0, 0.0};          // unit direction
};
// The line of sight of a helioprojective direction (radians) from an observer.
Ray ray_from_hpc(const imaging::Observer& observer, const Eigen::Vector2d& hpc_rad);

// A stretch of a ray that needs fine sampling (a thin sheath, a sharp edge), as distances
// from the ray's origin (R☉). It is integrated by 3-point Gauss–Legendre on sub-intervals
// no longer than max_step_rs, and left out of the smooth integration.
struct RaySpan {
  double from_rs = 0.0, to_rs = 0.0;
  double max_step_rs = 0.1;
};

struct LineOfSightOptions {
  // Only the part of the ray within this distance of Sun centre is integrated. The
  // Baumbach–Allen integrand falls as r^−3.5 far out (N_e ∝ r^−1.5, scattering ∝ Ω²), so
  // what lies beyond R is a fraction ~(p/R)^2.5 of a line of sight passing Sun centre at
  // p: ≲ 1e-4 for p ≤ 30 R☉ at R = 1000 R☉ (measured in tests/fit/thomson_test.cpp). The
  // tan θ variable below makes the long reach cost no extra nodes.
  double outer_radius_rs = 1000.0;
  // Gauss–Legendre nodes over the whole smooth part, in the variable θ of
  // s = s₀ + p tan θ (s₀ the closest approach to Sun centre, p its distance): nodes
  // cluster where the density is highest. Pieces between fine spans get their share of θ.
  int smooth_nodes = 64;
  double limb_darkening = kDefaultLimbDarkening;
};

struct Brightness {
  double total_bsun = 0.0, polarized_bsun = 0.0;  // B and pB in units of B☉
};

// B and pB along a ray through a density field. The ray stops at the solar surface if it
// meets the disc (light from behind the Sun does not reach the observer).
Brightness integrate_brightness(const Ray& ray, const DensityField& density_m3, const LineOfSightOptions& options = {},
                                std::span<const RaySpan> fine = {});
// ∫ N_e ds (m⁻²) over the same samples — the column density, for checks and diagnostics.
double integrate_column_m2(const Ray& ray, const DensityField& density_m3, const LineOfSightOptions& options = {},
                           std::span<const RaySpan> fine = {});

// B and pB from the fine spans alone, for a density that is zero elsewhere (a shell
// sheath): the smooth part is skipped. Same clipping to the outer sphere and the disc.
Brightness integrate_brightness_in_spans(const Ray& ray, const DensityField& density_m3, std::span<const RaySpan> spans,
                                         const LineOfSightOptions& options = {});

// The nodes of integrate_brightness along a ray without fine spans: distance s from the
// ray's origin (R☉) and weight ds (R☉), so that ∫ f ds = Σ f(s) ds. For callers that
// integrate many rays of one geometry and share what depends only on s (fit/render's
// background table: rays of equal closest approach differ only in direction).
struct RayNode {
  double s_rs = 0.0, ds_rs = 0.0;
};
std::vector<RayNode> smooth_ray_nodes(const Ray& ray, const LineOfSightOptions& options = {});

// Fine spans merged and clipped: overlapping or touching spans join (taking the smaller
// step), and the result is sorted. Used by integrate_* and by callers combining hints.
std::vector<RaySpan> merge_spans(std::vector<RaySpan> spans);

}  // namespace occulta::fit
