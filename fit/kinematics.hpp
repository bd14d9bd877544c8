// fit/kinematics.hpp — height–time fits of leading-edge points: how fast a CME front
// moves on the sky, whether it accelerates, when it left the Sun and when it passes
// 21.5 R☉ (the inner boundary of heliospheric models, ≈ 0.1 au — common practice).
//
// Models, with τ = t − t_ref:
//   linear     h(t) = h₀ + v τ
//   quadratic  h(t) = h₀ + v τ + ½ a τ²
// each fitted by least squares with Ceres, plainly or with a Huber loss (robust). Points
// are (time in UTC seconds since 2000-01-01, height in R☉ from Sun centre, optional σ in
// R☉). Results use fit::ApexLaw (fit/scenario.hpp) for the law, so speeds are km/s and
// accelerations m/s², as everywhere in fit/.
//
// Inside, functions take any input and say what is wrong with it in the result (status
// and one sentence in `problem`); nothing throws for too few points or repeated times.
#pragma once

#include <limits>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "fit/scenario.hpp"

namespace occulta::fit {

inline constexpr double kOnsetHeightRs = 1.0;      // the solar surface: onset time
inline constexpr double kBoundaryHeightRs = 21.5;  // ≈ 0.1 au, heliospheric inner boundary (common practice)

struct HeightTimePoint {
  double time_s = 0.0;     // UTC seconds since 2000-01-01
  double height_rs = 0.0;  // leading-edge height, R☉ from Sun centre
  double sigma_rs = 0.0;   // 1σ uncertainty of height_rs; 0 = not given (all points or none)
};

enum class HeightTimeModel { linear, quadratic };

enum class FitStatus {
  ok,                // fitted; `problem` may still say why sigmas are missing
  too_few_points,    // fewer points than parameters
  degenerate_times,  // fewer distinct times than parameters (e.g. all at one time)
  invalid_input,     // a non-finite value, a negative σ, or σ given for some points only
  solver_failed,     // Ceres did not converge or the covariance is rank-deficient
};

struct HeightTimeOptions {
  HeightTimeModel model = HeightTimeModel::linear;
  bool robust = false;  // Huber loss; scale from the residual MAD of a plain fit first
  // The measurement's own 1σ height resolution per point, R☉ (e.g. a height grid step
  // Δ as Δ/√12, the variance of uniform rounding — common practice): the residual scale
  // estimated from the scatter is never taken below it, so points that happen to lie on a
  // line cannot give σ of nothing. 0: no floor. Ignored when the points carry σ.
  double resolution_rs = 0.0;
};

// When the fitted law reaches a given height, going upward.
struct HeightCrossing {
  bool found = false;
  double time_s = std::numeric_limits<double>::quiet_NaN();   // UTC seconds since 2000-01-01
  double sigma_s = std::numeric_limits<double>::quiet_NaN();  // 1σ, first-order propagation
  std::string problem;                                        // why not found, else empty
};

struct HeightTimeFit {
  FitStatus status = FitStatus::too_few_points;
  std::string problem;  // one readable sentence when something is missing, else empty

  HeightTimeModel model = HeightTimeModel::linear;
  bool robust = false;
  int n_points = 0;
  int n_params = 0;  // 2 (linear) or 3 (quadratic)

  // The law: ref_time_s = t_ref (the mean time of the points, σ-weighted when σ are
  // given, which decorrelates h₀ from v for the straight line), height_rs = h₀ at
  // t_ref, speed_km_s = v at t_ref, accel_m_s2 = a (0 for the linear model).
  ApexLaw law;

  // Covariance of (height_rs, speed_km_s, accel_m_s2) at t_ref, from ceres::Covariance.
  // Without per-point σ it is scaled by the residual variance s² (the σ are then unknown
  // and estimated from the scatter, covariance_scaled = true):
  //   s² = max(SSR/(n − p), resolution_rs²)                                  plain fits
  //   s² = max(ŝ², resolution_rs²), and at least SSR/(n − p) when n − p < 6  robust fits
  // (the MAD of a handful of residuals is too unstable to judge outliers by: that of a
  // line through 3 points is exactly 0). With σ it is taken as is — the σ are believed
  // (covariance_scaled = false). Linear fits: the accel row and column are 0.
  Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();
  // The reported σ: √diag(covariance) × coverage_factor, plus any definition spread
  // (add_definition_spread) in quadrature. NaN when sigmas_known is false.
  double height_sigma_rs = std::numeric_limits<double>::quiet_NaN();
  double speed_sigma_km_s = std::numeric_limits<double>::quiet_NaN();
  double accel_sigma_m_s2 = std::numeric_limits<double>::quiet_NaN();
  // False without per-point σ when n ≤ p + 1: a scale estimated from n − p ≤ 1 degrees
  // of freedom says nearly nothing (Student's t with 1 dof has no variance), so the fit
  // states no σ at all and `problem` says why.
  bool sigmas_known = false;
  bool covariance_scaled = false;
  // Small-sample widening of the reported σ when the scale is estimated from the scatter:
  // k = t_ν(0.97725) / 2, ν = n − p, so that ±2σ is the Student-t interval of the normal
  // ±2σ coverage (95.45 %; Student 1908 — common practice). 1 when σ are given.
  double coverage_factor = 1.0;
  // Half the difference between this law and one fitted to another reasonable definition
  // of the same leading edge (add_definition_spread), per parameter; 0 when none.
  Eigen::Vector3d definition_spread = Eigen::Vector3d::Zero();

  int dof = 0;                          // n − p
  double chi_square = 0.0;              // Σ ((h_i − h(t_i)) / σ_i)², σ_i = 1 R☉ when not given
  double residual_variance = 0.0;       // s² in R☉² without σ; reduced χ² with σ
  double residual_rms_rs = 0.0;         // √(mean (h_i − h(t_i))²), all points, unweighted
  std::vector<double> residuals_rs;     // h_i − h(t_i), in input order

  // Robust fits only: robust residual scale ŝ = 1.4826 · MAD · √(n/(n − p)) (in σ units
  // when σ are given, else R☉), the Huber threshold δ = 1.345 ŝ, and how many points lie
  // beyond δ (down-weighted by the loss).
  double robust_scale = 0.0;
  double huber_delta = 0.0;
  int downweighted = 0;

  HeightCrossing onset;     // h(t) = 1 R☉, the rising root at or before the first point
  HeightCrossing boundary;  // h(t) = 21.5 R☉ on the sky plane, the rising root
};

// Fits the chosen model to the points (any order).
HeightTimeFit fit_height_time(const std::vector<HeightTimePoint>& points, const HeightTimeOptions& options = {});

// P(|T| < t) for Student's t with `dof` ≥ 1 degrees of freedom, by the closed-form finite
// series of Abramowitz & Stegun (1964) 26.7.3–26.7.4.
double student_t_central(double t, int dof);

// k = t_ν(0.97725) / 2 (above): the t at which student_t_central equals erf(√2), halved.
double coverage_factor(int dof);

// Folds the systematic of the leading edge's definition into `fit`: `other` is the same
// model fitted to the same view's edge by another reasonable definition (e.g. the outer
// threshold edge instead of the band's edge_fraction edge). Each of (h at fit's t_ref, v,
// a) gets σ_sys = |θ − θ_other| / 2 added in quadrature to its reported σ, and the onset
// and 21.5 R☉ times likewise by half the difference of the two fits' crossings — the
// same construction as fit/shell_fit.hpp merge_edge_fits. No-op unless both fits are ok
// and fit has sigmas.
void add_definition_spread(HeightTimeFit& fit, const HeightTimeFit& other);

// When the fitted law rises through height_rs: the root of h(t) = height_rs where
// h′(t) > 0 (a quadratic has at most one), with σ from the fit covariance by first-order
// propagation, σ_t² = g C gᵀ, g = −∂h/∂(h₀, v, a) / h′(t). Not found when the law never
// rises through that height (it turns around below it, or is not rising at all).
HeightCrossing time_at_height(const HeightTimeFit& fit, double height_rs);

// Linear or quadratic: the small-sample Akaike information criterion (AICc; Akaike 1974,
// Hurvich & Tsai 1989 — common practice) for Gaussian errors,
//   without σ: AICc = n ln(SSR/n) + 2k + 2k(k+1)/(n − k − 1), k = p + 1 (s is estimated)
//   with σ:    AICc = χ²          + 2k + 2k(k+1)/(n − k − 1), k = p
// and the quadratic is chosen only when it lowers AICc by more than min_aicc_gain (2 is
// the usual threshold for "substantially better" — common practice). Robust fits: the
// comparison runs on plain fits to the points neither robust fit puts beyond 3 ŝ.
struct ModelChoice {
  HeightTimeFit chosen;  // a copy of linear or quadratic
  HeightTimeFit linear;
  HeightTimeFit quadratic;
  double aicc_linear = std::numeric_limits<double>::quiet_NaN();
  double aicc_quadratic = std::numeric_limits<double>::quiet_NaN();
  std::string reason;  // one sentence: why this model
};

// resolution_rs: HeightTimeOptions::resolution_rs for both fits.
ModelChoice choose_height_time_model(const std::vector<HeightTimePoint>& points, bool robust = false,
                                     double min_aicc_gain = 2.0, double resolution_rs = 0.0);

const char* to_string(HeightTimeModel model);  // "linear" | "quadratic"
const char* to_string(FitStatus status);       // "ok", "too few points", ...

}  // namespace occulta::fit
