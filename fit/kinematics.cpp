// fit/kinematics.cpp — height–time fits with Ceres (see kinematics.hpp for the models).
//
// Inside, time is τ = (t − t_ref) / T with T the RMS spread of the times about t_ref, and
// the parameters are θ = (h₀, v·T, a·T²), all in R☉. The columns 1, τ, τ² of the
// Jacobian then have comparable sizes, so the normal matrix Ceres inverts for the
// covariance is well conditioned whatever the cadence; the physical law and covariance
// follow by the diagonal change of variables D = diag(1, R☉/T, 1000 R☉/T²).
#include "fit/kinematics.hpp"

#include <ceres/ceres.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <memory>
#include <sstream>

#include "imaging/constants.hpp"

namespace occulta::fit {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Linear height–time residual, θ = (h₀, v·T) in R☉, τ dimensionless (above):
//   r_i = (h₀ + (vT)·τ_i − h_i) / σ_i     (σ_i = 1 R☉ when no σ are given)
struct LinearHeightResidual {
  double tau, height_rs, inv_sigma;
  template <typename T>
  bool operator()(const T* law, T* r) const {
    r[0] = (law[0] + law[1] * tau - height_rs) * inv_sigma;
    return true;
  }
};

// Quadratic height–time residual, θ = (h₀, v·T, a·T²) in R☉:
//   r_i = (h₀ + (vT)·τ_i + ½·(aT²)·τ_i² − h_i) / σ_i
struct QuadraticHeightResidual {
  double tau, height_rs, inv_sigma;
  template <typename T>
  bool operator()(const T* law, T* r) const {
    r[0] = (law[0] + law[1] * tau + 0.5 * law[2] * tau * tau - height_rs) * inv_sigma;
    return true;
  }
};

// The points, centred and scaled once.
struct Prepared {
  double ref_time_s = 0.0;
  double time_scale_s = 1.0;  // T
  bool has_sigma = false;
  std::vector<double> tau, height_rs, inv_sigma;
};

std::string number(double x, int precision = 4) {
  std::ostringstream out;
  out.precision(precision);
  out << x;
  return out.str();
}

// Says what is wrong with the points for a p-parameter fit, or "" when nothing is.
std::string check_points(const std::vector<HeightTimePoint>& points, int p, const char* model, FitStatus& status) {
  int with_sigma = 0;
  for (std::size_t i = 0; i < points.size(); ++i) {
    const HeightTimePoint& q = points[i];
    if (!std::isfinite(q.time_s) || !std::isfinite(q.height_rs) || !std::isfinite(q.sigma_rs) || q.sigma_rs < 0.0) {
      status = FitStatus::invalid_input;
      return "height–time point " + std::to_string(i) + " has a non-finite time or height, or a negative or non-finite sigma";
    }
    if (q.sigma_rs > 0.0) ++with_sigma;
  }
  if (with_sigma != 0 && with_sigma != static_cast<int>(points.size())) {
    status = FitStatus::invalid_input;
    return std::to_string(with_sigma) + " of " + std::to_string(points.size()) +
           " height–time points have a sigma; give one for every point or for none";
  }
  const int n = static_cast<int>(points.size());
  if (n < p) {
    status = FitStatus::too_few_points;
    return std::string("a ") + model + " height–time fit needs at least " + std::to_string(p) + " points; " +
           std::to_string(n) + (n == 1 ? " was" : " were") + " given";
  }
  std::vector<double> times;
  for (const auto& q : points) times.push_back(q.time_s);
  std::sort(times.begin(), times.end());
  const int distinct = static_cast<int>(std::unique(times.begin(), times.end()) - times.begin());
  if (distinct < p) {
    status = FitStatus::degenerate_times;
    return "the height–time points fall at only " + std::to_string(distinct) + " distinct time" +
           (distinct == 1 ? "" : "s") + "; a " + model + " fit needs " + std::to_string(p);
  }
  status = FitStatus::ok;
  return "";
}

Prepared prepare(const std::vector<HeightTimePoint>& points) {
  Prepared d;
  d.has_sigma = !points.empty() && points.front().sigma_rs > 0.0;
  // t_ref: the mean time, weighted by 1/σ² when σ are given — where h₀ and v of the
  // straight line are uncorrelated (normal equations; any least-squares text).
  double sw = 0.0, swt = 0.0;
  for (const auto& q : points) {
    const double w = d.has_sigma ? 1.0 / (q.sigma_rs * q.sigma_rs) : 1.0;
    sw += w;
    swt += w * q.time_s;
  }
  d.ref_time_s = swt / sw;
  double ss = 0.0;
  for (const auto& q : points) ss += (q.time_s - d.ref_time_s) * (q.time_s - d.ref_time_s);
  d.time_scale_s = std::sqrt(ss / static_cast<double>(points.size()));
  if (!(d.time_scale_s > 0.0)) d.time_scale_s = 1.0;
  for (const auto& q : points) {
    d.tau.push_back((q.time_s - d.ref_time_s) / d.time_scale_s);
    d.height_rs.push_back(q.height_rs);
    d.inv_sigma.push_back(d.has_sigma ? 1.0 / q.sigma_rs : 1.0);
  }
  return d;
}

double model_at(const std::array<double, 3>& theta, double tau) {
  return theta[0] + theta[1] * tau + 0.5 * theta[2] * tau * tau;
}

// Whitened residuals (h_i − h(t_i)) / σ_i.
std::vector<double> whitened_residuals(const Prepared& d, const std::array<double, 3>& theta) {
  std::vector<double> e(d.tau.size());
  for (std::size_t i = 0; i < e.size(); ++i) e[i] = (d.height_rs[i] - model_at(theta, d.tau[i])) * d.inv_sigma[i];
  return e;
}

double median(std::vector<double> x) {
  const std::size_t m = x.size() / 2;
  std::nth_element(x.begin(), x.begin() + static_cast<std::ptrdiff_t>(m), x.end());
  const double upper = x[m];
  if (x.size() % 2 == 1) return upper;
  return 0.5 * (upper + *std::max_element(x.begin(), x.begin() + static_cast<std::ptrdiff_t>(m)));
}

// Robust residual scale: 1.4826 · MAD (the normal-consistent median absolute deviation,
// common practice), times √(n/(n − p)) for the degrees of freedom the fit used, floored
// so that data exact to rounding still give a usable Huber threshold.
double robust_scale(const std::vector<double>& e, int p, double floor) {
  const double med = median(e);
  std::vector<double> dev;
  for (double x : e) dev.push_back(std::abs(x - med));
  const double n = static_cast<double>(e.size());
  const double s = 1.4826 * median(dev) * std::sqrt(n / (n - p));
  return std::max(s, floor);
}

struct Solved {
  bool ok = false;
  std::string problem;
  std::array<double, 3> theta{0.0, 0.0, 0.0};
  Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();  // of θ, unscaled ((JᵀJ)⁻¹)
};

// One least-squares problem over all points: plain when huber_delta is 0, else with
// ceres::HuberLoss(δ) on the whitened residuals (ρ(s) = s for s ≤ δ², 2δ√s − δ² above).
// The covariance is Ceres' (JᵀJ)⁻¹ at the solution, with the loss' reweighting of J
// applied, as ceres::Covariance evaluates it.
Solved solve(const Prepared& d, int p, double huber_delta, const std::array<double, 3>& start) {
  Solved out;
  out.theta = start;
  if (p == 2) out.theta[2] = 0.0;
  ceres::Problem problem;
  ceres::LossFunction* loss = huber_delta > 0.0 ? new ceres::HuberLoss(huber_delta) : nullptr;  // owned by problem
  for (std::size_t i = 0; i < d.tau.size(); ++i) {
    if (p == 2) {
      problem.AddResidualBlock(new ceres::AutoDiffCostFunction<LinearHeightResidual, 1, 2>(
                                   new LinearHeightResidual{d.tau[i], d.height_rs[i], d.inv_sigma[i]}),
                               loss, out.theta.data());
    } else {
      problem.AddResidualBlock(new ceres::AutoDiffCostFunction<QuadraticHeightResidual, 1, 3>(
                                   new QuadraticHeightResidual{d.tau[i], d.height_rs[i], d.inv_sigma[i]}),
                               loss, out.theta.data());
    }
  }
  ceres::Solver::Options options;
  options.linear_solver_type = ceres::DENSE_QR;
  options.max_num_iterations = 200;
  // The plain problems are linear: run Levenberg–Marquardt to rounding, so the answer is
  // the least-squares solution itself, not an approximation to it.
  options.function_tolerance = 1e-16;
  options.gradient_tolerance = 1e-16;
  options.parameter_tolerance = 1e-16;
  options.logging_type = ceres::SILENT;
  options.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(options, &problem, &summary);
  if (!summary.IsSolutionUsable()) {
    out.problem = "the height–time fit did not converge: " + summary.message;
    return out;
  }

  ceres::Covariance::Options cov_options;
  cov_options.algorithm_type = ceres::DENSE_SVD;  // p ≤ 3: exact, and reports rank deficiency
  cov_options.num_threads = 1;
  ceres::Covariance covariance(cov_options);
  const std::vector<std::pair<const double*, const double*>> blocks = {{out.theta.data(), out.theta.data()}};
  if (!covariance.Compute(blocks, &problem)) {
    out.problem = "the height–time fit's covariance is rank-deficient (times too close together for this model)";
    return out;
  }
  std::array<double, 9> c{};
  covariance.GetCovarianceBlock(out.theta.data(), out.theta.data(), c.data());
  for (int r = 0; r < p; ++r)
    for (int k = 0; k < p; ++k) out.covariance(r, k) = c[static_cast<std::size_t>(r * p + k)];
  out.ok = true;
  return out;
}

double sum_squares(const std::vector<double>& e) {
  double s = 0.0;
  for (double x : e) s += x * x;
  return s;
}

}  // namespace

const char* to_string(HeightTimeModel model) { return model == HeightTimeModel::linear ? "linear" : "quadratic"; }

const char* to_string(FitStatus status) {
  switch (status) {
    case FitStatus::ok: return "ok";
    case FitStatus::too_few_points: return "too few points";
    case FitStatus::degenerate_times: return "degenerate times";
    case FitStatus::invalid_input: return "invalid input";
    case FitStatus::solver_failed: return "solver failed";
  }
  return "unknown";
}

HeightCrossing time_at_height(const HeightTimeFit& fit, double height_rs) {
  HeightCrossing out;
  if (fit.status != FitStatus::ok) {
    out.problem = "no height–time fit to extrapolate (" + std::string(to_string(fit.status)) + ")";
    return out;
  }
  // The law in R☉ and seconds: h(τ) = h₀ + v τ + ½ a τ², τ = t − t_ref.
  const double h0 = fit.law.height_rs;
  const double v = fit.law.speed_km_s / kSolarRadiusKm;
  const double a = fit.law.accel_m_s2 / (1000.0 * kSolarRadiusKm);
  const double c = h0 - height_rs;
  // Roots of ½ a τ² + v τ + c = 0 have h′(τ) = v + a τ = ±√D, D = v² − 2 a c. The rising
  // one (h′ = +√D) is τ = (−v + √D)/a, written as −2c / (v + √D) so that it stays exact
  // as a → 0 (where it becomes −c/v) — the usual cancellation-free form of the root.
  const double disc = v * v - 2.0 * a * c;
  if (disc < 0.0) {
    const double turn_rs = h0 - v * v / (2.0 * a);
    out.problem = a < 0.0 ? "the fitted law tops out at " + number(turn_rs) + " R☉, below " + number(height_rs) + " R☉"
                          : "the fitted law never comes down to " + number(height_rs) + " R☉ (its lowest point is " +
                                number(turn_rs) + " R☉)";
    return out;
  }
  const double slope = std::sqrt(disc);  // h′ at the crossing, R☉/s
  const double denom = v + slope;
  if (!(denom > 0.0) || !(slope > 0.0)) {
    out.problem = "the fitted law does not rise through " + number(height_rs) + " R☉";
    return out;
  }
  const double tau = -2.0 * c / denom;
  out.found = true;
  out.time_s = fit.law.ref_time_s + tau;
  if (fit.sigmas_known) {
    // Implicit function h(τ; θ) = H: ∂τ/∂θ = −∂h/∂θ / h′(τ), θ = (h₀ [R☉], v [R☉/s], a [R☉/s²]).
    const Eigen::Vector3d to_rs(1.0, 1.0 / kSolarRadiusKm, 1.0 / (1000.0 * kSolarRadiusKm));
    const Eigen::Matrix3d cov_rs = to_rs.asDiagonal() * fit.covariance * to_rs.asDiagonal();
    const Eigen::Vector3d g = -Eigen::Vector3d(1.0, tau, 0.5 * tau * tau) / slope;
    out.sigma_s = fit.coverage_factor * std::sqrt(std::max(0.0, g.dot(cov_rs * g)));
  }
  return out;
}

HeightTimeFit fit_height_time(const std::vector<HeightTimePoint>& points, const HeightTimeOptions& options) {
  HeightTimeFit fit;
  fit.model = options.model;
  fit.robust = options.robust;
  fit.n_points = static_cast<int>(points.size());
  const int p = options.model == HeightTimeModel::linear ? 2 : 3;
  fit.n_params = p;
  fit.problem = check_points(points, p, to_string(options.model), fit.status);
  if (fit.status != FitStatus::ok) return fit;

  const Prepared d = prepare(points);
  const int n = fit.n_points;
  double mean_h = 0.0, max_abs = 0.0;
  for (std::size_t i = 0; i < d.height_rs.size(); ++i) {
    mean_h += d.height_rs[i] / n;
    max_abs = std::max(max_abs, std::abs(d.height_rs[i] * d.inv_sigma[i]));
  }

  Solved s = solve(d, p, 0.0, {mean_h, 0.0, 0.0});
  if (s.ok && options.robust && n > p) {
    // Huber loss with δ = 1.345 ŝ (Huber's constant for 95 % efficiency at the normal —
    // common practice), ŝ from the residual MAD of the plain fit, then once more from the
    // first robust fit's residuals, whose MAD an outlier no longer inflates.
    // The floor: rounding for data exact to it, else the measurement's own resolution, so
    // that δ never shrinks below what the points can resolve.
    const double floor = std::max(1e-9 * std::max(1.0, max_abs), d.has_sigma ? 0.0 : options.resolution_rs);
    for (int pass = 0; pass < 2 && s.ok; ++pass) {
      fit.robust_scale = robust_scale(whitened_residuals(d, s.theta), p, floor);
      fit.huber_delta = 1.345 * fit.robust_scale;
      s = solve(d, p, fit.huber_delta, s.theta);
    }
    if (s.ok) fit.robust_scale = robust_scale(whitened_residuals(d, s.theta), p, floor);
  }
  if (!s.ok) {
    fit.status = FitStatus::solver_failed;
    fit.problem = s.problem;
    return fit;
  }

  const std::vector<double> e = whitened_residuals(d, s.theta);
  fit.dof = n - p;
  fit.chi_square = sum_squares(e);
  double ssr_rs = 0.0;
  for (std::size_t i = 0; i < e.size(); ++i) {
    fit.residuals_rs.push_back(e[i] / d.inv_sigma[i]);
    ssr_rs += fit.residuals_rs.back() * fit.residuals_rs.back();
    if (options.robust && fit.huber_delta > 0.0 && std::abs(e[i]) > fit.huber_delta) ++fit.downweighted;
  }
  fit.residual_rms_rs = std::sqrt(ssr_rs / n);
  if (options.robust && n <= p)
    fit.problem = "a robust fit needs more points than parameters to judge outliers; this one is the plain fit";

  const double T = d.time_scale_s;
  fit.law.ref_time_s = d.ref_time_s;
  fit.law.height_rs = s.theta[0];
  fit.law.speed_km_s = s.theta[1] / T * kSolarRadiusKm;
  fit.law.accel_m_s2 = s.theta[2] / (T * T) * 1000.0 * kSolarRadiusKm;

  fit.covariance_scaled = !d.has_sigma;
  // Without σ the scale comes from the scatter, and n − p ≤ 1 degrees of freedom cannot
  // give one worth stating (kinematics.hpp).
  fit.sigmas_known = d.has_sigma || fit.dof > 1;
  double scale = 1.0;  // with σ: the covariance stands as Ceres gives it
  if (!d.has_sigma && fit.dof > 0) {
    // No σ given: each residual had σ = 1 R☉ in the problem, so scale the covariance by
    // the estimated residual variance — s² = SSR/(n − p) for plain fits, ŝ² (robust MAD
    // scale) for robust ones, which an outlier does not inflate, but never below SSR/(n − p)
    // when the MAD rests on too few residuals, nor below the resolution (kinematics.hpp).
    fit.residual_variance = fit.chi_square / fit.dof;
    scale = fit.residual_variance;
    if (options.robust && n > p) {
      constexpr int kFewDof = 6;  // below this the MAD is too unstable to trust alone (our choice)
      const double robust2 = fit.robust_scale * fit.robust_scale;
      scale = fit.dof < kFewDof ? std::max(robust2, fit.residual_variance) : robust2;
    }
    scale = std::max(scale, options.resolution_rs * options.resolution_rs);
    fit.coverage_factor = coverage_factor(fit.dof);
  } else if (d.has_sigma && fit.dof > 0) {
    fit.residual_variance = fit.chi_square / fit.dof;  // reduced χ²
  }
  const Eigen::Vector3d to_physical(1.0, kSolarRadiusKm / T, 1000.0 * kSolarRadiusKm / (T * T));
  if (fit.sigmas_known) {
    fit.covariance = scale * (to_physical.asDiagonal() * s.covariance * to_physical.asDiagonal());
    const double k = fit.coverage_factor;
    fit.height_sigma_rs = k * std::sqrt(fit.covariance(0, 0));
    fit.speed_sigma_km_s = k * std::sqrt(fit.covariance(1, 1));
    fit.accel_sigma_m_s2 = p == 3 ? k * std::sqrt(fit.covariance(2, 2)) : 0.0;
  } else {
    fit.covariance.setConstant(kNaN);
    fit.problem = "the " + std::string(to_string(options.model)) + " law has " + std::to_string(n) +
                  " points for its " + std::to_string(p) +
                  " parameters, too few to estimate its uncertainties from their scatter; they need " +
                  std::to_string(p + 2) + " points, or a sigma for each point";
  }

  fit.onset = time_at_height(fit, kOnsetHeightRs);
  const double first_s = std::min_element(points.begin(), points.end(), [](const auto& x, const auto& y) {
                           return x.time_s < y.time_s;
                         })->time_s;
  if (fit.onset.found && fit.onset.time_s > first_s + 1e-6) {
    fit.onset = HeightCrossing{};
    fit.onset.problem = "the fitted law is still below 1 R☉ at the first point, so it gives no onset before it";
  }
  fit.boundary = time_at_height(fit, kBoundaryHeightRs);
  return fit;
}

double student_t_central(double t, int dof) {
  // Abramowitz & Stegun (1964) 26.7.3 (ν odd) and 26.7.4 (ν even), θ = atan(t/√ν):
  //   ν odd:  A = (2/π) [θ + sin θ (cos θ + (2/3) cos³θ + … + (2·4…(ν−3))/(1·3…(ν−2)) cos^(ν−2) θ)]
  //   ν even: A = sin θ [1 + (1/2) cos²θ + (1·3)/(2·4) cos⁴θ + … + (1·3…(ν−3))/(2·4…(ν−2)) cos^(ν−2) θ]
  if (!(t > 0.0) || dof < 1) return 0.0;
  const double theta = std::atan(t / std::sqrt(static_cast<double>(dof)));
  const double c = std::cos(theta), c2 = c * c, sn = std::sin(theta);
  if (dof % 2 == 1) {
    double sum = 0.0, term = c;  // the bracket's terms: c, (2/3)c³, (2·4)/(3·5)c⁵, …
    if (dof >= 3) {
      sum = term;
      for (int k = 3; k <= dof - 2; k += 2) {
        term *= c2 * (k - 1.0) / k;
        sum += term;
      }
    }
    return 2.0 / kPi * (theta + sn * sum);
  }
  double sum = 1.0, term = 1.0;  // 1, (1/2)c², (1·3)/(2·4)c⁴, …
  for (int k = 2; k <= dof - 2; k += 2) {
    term *= c2 * (k - 1.0) / k;
    sum += term;
  }
  return sn * sum;
}

double coverage_factor(int dof) {
  if (dof < 1) return kNaN;
  const double target = std::erf(std::sqrt(2.0));  // P(|Z| < 2), 0.9545
  // Bisection on the monotone A(t|ν) between 2 (the normal limit) and a t far beyond
  // t_1(0.97725) ≈ 14.0.
  double lo = 2.0, hi = 64.0;
  for (int i = 0; i < 100; ++i) {
    const double mid = 0.5 * (lo + hi);
    (student_t_central(mid, dof) < target ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi) / 2.0;
}

void add_definition_spread(HeightTimeFit& fit, const HeightTimeFit& other) {
  if (fit.status != FitStatus::ok || other.status != FitStatus::ok || !fit.sigmas_known) return;
  const double t = fit.law.ref_time_s;
  const Eigen::Vector3d spread(0.5 * std::abs(fit.law.height_rs - other.law.height_at(t)),
                               0.5 * std::abs(fit.law.speed_km_s - other.law.speed_at(t)),
                               0.5 * std::abs(fit.law.accel_m_s2 - other.law.accel_m_s2));
  fit.definition_spread = spread;
  fit.height_sigma_rs = std::hypot(fit.height_sigma_rs, spread(0));
  fit.speed_sigma_km_s = std::hypot(fit.speed_sigma_km_s, spread(1));
  if (fit.model == HeightTimeModel::quadratic) fit.accel_sigma_m_s2 = std::hypot(fit.accel_sigma_m_s2, spread(2));
  for (auto [mine, theirs] : {std::pair{&fit.onset, &other.onset}, std::pair{&fit.boundary, &other.boundary}})
    if (mine->found && theirs->found && std::isfinite(mine->sigma_s))
      mine->sigma_s = std::hypot(mine->sigma_s, 0.5 * std::abs(mine->time_s - theirs->time_s));
}

namespace {

// AICc of a finished fit on n points (formula in kinematics.hpp).
double aicc(const HeightTimeFit& fit, bool has_sigma, double ssr_floor_rs2) {
  const double n = fit.n_points;
  const double k = fit.n_params + (has_sigma ? 0 : 1);
  const double fit_term = has_sigma ? fit.chi_square : n * std::log(std::max(fit.chi_square, ssr_floor_rs2) / n);
  return fit_term + 2.0 * k + 2.0 * k * (k + 1.0) / (n - k - 1.0);
}

}  // namespace

ModelChoice choose_height_time_model(const std::vector<HeightTimePoint>& points, bool robust, double min_aicc_gain,
                                     double resolution_rs) {
  ModelChoice out;
  out.linear = fit_height_time(points, {HeightTimeModel::linear, robust, resolution_rs});
  out.quadratic = fit_height_time(points, {HeightTimeModel::quadratic, robust, resolution_rs});
  out.chosen = out.linear;
  if (out.linear.status != FitStatus::ok) {
    out.reason = "no linear fit: " + out.linear.problem;
    return out;
  }
  if (out.quadratic.status != FitStatus::ok) {
    out.reason = "linear, because the quadratic cannot be fitted: " + out.quadratic.problem;
    return out;
  }

  // The points the comparison runs on: all of them, or those both robust fits keep.
  std::vector<HeightTimePoint> kept;
  for (std::size_t i = 0; i < points.size(); ++i) {
    const double inv_sigma = points[i].sigma_rs > 0.0 ? 1.0 / points[i].sigma_rs : 1.0;
    const bool inside = !robust || (std::abs(out.linear.residuals_rs[i] * inv_sigma) <= 3.0 * out.linear.robust_scale &&
                                    std::abs(out.quadratic.residuals_rs[i] * inv_sigma) <= 3.0 * out.quadratic.robust_scale);
    if (inside) kept.push_back(points[i]);
  }
  const bool has_sigma = points.front().sigma_rs > 0.0;
  const int n = static_cast<int>(kept.size());
  const int k_quadratic = 3 + (has_sigma ? 0 : 1);
  if (n - k_quadratic - 1 < 1) {
    out.reason = "linear, because weighing a quadratic by AICc needs at least " + std::to_string(k_quadratic + 2) +
                 " points" + (robust ? " that the robust fits keep" : "") + "; there are " + std::to_string(n);
    return out;
  }
  const HeightTimeFit lin = robust ? fit_height_time(kept, {HeightTimeModel::linear, false}) : out.linear;
  const HeightTimeFit quad = robust ? fit_height_time(kept, {HeightTimeModel::quadratic, false}) : out.quadratic;
  if (lin.status != FitStatus::ok || quad.status != FitStatus::ok) {
    out.reason = "linear, because the points the robust fits keep cannot be refitted: " +
                 (lin.status != FitStatus::ok ? lin.problem : quad.problem);
    return out;
  }
  // Data exact to ~1e-9 of their size count as exact: otherwise rounding noise in a
  // near-zero SSR would decide the choice through ln(SSR).
  double max_abs = 1.0;
  for (const auto& q : kept) max_abs = std::max(max_abs, std::abs(q.height_rs));
  const double ssr_floor = n * (1e-9 * max_abs) * (1e-9 * max_abs);
  out.aicc_linear = aicc(lin, has_sigma, ssr_floor);
  out.aicc_quadratic = aicc(quad, has_sigma, ssr_floor);
  const double gain = out.aicc_linear - out.aicc_quadratic;
  if (gain > min_aicc_gain) {
    out.chosen = out.quadratic;
    out.reason = "quadratic: it lowers AICc by " + number(gain, 3) + " (more than " + number(min_aicc_gain, 3) + ")";
  } else {
    out.reason = "linear: the quadratic lowers AICc by only " + number(gain, 3) + " (needs more than " +
                 number(min_aicc_gain, 3) + ")";
  }
  return out;
}

}  // namespace occulta::fit
