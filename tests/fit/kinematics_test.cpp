// tests/fit/kinematics_test.cpp — height–time fits against the closed-form least-squares
// solution, numpy.polyfit (Debian's python3-numpy), the straight-line covariance formula,
// the exact inverse of the fitted law, and Monte-Carlo repetitions of noisy data.
//
// The points are made here from a known law plus seeded Gaussian noise; they are inputs,
// never check values: every expected number below is computed from them by an
// independent route named beside the assertion.
#include <doctest/doctest.h>

#include <Eigen/Cholesky>
#include <Eigen/Dense>
#include <nlohmann/json.hpp>

#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "fit/kinematics.hpp"
#include "imaging/constants.hpp"
#include "tests/support/support.hpp"

using namespace occulta;
using namespace occulta::fit;

namespace {

constexpr double kStart = 1.0e9;     // UTC seconds since 2000-01-01 (an arbitrary day in 2031)
constexpr double kCadence = 600.0;   // s
constexpr double kRsPerKm = 1.0 / kSolarRadiusKm;

ApexLaw make_law(double h0, double v_km_s, double a_m_s2) {
  ApexLaw law;
  law.ref_time_s = kStart;
  law.height_rs = h0;
  law.speed_km_s = v_km_s;
  law.accel_m_s2 = a_m_s2;
  return law;
}

// n points at the cadence (with a little irregular spacing so that the times are not a
// perfectly symmetric grid), heights from the law plus N(0, noise²); sigma_rs as given.
std::vector<HeightTimePoint> make_points(const ApexLaw& law, int n, double noise_rs, std::mt19937_64& rng,
                                         double sigma_rs = 0.0) {
  std::normal_distribution<double> gauss(0.0, 1.0);
  std::vector<HeightTimePoint> points;
  for (int i = 0; i < n; ++i) {
    const double t = kStart + kCadence * i + 37.0 * std::sin(1.7 * i);
    points.push_back({t, law.height_at(t) + noise_rs * gauss(rng), sigma_rs});
  }
  return points;
}

double relative(double got, double want) { return std::abs(got - want) / std::abs(want); }

// Weighted normal equations (Bevington & Robinson, "Data Reduction and Error Analysis",
// ch. 7; any least-squares text): with X the design matrix in x = (t − t_ref) in hours
// (hours keep XᵀX well conditioned in plain double) and W = diag(1/σ²),
//   β = (XᵀWX)⁻¹ XᵀW h,   cov β = (XᵀWX)⁻¹ (× s² = SSR/(n − p) when σ are unknown, W = 1).
struct NormalSolution {
  Eigen::Vector3d physical;     // (h0 R☉, v km/s, a m/s²)
  Eigen::Matrix3d covariance;   // of physical
};

NormalSolution normal_equations(const std::vector<HeightTimePoint>& points, double t_ref, int p) {
  const int n = static_cast<int>(points.size());
  Eigen::MatrixXd X(n, p);
  Eigen::VectorXd h(n), w(n);
  const bool sigma = points.front().sigma_rs > 0.0;
  for (int i = 0; i < n; ++i) {
    const double x = (points[static_cast<std::size_t>(i)].time_s - t_ref) / 3600.0;
    X(i, 0) = 1.0;
    X(i, 1) = x;
    if (p == 3) X(i, 2) = 0.5 * x * x;
    h(i) = points[static_cast<std::size_t>(i)].height_rs;
    w(i) = sigma ? 1.0 / std::pow(points[static_cast<std::size_t>(i)].sigma_rs, 2) : 1.0;
  }
  const Eigen::MatrixXd A = X.transpose() * w.asDiagonal() * X;
  const Eigen::VectorXd beta = A.ldlt().solve(X.transpose() * w.asDiagonal() * h);
  Eigen::MatrixXd cov = A.inverse();
  if (!sigma) cov *= (h - X * beta).squaredNorm() / (n - p);
  // R☉/h → km/s and R☉/h² → m/s².
  Eigen::Vector3d to_physical(1.0, kSolarRadiusKm / 3600.0, 1000.0 * kSolarRadiusKm / (3600.0 * 3600.0));
  NormalSolution out;
  out.physical = Eigen::Vector3d::Zero();
  out.covariance = Eigen::Matrix3d::Zero();
  for (int r = 0; r < p; ++r) {
    out.physical(r) = beta(r) * to_physical(r);
    for (int k = 0; k < p; ++k) out.covariance(r, k) = cov(r, k) * to_physical(r) * to_physical(k);
  }
  return out;
}

void check_against(const HeightTimeFit& fit, const NormalSolution& want, double tol) {
  const int p = fit.n_params;
  CHECK(fit.law.height_rs == doctest::Approx(want.physical(0)).epsilon(tol));
  CHECK(fit.law.speed_km_s == doctest::Approx(want.physical(1)).epsilon(tol));
  if (p == 3) CHECK(fit.law.accel_m_s2 == doctest::Approx(want.physical(2)).epsilon(tol));
  for (int r = 0; r < p; ++r)
    for (int k = 0; k < p; ++k) {
      // Off-diagonal terms relative to the diagonal scale, so near-zero ones compare sanely.
      const double scale = std::sqrt(want.covariance(r, r) * want.covariance(k, k));
      CHECK(std::abs(fit.covariance(r, k) - want.covariance(r, k)) / scale < tol);
    }
}

nlohmann::json polyfit(int degree, double ref_time_s, const std::vector<HeightTimePoint>& points) {
  std::string args = std::to_string(degree) + " ";
  char buf[128];
  std::snprintf(buf, sizeof buf, "%.17g", ref_time_s);
  args += buf;
  for (const auto& q : points) {
    if (q.sigma_rs > 0.0) std::snprintf(buf, sizeof buf, " %.17g,%.17g,%.17g", q.time_s, q.height_rs, q.sigma_rs);
    else std::snprintf(buf, sizeof buf, " %.17g,%.17g", q.time_s, q.height_rs);
    args += buf;
  }
  const auto run = occulta::test::run_python("tests/external/polyfit_reference.py", args);
  REQUIRE_MESSAGE(run.exit_code == 0, run.output);
  return nlohmann::json::parse(run.output);
}

double standard_deviation(const std::vector<double>& x) {
  double mean = 0.0;
  for (double v : x) mean += v / static_cast<double>(x.size());
  double ss = 0.0;
  for (double v : x) ss += (v - mean) * (v - mean);
  return std::sqrt(ss / static_cast<double>(x.size() - 1));
}

double mean(const std::vector<double>& x) {
  double m = 0.0;
  for (double v : x) m += v / static_cast<double>(x.size());
  return m;
}

}  // namespace

TEST_CASE("kinematics: linear fit equals the closed-form least-squares line") {
  std::mt19937_64 rng(11);
  const auto points = make_points(make_law(3.0, 750.0, 0.0), 12, 0.08, rng);
  const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, false});
  REQUIRE(fit.status == FitStatus::ok);
  CHECK(fit.problem.empty());

  // Straight line by least squares (Bevington & Robinson ch. 6; any least-squares text):
  //   slope b = Σ(t − t̄)(h − h̄) / Σ(t − t̄)²,   h(t̄) = h̄.
  const double n = static_cast<double>(points.size());
  double t_mean = 0.0, h_mean = 0.0;
  for (const auto& q : points) {
    t_mean += q.time_s / n;
    h_mean += q.height_rs / n;
  }
  double sxx = 0.0, sxy = 0.0;
  for (const auto& q : points) {
    sxx += (q.time_s - t_mean) * (q.time_s - t_mean);
    sxy += (q.time_s - t_mean) * (q.height_rs - h_mean);
  }
  const double slope_rs_s = sxy / sxx;
  CHECK(fit.law.ref_time_s == doctest::Approx(t_mean).epsilon(1e-15));
  CHECK(fit.law.height_rs == doctest::Approx(h_mean).epsilon(1e-11));
  CHECK(fit.law.speed_km_s == doctest::Approx(slope_rs_s * kSolarRadiusKm).epsilon(1e-10));
  CHECK(fit.law.accel_m_s2 == 0.0);

  double ssr = 0.0;
  for (std::size_t i = 0; i < points.size(); ++i) {
    const double r = points[i].height_rs - (h_mean + slope_rs_s * (points[i].time_s - t_mean));
    ssr += r * r;
    CHECK(fit.residuals_rs[i] == doctest::Approx(r).epsilon(1e-8));
  }
  CHECK(fit.dof == 10);
  CHECK(fit.residual_variance == doctest::Approx(ssr / (n - 2)).epsilon(1e-9));
  CHECK(fit.residual_rms_rs == doctest::Approx(std::sqrt(ssr / n)).epsilon(1e-9));
  CHECK(fit.covariance_scaled);
  CHECK(fit.sigmas_known);
}

TEST_CASE("kinematics: straight-line covariance matches sigma_v^2 = s^2 / sum (t - tbar)^2 and sigma_h0^2 = s^2 / n") {
  // Bevington & Robinson ch. 6 (standard straight-line fit, σ unknown and estimated by
  // s² = SSR/(n − 2)): σ_b² = s² / Σ(t − t̄)², at t̄ the intercept has σ² = s²/n and is
  // uncorrelated with the slope.
  std::mt19937_64 rng(12);
  const auto points = make_points(make_law(4.0, 1200.0, 0.0), 9, 0.15, rng);
  const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, false});
  REQUIRE(fit.status == FitStatus::ok);
  const double n = static_cast<double>(points.size());
  double t_mean = 0.0;
  for (const auto& q : points) t_mean += q.time_s / n;
  double sxx = 0.0;
  for (const auto& q : points) sxx += (q.time_s - t_mean) * (q.time_s - t_mean);
  const double s2 = fit.residual_variance;  // itself checked against the closed form above
  CHECK(fit.covariance(0, 0) == doctest::Approx(s2 / n).epsilon(1e-9));
  CHECK(fit.covariance(1, 1) == doctest::Approx(s2 / sxx * kSolarRadiusKm * kSolarRadiusKm).epsilon(1e-9));
  CHECK(std::abs(fit.covariance(0, 1)) < 1e-9 * std::sqrt(fit.covariance(0, 0) * fit.covariance(1, 1)));
  // The reported σ are the standard errors widened by k = t_ν(0.97725)/2 (kinematics.hpp),
  // itself checked against scipy below.
  CHECK(fit.coverage_factor == doctest::Approx(coverage_factor(7)).epsilon(1e-12));
  CHECK(fit.speed_sigma_km_s == doctest::Approx(fit.coverage_factor * std::sqrt(s2 / sxx) * kSolarRadiusKm).epsilon(1e-9));
  CHECK(fit.height_sigma_rs == doctest::Approx(fit.coverage_factor * std::sqrt(s2 / n)).epsilon(1e-9));
  CHECK(fit.accel_sigma_m_s2 == 0.0);
}

TEST_CASE("kinematics: quadratic and weighted fits equal the normal-equation solution") {
  std::mt19937_64 rng(13);
  SUBCASE("quadratic, sigma unknown (covariance scaled by s^2)") {
    const auto points = make_points(make_law(2.8, 500.0, 35.0), 14, 0.05, rng);
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::quadratic, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK(fit.covariance_scaled);
    check_against(fit, normal_equations(points, fit.law.ref_time_s, 3), 1e-8);
  }
  SUBCASE("quadratic, per-point sigma (covariance unscaled)") {
    auto points = make_points(make_law(3.5, 1500.0, -25.0), 11, 0.0, rng);
    std::normal_distribution<double> gauss(0.0, 1.0);
    for (std::size_t i = 0; i < points.size(); ++i) {
      points[i].sigma_rs = 0.03 + 0.02 * static_cast<double>(i);  // farther = fainter = worse
      points[i].height_rs += points[i].sigma_rs * gauss(rng);
    }
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::quadratic, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK_FALSE(fit.covariance_scaled);
    check_against(fit, normal_equations(points, fit.law.ref_time_s, 3), 1e-8);
  }
  SUBCASE("linear, per-point sigma: t_ref is the 1/sigma^2-weighted mean time") {
    auto points = make_points(make_law(5.0, 900.0, 0.0), 8, 0.0, rng);
    std::normal_distribution<double> gauss(0.0, 1.0);
    double sw = 0.0, swt = 0.0;
    for (std::size_t i = 0; i < points.size(); ++i) {
      points[i].sigma_rs = 0.2 - 0.02 * static_cast<double>(i);
      points[i].height_rs += points[i].sigma_rs * gauss(rng);
      sw += 1.0 / std::pow(points[i].sigma_rs, 2);
      swt += points[i].time_s / std::pow(points[i].sigma_rs, 2);
    }
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK(fit.law.ref_time_s == doctest::Approx(swt / sw).epsilon(1e-15));
    const NormalSolution want = normal_equations(points, fit.law.ref_time_s, 2);
    check_against(fit, want, 1e-8);
    // At the weighted mean time h₀ and v are uncorrelated (normal equations: the
    // off-diagonal Σ w (t − t_ref) vanishes there).
    CHECK(std::abs(want.covariance(0, 1)) < 1e-9 * std::sqrt(want.covariance(0, 0) * want.covariance(1, 1)));
  }
}

TEST_CASE("kinematics: fits agree with numpy.polyfit on the same points") {
  // Reference: numpy.polyfit from Debian's python3-numpy (tests/external/polyfit_reference.py).
  // Without sigmas it runs with cov=True (numpy scales by χ²/(n − deg − 1) = s², as we
  // do); with sigmas, w = 1/σ and cov="unscaled" (σ absolute, as we take them).
  std::mt19937_64 rng(14);
  struct Case {
    int degree;
    double sigma;
  };
  for (const Case c : {Case{1, 0.0}, Case{2, 0.0}, Case{1, 0.07}, Case{2, 0.07}}) {
    CAPTURE(c.degree);
    CAPTURE(c.sigma);
    const auto points = make_points(make_law(3.2, 820.0, c.degree == 2 ? 18.0 : 0.0), 13, 0.07, rng, c.sigma);
    const HeightTimeFit fit =
        fit_height_time(points, {c.degree == 1 ? HeightTimeModel::linear : HeightTimeModel::quadratic, false});
    REQUIRE(fit.status == FitStatus::ok);
    const nlohmann::json ref = polyfit(c.degree, fit.law.ref_time_s, points);
    CHECK(ref["cov_mode"] == (c.sigma > 0.0 ? "unscaled" : "scaled"));
    // numpy's coefficients come highest power first, in R☉, s: map them onto
    // (h₀ R☉, v km/s, a m/s²) — h = k_deg·x⁰ + k_{deg−1}·x + k_{deg−2}·x², a = 2 k·1000 R☉.
    const int p = c.degree + 1;
    Eigen::Vector3d scale(1.0, kSolarRadiusKm, 2000.0 * kSolarRadiusKm);
    Eigen::Vector3d want = Eigen::Vector3d::Zero();
    Eigen::Matrix3d want_cov = Eigen::Matrix3d::Zero();
    for (int r = 0; r < p; ++r) {
      want(r) = ref["coefficients"][static_cast<std::size_t>(c.degree - r)].get<double>() * scale(r);
      for (int k = 0; k < p; ++k)
        want_cov(r, k) = ref["covariance"][static_cast<std::size_t>(c.degree - r)][static_cast<std::size_t>(c.degree - k)]
                             .get<double>() *
                         scale(r) * scale(k);
    }
    check_against(fit, NormalSolution{want, want_cov}, 1e-7);
  }
}

TEST_CASE("kinematics: a robust fit ignores an outlier that ruins the plain fit") {
  std::mt19937_64 rng(15);
  const ApexLaw truth = make_law(3.0, 600.0, 0.0);
  const auto clean = make_points(truth, 12, 0.05, rng);
  auto spoiled = clean;
  spoiled[10].height_rs += 3.0;  // a streamer or cosmic ray taken for the front
  const HeightTimeFit reference = fit_height_time(clean, {HeightTimeModel::linear, false});
  const HeightTimeFit plain = fit_height_time(spoiled, {HeightTimeModel::linear, false});
  const HeightTimeFit robust = fit_height_time(spoiled, {HeightTimeModel::linear, true});
  REQUIRE(robust.status == FitStatus::ok);
  // The outlier pulls the plain slope by ~3 R☉ · (t₁₀ − t̄)/Σ(t − t̄)² ≈ 110 km/s.
  CHECK(relative(plain.law.speed_km_s, truth.speed_km_s) > 0.10);
  CHECK(relative(robust.law.speed_km_s, reference.law.speed_km_s) < 0.02);
  CHECK(std::abs(robust.law.speed_km_s - truth.speed_km_s) < 3.0 * robust.speed_sigma_km_s);
  CHECK(robust.downweighted >= 1);
  CHECK(std::abs(robust.residuals_rs[10]) > 2.5);  // the outlier stands out of the robust line
  // The robust scale reflects the 0.05 R☉ noise, not the 3 R☉ outlier (MAD: breakdown 50 %).
  CHECK(robust.robust_scale > 0.02);
  CHECK(robust.robust_scale < 0.10);
  // Its speed sigma stays near that of the clean fit (within the MAD scale's own ~35 %
  // scatter at n = 12), while the outlier inflates the plain fit's s roughly 18-fold.
  CHECK(robust.speed_sigma_km_s < 2.0 * reference.speed_sigma_km_s);
  CHECK(plain.speed_sigma_km_s > 5.0 * reference.speed_sigma_km_s);

  SUBCASE("with per-point sigma: the robust scale is in sigma units and the covariance unscaled") {
    auto spoiled_s = spoiled;
    for (auto& q : spoiled_s) q.sigma_rs = 0.05;  // the noise the points were made with
    const HeightTimeFit robust_s = fit_height_time(spoiled_s, {HeightTimeModel::linear, true});
    REQUIRE(robust_s.status == FitStatus::ok);
    CHECK_FALSE(robust_s.covariance_scaled);
    CHECK(robust_s.robust_scale > 0.4);  // ≈ 1 when the sigmas are right
    CHECK(robust_s.robust_scale < 2.0);
    CHECK(relative(robust_s.law.speed_km_s, reference.law.speed_km_s) < 0.02);
    CHECK(robust_s.downweighted >= 1);
  }
  SUBCASE("quadratic") {
    const auto clean_q = make_points(make_law(2.5, 400.0, 40.0), 15, 0.04, rng);
    const HeightTimeFit ref_q = fit_height_time(clean_q, {HeightTimeModel::quadratic, false});
    auto spoiled_q = clean_q;
    spoiled_q[8].height_rs -= 2.0;  // mid-track, where a low point bends the plain parabola most
    const HeightTimeFit plain_q = fit_height_time(spoiled_q, {HeightTimeModel::quadratic, false});
    const HeightTimeFit robust_q = fit_height_time(spoiled_q, {HeightTimeModel::quadratic, true});
    REQUIRE(robust_q.status == FitStatus::ok);
    CHECK(std::abs(plain_q.law.accel_m_s2 - ref_q.law.accel_m_s2) > 5.0 * ref_q.accel_sigma_m_s2);
    // The plain shift is the outlier times its weight in the a-estimator (~13σ here); the
    // Huber fit keeps a bounded pull of ≲ 1σ plus its own ~5 % efficiency loss.
    CHECK(std::abs(robust_q.law.accel_m_s2 - ref_q.law.accel_m_s2) < 2.0 * ref_q.accel_sigma_m_s2);
    CHECK(robust_q.downweighted >= 1);

    // At the last point (the highest leverage for a) Huber's bounded but non-zero
    // influence still leaves part of the pull (Huber 1981: bounded influence in the
    // residual, not in leverage — from memory): require it to be cut at least fivefold.
    auto end_q = clean_q;
    end_q[14].height_rs -= 2.0;
    const double plain_shift = fit_height_time(end_q, {HeightTimeModel::quadratic, false}).law.accel_m_s2 - ref_q.law.accel_m_s2;
    const double robust_shift = fit_height_time(end_q, {HeightTimeModel::quadratic, true}).law.accel_m_s2 - ref_q.law.accel_m_s2;
    CHECK(std::abs(plain_shift) > 10.0 * ref_q.accel_sigma_m_s2);
    CHECK(std::abs(robust_shift) < 0.2 * std::abs(plain_shift));
  }
}

TEST_CASE("kinematics: onset and 21.5 Rs times invert the fitted law exactly") {
  std::mt19937_64 rng(16);
  SUBCASE("linear: t = t_ref + (H - h0)/v, sigma^2 = (sigma_h0^2 + tau^2 sigma_v^2) / v^2") {
    const auto points = make_points(make_law(4.0, 700.0, 0.0), 10, 0.06, rng);
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, false});
    REQUIRE(fit.onset.found);
    REQUIRE(fit.boundary.found);
    const double v = fit.law.speed_km_s * kRsPerKm;  // R☉/s
    for (const auto& [crossing, height] : {std::pair{fit.onset, kOnsetHeightRs}, std::pair{fit.boundary, kBoundaryHeightRs}}) {
      const double target_rs = height;  // named copy: clang 14 cannot capture a structured binding
      CAPTURE(target_rs);
      const double tau = (height - fit.law.height_rs) / v;  // exact inverse of h = h₀ + v τ
      CHECK(crossing.time_s == doctest::Approx(fit.law.ref_time_s + tau).epsilon(1e-12));
      CHECK(fit.law.height_at(crossing.time_s) == doctest::Approx(height).epsilon(1e-9));
      // First-order propagation through τ = (H − h₀)/v with h₀, v uncorrelated at t̄
      // (standard error propagation, e.g. Bevington & Robinson ch. 3).
      const double sv = fit.speed_sigma_km_s * kRsPerKm;
      const double want = std::sqrt(fit.height_sigma_rs * fit.height_sigma_rs + tau * tau * sv * sv) / std::abs(v);
      CHECK(crossing.sigma_s == doctest::Approx(want).epsilon(1e-6));
    }
    CHECK(fit.onset.time_s < points.front().time_s);
    CHECK(fit.boundary.time_s > points.back().time_s);
  }
  SUBCASE("quadratic, decelerating: the rising root of h(t) = H, not the earlier falling one") {
    const auto points = make_points(make_law(3.0, 1400.0, -60.0), 14, 0.03, rng);
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::quadratic, false});
    REQUIRE(fit.status == FitStatus::ok);
    REQUIRE(fit.law.accel_m_s2 < 0.0);
    REQUIRE(fit.onset.found);
    const double v = fit.law.speed_km_s * kRsPerKm, a = fit.law.accel_m_s2 * kRsPerKm / 1000.0;
    for (const auto& [crossing, height] : {std::pair{fit.onset, kOnsetHeightRs}, std::pair{fit.boundary, kBoundaryHeightRs}}) {
      const double target_rs = height;  // named copy: clang 14 cannot capture a structured binding
      CAPTURE(target_rs);
      REQUIRE(crossing.found);
      // Textbook quadratic formula, both roots of ½ a τ² + v τ + (h₀ − H) = 0.
      const double c = fit.law.height_rs - height;
      const double root_a = (-v + std::sqrt(v * v - 2.0 * a * c)) / a;
      const double root_b = (-v - std::sqrt(v * v - 2.0 * a * c)) / a;
      const double rising = fit.law.speed_at(fit.law.ref_time_s + root_a) > 0.0 ? root_a : root_b;
      CHECK(fit.law.speed_at(fit.law.ref_time_s + rising) > 0.0);
      CHECK(crossing.time_s == doctest::Approx(fit.law.ref_time_s + rising).epsilon(1e-12));
      CHECK(fit.law.height_at(crossing.time_s) == doctest::Approx(height).epsilon(1e-9));
    }
    CHECK(fit.onset.time_s < points.front().time_s);
  }
  SUBCASE("quadratic: sigma of the crossing times matches parameter draws from the covariance") {
    // Linearised propagation vs the spread of exact inverses over 4000 draws of (h₀, v, a)
    // from N(θ, C): with small sigmas the two must agree (to ~1.1 % statistical error).
    const auto points = make_points(make_law(3.0, 900.0, 15.0), 16, 0.01, rng);
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::quadratic, false});
    REQUIRE(fit.onset.found);
    REQUIRE(fit.boundary.found);
    const Eigen::Matrix3d L = fit.covariance.llt().matrixL();
    std::normal_distribution<double> gauss(0.0, 1.0);
    std::vector<double> onsets, boundaries;
    for (int k = 0; k < 4000; ++k) {
      const Eigen::Vector3d z(gauss(rng), gauss(rng), gauss(rng));
      const Eigen::Vector3d d = L * z;
      HeightTimeFit draw = fit;
      draw.law.height_rs += d(0);
      draw.law.speed_km_s += d(1);
      draw.law.accel_m_s2 += d(2);
      for (auto* out : {&onsets, &boundaries}) {
        const double height = out == &onsets ? kOnsetHeightRs : kBoundaryHeightRs;
        const double v = draw.law.speed_km_s * kRsPerKm, a = draw.law.accel_m_s2 * kRsPerKm / 1000.0;
        const double c = draw.law.height_rs - height;
        out->push_back((-v + std::sqrt(v * v - 2.0 * a * c)) / a);  // rising root for a > 0
      }
    }
    // The reported σ carry the small-sample widening k (kinematics.hpp); the covariance does not.
    CHECK(standard_deviation(onsets) * fit.coverage_factor == doctest::Approx(fit.onset.sigma_s).epsilon(0.05));
    CHECK(standard_deviation(boundaries) * fit.coverage_factor == doctest::Approx(fit.boundary.sigma_s).epsilon(0.05));
  }
  SUBCASE("an accelerating law that turns around above 1 Rs gives no onset, and says why") {
    // h = 6 + v τ + ½ a τ² with its lowest point (≈ 6 R☉) just before the data:
    // extrapolated backwards it never comes down to the Sun.
    std::vector<HeightTimePoint> points;
    const ApexLaw law = make_law(6.0, 50.0, 200.0);
    for (int i = 0; i < 8; ++i) points.push_back({kStart + 1800.0 + kCadence * i, law.height_at(kStart + 1800.0 + kCadence * i), 0.0});
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::quadratic, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK_FALSE(fit.onset.found);
    CHECK(std::isnan(fit.onset.time_s));
    CHECK(fit.onset.problem.find("never comes down to 1 R☉") != std::string::npos);
    CHECK(fit.boundary.found);
  }
  SUBCASE("a law still below 1 Rs at the first point gives no onset before it") {
    std::vector<HeightTimePoint> points;
    for (int i = 0; i < 5; ++i) points.push_back({kStart + kCadence * i, 0.8 + 0.5 * i, 0.0});
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK_FALSE(fit.onset.found);
    CHECK(fit.onset.problem.find("below 1 R☉ at the first point") != std::string::npos);
  }
}

TEST_CASE("kinematics: too few points, repeated times and bad values are reported, not thrown") {
  std::mt19937_64 rng(17);
  const auto points = make_points(make_law(3.0, 500.0, 0.0), 6, 0.05, rng);
  SUBCASE("none or one point") {
    HeightTimeFit fit = fit_height_time({}, {HeightTimeModel::linear, false});
    CHECK(fit.status == FitStatus::too_few_points);
    fit = fit_height_time({points[0]}, {HeightTimeModel::linear, true});
    CHECK(fit.status == FitStatus::too_few_points);
    CHECK(fit.problem.find("at least 2 points; 1 was given") != std::string::npos);
    CHECK_FALSE(fit.onset.found);
  }
  SUBCASE("quadratic on two points") {
    const HeightTimeFit fit = fit_height_time({points[0], points[1]}, {HeightTimeModel::quadratic, false});
    CHECK(fit.status == FitStatus::too_few_points);
    CHECK(fit.problem.find("at least 3 points") != std::string::npos);
  }
  SUBCASE("all at one time, or two times for a quadratic") {
    std::vector<HeightTimePoint> same;
    for (int i = 0; i < 5; ++i) same.push_back({kStart, 3.0 + 0.1 * i, 0.0});
    HeightTimeFit fit = fit_height_time(same, {HeightTimeModel::linear, true});
    CHECK(fit.status == FitStatus::degenerate_times);
    CHECK(fit.problem.find("only 1 distinct time") != std::string::npos);
    same[3].time_s += kCadence;
    fit = fit_height_time(same, {HeightTimeModel::quadratic, false});
    CHECK(fit.status == FitStatus::degenerate_times);
    CHECK(fit.problem.find("only 2 distinct times") != std::string::npos);
    fit = fit_height_time(same, {HeightTimeModel::linear, false});
    CHECK(fit.status == FitStatus::ok);
  }
  SUBCASE("exactly p points without sigma: the law, but no uncertainties") {
    const HeightTimeFit fit = fit_height_time({points[1], points[4]}, {HeightTimeModel::linear, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK_FALSE(fit.sigmas_known);
    // Two points: v = Δh/Δt exactly.
    const double v = (points[4].height_rs - points[1].height_rs) / (points[4].time_s - points[1].time_s);
    CHECK(fit.law.speed_km_s == doctest::Approx(v * kSolarRadiusKm).epsilon(1e-10));
    CHECK(std::isnan(fit.speed_sigma_km_s));
    CHECK(std::isnan(fit.onset.sigma_s));
    CHECK(fit.onset.found);
    CHECK(fit.problem.find("need 4 points, or a sigma for each point") != std::string::npos);
    const HeightTimeFit quad = fit_height_time({points[0], points[2], points[5]}, {HeightTimeModel::quadratic, false});
    REQUIRE(quad.status == FitStatus::ok);
    CHECK_FALSE(quad.sigmas_known);
    CHECK(quad.problem.find("need 5 points") != std::string::npos);
  }
  SUBCASE("p + 1 points without sigma: one degree of freedom states no sigma either") {
    for (const bool robust : {false, true}) {
      const HeightTimeFit fit = fit_height_time({points[0], points[2], points[5]}, {HeightTimeModel::linear, robust, 0.01});
      REQUIRE(fit.status == FitStatus::ok);
      CHECK_FALSE(fit.sigmas_known);
      CHECK(std::isnan(fit.speed_sigma_km_s));
      CHECK(std::isnan(fit.onset.sigma_s));
      CHECK(fit.problem.find("need 4 points") != std::string::npos);
    }
  }
  SUBCASE("exactly p points with sigma: sigma_v from the two heights' sigmas") {
    HeightTimePoint a = points[1], b = points[4];
    a.sigma_rs = 0.1;
    b.sigma_rs = 0.2;
    const HeightTimeFit fit = fit_height_time({a, b}, {HeightTimeModel::linear, false});
    REQUIRE(fit.status == FitStatus::ok);
    CHECK(fit.sigmas_known);
    // v = (h_b − h_a)/Δt ⇒ σ_v = √(σ_a² + σ_b²)/Δt (standard error propagation).
    CHECK(fit.speed_sigma_km_s ==
          doctest::Approx(std::sqrt(0.01 + 0.04) / (b.time_s - a.time_s) * kSolarRadiusKm).epsilon(1e-8));
  }
  SUBCASE("sigma for some points only, a NaN, a negative sigma") {
    auto mixed = points;
    mixed[2].sigma_rs = 0.1;
    HeightTimeFit fit = fit_height_time(mixed, {HeightTimeModel::linear, false});
    CHECK(fit.status == FitStatus::invalid_input);
    CHECK(fit.problem.find("1 of 6") != std::string::npos);
    auto nan = points;
    nan[3].height_rs = std::nan("");
    fit = fit_height_time(nan, {HeightTimeModel::quadratic, false});
    CHECK(fit.status == FitStatus::invalid_input);
    CHECK(fit.problem.find("point 3") != std::string::npos);
    auto negative = points;
    negative[0].sigma_rs = -1.0;
    CHECK(fit_height_time(negative, {}).status == FitStatus::invalid_input);
  }
}

TEST_CASE("kinematics: reported sigmas are honest over 200 noisy realisations") {
  // Monte Carlo: the spread of fitted values over repeated noisy data must match the mean
  // reported sigma within 15 % (the spread of 200 samples alone scatters by ~5 %).
  std::mt19937_64 rng(18);
  SUBCASE("linear, sigma unknown: speed") {
    const ApexLaw truth = make_law(3.0, 800.0, 0.0);
    std::vector<double> speeds, sigmas;
    for (int k = 0; k < 200; ++k) {
      const HeightTimeFit fit = fit_height_time(make_points(truth, 10, 0.1, rng), {HeightTimeModel::linear, false});
      REQUIRE(fit.status == FitStatus::ok);
      speeds.push_back(fit.law.speed_km_s);
      sigmas.push_back(fit.speed_sigma_km_s / fit.coverage_factor);  // the standard error itself
    }
    CHECK(standard_deviation(speeds) == doctest::Approx(mean(sigmas)).epsilon(0.15));
    CHECK(mean(speeds) == doctest::Approx(truth.speed_km_s).epsilon(3.0 * mean(sigmas) / std::sqrt(200.0) / 800.0));
  }
  SUBCASE("quadratic, per-point sigma: speed and acceleration") {
    const ApexLaw truth = make_law(3.0, 1000.0, -20.0);
    std::vector<double> speeds, speed_sigmas, accels, accel_sigmas;
    for (int k = 0; k < 200; ++k) {
      const HeightTimeFit fit =
          fit_height_time(make_points(truth, 12, 0.08, rng, 0.08), {HeightTimeModel::quadratic, false});
      REQUIRE(fit.status == FitStatus::ok);
      speeds.push_back(fit.law.speed_km_s);
      speed_sigmas.push_back(fit.speed_sigma_km_s);
      accels.push_back(fit.law.accel_m_s2);
      accel_sigmas.push_back(fit.accel_sigma_m_s2);
    }
    CHECK(standard_deviation(speeds) == doctest::Approx(mean(speed_sigmas)).epsilon(0.15));
    CHECK(standard_deviation(accels) == doctest::Approx(mean(accel_sigmas)).epsilon(0.15));
  }
  SUBCASE("linear, robust, sigma unknown: speed") {
    const ApexLaw truth = make_law(3.0, 800.0, 0.0);
    std::vector<double> speeds, sigmas;
    for (int k = 0; k < 200; ++k) {
      const HeightTimeFit fit = fit_height_time(make_points(truth, 14, 0.1, rng), {HeightTimeModel::linear, true});
      REQUIRE(fit.status == FitStatus::ok);
      speeds.push_back(fit.law.speed_km_s);
      sigmas.push_back(fit.speed_sigma_km_s / fit.coverage_factor);
    }
    // The MAD scale is noisier than s, so allow its own spread: 25 %.
    CHECK(standard_deviation(speeds) == doctest::Approx(mean(sigmas)).epsilon(0.25));
  }
}

TEST_CASE("kinematics: the model choice takes a quadratic only when AICc says it is substantially better") {
  std::mt19937_64 rng(19);
  int quadratic_for_constant = 0, quadratic_for_accelerating = 0;
  for (int k = 0; k < 200; ++k) {
    const ModelChoice constant = choose_height_time_model(make_points(make_law(3.0, 700.0, 0.0), 12, 0.08, rng));
    const ModelChoice accelerating = choose_height_time_model(make_points(make_law(3.0, 700.0, 80.0), 12, 0.08, rng));
    REQUIRE(constant.chosen.status == FitStatus::ok);
    if (constant.chosen.model == HeightTimeModel::quadratic) ++quadratic_for_constant;
    if (accelerating.chosen.model == HeightTimeModel::quadratic) ++quadratic_for_accelerating;
  }
  // For nested Gaussian models, a ΔAICc > 2 gain on top of AICc's extra penalty for the
  // extra parameter (4.7 at n = 12, k = 3 → 4) needs a likelihood-ratio statistic above
  // 6.7, which pure noise exceeds with probability ~1 % (χ²₁ tail). With 0.08 R☉ noise over
  // 12 points 600 s apart, σ_a ≈ 10 m/s² (normal equations, worked here by hand), so
  // 80 m/s² is an ~8σ acceleration that the test must essentially always find.
  CHECK(quadratic_for_constant < 20);
  CHECK(quadratic_for_accelerating > 190);

  SUBCASE("exact data: the exact model") {
    std::vector<HeightTimePoint> line, parabola;
    const ApexLaw l = make_law(3.0, 700.0, 0.0), q = make_law(3.0, 700.0, 40.0);
    for (int i = 0; i < 8; ++i) {
      const double t = kStart + kCadence * i;
      line.push_back({t, l.height_at(t), 0.0});
      parabola.push_back({t, q.height_at(t), 0.0});
    }
    CHECK(choose_height_time_model(line).chosen.model == HeightTimeModel::linear);
    CHECK(choose_height_time_model(parabola).chosen.model == HeightTimeModel::quadratic);
  }
  SUBCASE("too few points to weigh a quadratic") {
    const ModelChoice choice = choose_height_time_model(make_points(make_law(3.0, 700.0, 40.0), 5, 0.01, rng));
    CHECK(choice.chosen.model == HeightTimeModel::linear);
    CHECK(choice.reason.find("at least 6 points") != std::string::npos);
  }
  SUBCASE("robust: an outlier does not decide the model") {
    auto points = make_points(make_law(3.0, 700.0, 0.0), 14, 0.05, rng);
    points[12].height_rs -= 1.0;  // two late low points would fake a deceleration
    points[13].height_rs -= 2.5;
    CHECK(choose_height_time_model(points, false).chosen.model == HeightTimeModel::quadratic);
    const ModelChoice robust = choose_height_time_model(points, true);
    CHECK(robust.chosen.model == HeightTimeModel::linear);
    CHECK(robust.chosen.robust);
  }
}

TEST_CASE("kinematics: the small-sample widening equals scipy's Student-t quantile") {
  // Reference: scipy.stats.t (Debian's python3-scipy) via tests/external/student_t_reference.py;
  // the series is Abramowitz & Stegun 26.7.3–26.7.4.
  const auto run = occulta::test::run_python("tests/external/student_t_reference.py", "1 2 3 4 5 7 12 31 200");
  REQUIRE_MESSAGE(run.exit_code == 0, run.output);
  for (const nlohmann::json& line : occulta::test::json_lines(run.output)) {
    const int dof = line["dof"].get<int>();
    CAPTURE(dof);
    CHECK(coverage_factor(dof) == doctest::Approx(line["t"].get<double>() / 2.0).epsilon(1e-9));
    CHECK(student_t_central(2.5, dof) == doctest::Approx(line["central"].get<double>()).epsilon(1e-12));
  }
}

TEST_CASE("kinematics: tracks of 3, 4 and 5 frames: sigmas cover the truth and never fall below the resolution") {
  // Issue 11: over ≥ 20 noisy realisations the truth lies within 2σ in ≥ 85 % of them,
  // and no σ falls below the floor set by the height resolution. The fit is measure's:
  // robust, linear unless AICc prefers a quadratic, scale floored at Δ/√12 for a grid step
  // Δ = 0.1 R☉. The floor of the speed's σ for a scale s is s/√Σ(t − t̄)² (the straight-
  // line formula, Bevington & Robinson ch. 6). 3 frames: no σ at all, with the reason.
  const ApexLaw truth = make_law(3.0, 700.0, 0.0);
  const double step_rs = 0.1, resolution_rs = step_rs / std::sqrt(12.0);
  std::mt19937_64 rng(2031);
  for (const int frames : {3, 4, 5}) {
    CAPTURE(frames);
    int covered = 0, onset_covered = 0, realisations = 0;
    for (int k = 0; k < 40; ++k) {
      // The heights a grid of rows would give: noise of 0.1 R☉, then rounded to the step.
      std::vector<HeightTimePoint> points = make_points(truth, frames, 0.1, rng);
      for (HeightTimePoint& q : points) q.height_rs = step_rs * std::round(q.height_rs / step_rs);
      const HeightTimeFit fit = choose_height_time_model(points, true, 2.0, resolution_rs).chosen;
      REQUIRE(fit.status == FitStatus::ok);
      if (frames == 3) {
        CHECK_FALSE(fit.sigmas_known);
        CHECK(std::isnan(fit.speed_sigma_km_s));
        CHECK(fit.problem.find("too few to estimate its uncertainties") != std::string::npos);
        continue;
      }
      ++realisations;
      double t_mean = 0.0, sxx = 0.0;
      for (const auto& q : points) t_mean += q.time_s / frames;
      for (const auto& q : points) sxx += (q.time_s - t_mean) * (q.time_s - t_mean);
      const double floor_km_s = resolution_rs / std::sqrt(sxx) * kSolarRadiusKm;
      CHECK(fit.speed_sigma_km_s >= floor_km_s * (1.0 - 1e-9));
      covered += std::abs(fit.law.speed_km_s - truth.speed_km_s) <= 2.0 * fit.speed_sigma_km_s;
      // The true onset: h(t) = 1 R☉ on the true law.
      const double onset_true = truth.ref_time_s + (1.0 - truth.height_rs) / (truth.speed_km_s / kSolarRadiusKm);
      REQUIRE(fit.onset.found);
      onset_covered += std::abs(fit.onset.time_s - onset_true) <= 2.0 * fit.onset.sigma_s;
    }
    if (frames == 3) continue;
    CAPTURE(covered);
    CAPTURE(onset_covered);
    MESSAGE(frames << " frames: speed within 2σ in " << covered << " of " << realisations << ", onset in "
                   << onset_covered);
    CHECK(covered >= 0.85 * realisations);
    CHECK(onset_covered >= 0.85 * realisations);
  }
}

TEST_CASE("kinematics: points exactly on a line still get sigmas of at least the resolution") {
  // Issue 11: the MAD of a line's residuals can be exactly 0 (repeated heights, or points
  // on the line); the scale is then the resolution floor, not rounding noise.
  std::vector<HeightTimePoint> points;
  for (int i = 0; i < 6; ++i) points.push_back({kStart + kCadence * i, 3.0 + 0.5 * i, 0.0});
  const double resolution_rs = 0.05;
  for (const bool robust : {false, true}) {
    const HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, robust, resolution_rs});
    REQUIRE(fit.status == FitStatus::ok);
    REQUIRE(fit.sigmas_known);
    double sxx = 0.0;
    for (int i = 0; i < 6; ++i) sxx += std::pow(kCadence * (i - 2.5), 2);
    // s = the floor exactly, widened by k for ν = 4 (both formulas as above).
    CHECK(fit.speed_sigma_km_s ==
          doctest::Approx(coverage_factor(4) * resolution_rs / std::sqrt(sxx) * kSolarRadiusKm).epsilon(1e-6));
    CHECK(fit.onset.sigma_s > 0.0);
  }
}

TEST_CASE("kinematics: another definition of the edge widens the sigmas by half the difference") {
  // kinematics.hpp add_definition_spread: σ² → σ² + (Δ/2)² per parameter (our
  // construction, the same as fit/shell_fit.hpp merge_edge_fits).
  std::mt19937_64 rng(7);
  const auto points = make_points(make_law(3.0, 800.0, 0.0), 8, 0.1, rng);
  std::vector<HeightTimePoint> outer = points;
  for (std::size_t i = 0; i < outer.size(); ++i) outer[i].height_rs += 0.2 + 0.05 * static_cast<double>(i);
  HeightTimeFit fit = fit_height_time(points, {HeightTimeModel::linear, true});
  const HeightTimeFit other = fit_height_time(outer, {HeightTimeModel::linear, true});
  const double before = fit.speed_sigma_km_s, onset_before = fit.onset.sigma_s;
  add_definition_spread(fit, other);
  const double half_dv = 0.5 * std::abs(fit.law.speed_km_s - other.law.speed_km_s);
  CHECK(half_dv > 0.0);
  CHECK(fit.speed_sigma_km_s == doctest::Approx(std::hypot(before, half_dv)).epsilon(1e-12));
  CHECK(fit.onset.sigma_s ==
        doctest::Approx(std::hypot(onset_before, 0.5 * std::abs(fit.onset.time_s - other.onset.time_s))).epsilon(1e-12));
}
