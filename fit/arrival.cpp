// fit/arrival.cpp — the arrival ensemble: members drawn from the launch's covariance and
// the drag priors, each carried to each target (conventions in fit/arrival.hpp).
#include "fit/arrival.hpp"

#include <algorithm>
#include <array>
#include <cstdint>
#include <cmath>
#include <future>
#include <random>
#include <thread>

#include <Eigen/Eigenvalues>

namespace occulta::fit {

namespace {

// Variates from std::mt19937_64, whose output the C++ standard fixes, so that a seed gives
// the same members with every standard library.
class Variates {
 public:
  explicit Variates(std::uint64_t seed) : engine_(seed) {}
  // A uniform permutation of 0 … n − 1 (Fisher–Yates, with a bounded draw by rejection).
  std::vector<int> permutation(int n) {
    std::vector<int> order(static_cast<size_t>(std::max(0, n)));
    for (int i = 0; i < n; ++i) order[static_cast<size_t>(i)] = i;
    for (int i = n - 1; i > 0; --i) {
      const std::uint64_t range = static_cast<std::uint64_t>(i) + 1, limit = UINT64_MAX - UINT64_MAX % range;
      std::uint64_t r;
      do r = engine_(); while (r >= limit);
      std::swap(order[static_cast<size_t>(i)], order[static_cast<size_t>(r % range)]);
    }
    return order;
  }
  // Uniform in (0, 1), away from both ends (the normal quantile is infinite there).
  double open_uniform() { return (static_cast<double>(engine_() >> 11) + 0.5) * 0x1.0p-53; }

 private:
  std::mt19937_64 engine_;
};

using LaunchVector = Eigen::Matrix<double, kLaunchSize, 1>;

LaunchVector as_vector(const Launch& l) {
  LaunchVector x;
  x << l.speed_km_s, l.lon, l.lat, l.tilt, l.half_angle, l.aspect_ratio, l.boundary_utc_s;
  return x;
}

Launch from_vector(const Launch& nominal, const LaunchVector& x) {
  Launch l = nominal;
  l.speed_km_s = x[kLaunchSpeed];
  l.lon = x[kLaunchLon];
  l.lat = x[kLaunchLat];
  l.tilt = x[kLaunchTilt];
  l.half_angle = x[kLaunchHalfAngle];
  l.aspect_ratio = x[kLaunchAspectRatio];
  l.boundary_utc_s = x[kLaunchTime];
  return l;
}

// The shells the geometry accepts (fit/shell is_valid), with the legs' outer walls kept a
// degree short of the plane normal to the apex axis, and a forward speed.
bool drawable(const Launch& l) {
  return l.speed_km_s > 0.0 && l.half_angle >= 0.0 && l.aspect_ratio >= 0.0 && l.aspect_ratio <= 0.95 &&
         l.half_angle + std::asin(l.aspect_ratio) < (90.0 - 1.0) * kRadPerDeg;
}

ShellParams unit_shell(const Launch& l) {
  ShellParams p;
  p.lon = l.lon;
  p.lat = l.lat;
  p.tilt = l.tilt;
  p.apex_height_rs = 1.0;
  p.half_angle = l.half_angle;
  p.aspect_ratio = l.aspect_ratio;
  return p;
}

// One member at one target, its rotation and shape already made.
std::optional<MemberArrival> arrive(const ArrivalMember& m, const Eigen::Matrix3d& heeq_R_shell_m,
                                    const ShellShape& unit_shape, const Eigen::Vector3d& heeq_p_target_km) {
  const double target_km = heeq_p_target_km.norm();
  const Eigen::Vector3d shell_dir = heeq_R_shell_m.transpose() * (heeq_p_target_km / target_km);
  const std::optional<double> q = front_reach_ratio(unit_shape, shell_dir);
  if (!q) return std::nullopt;
  // Self-similar expansion: along this direction the front stands at q × the apex distance,
  // so it reaches the target when the apex reaches target / q.
  const Launch& l = m.launch;
  const double t_s = drag_time_to_distance(l.boundary_distance_km, l.speed_km_s, m.wind_km_s, m.drag_per_km,
                                           target_km / *q);
  const DragState apex = drag_state(l.boundary_distance_km, l.speed_km_s, m.wind_km_s, m.drag_per_km, t_s);
  return MemberArrival{l.boundary_utc_s + t_s, *q * apex.speed_km_s};
}

}  // namespace

std::vector<ArrivalMember> draw_members(const Launch& launch, const LaunchCovariance& covariance,
                                        const EnsembleOptions& options) {
  // x = x̄ + L z with L Lᵀ = Σ: L = V √Λ from Σ = V Λ Vᵀ, negative round-off eigenvalues as 0.
  const Eigen::SelfAdjointEigenSolver<LaunchCovariance> eigen(covariance);
  const LaunchVector root = eigen.eigenvalues().cwiseMax(0.0).cwiseSqrt();
  const LaunchCovariance spread = eigen.eigenvectors() * root.asDiagonal();
  const LaunchVector mean = as_vector(launch);

  Variates variates(options.seed);
  const int n = std::max(0, options.members);
  // One shuffled order of strata per dimension: launch 0 … kLaunchSize − 1, then w, γ.
  constexpr int kDims = kLaunchSize + 2;
  std::array<std::vector<int>, kDims> strata;
  for (auto& order : strata) order = variates.permutation(n);
  const auto stratified = [&](int dim, int member) {
    return (strata[static_cast<size_t>(dim)][static_cast<size_t>(member)] + variates.open_uniform()) / n;
  };
  const auto in_range = [](const std::array<double, 2>& range, double u) { return range[0] + (range[1] - range[0]) * u; };
  std::vector<ArrivalMember> members;
  members.reserve(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i) {
    ArrivalMember m;
    m.launch = launch;
    for (int attempt = 0; attempt < 1000; ++attempt) {
      LaunchVector z;
      for (int k = 0; k < kLaunchSize; ++k)
        z[k] = inverse_normal_cdf(attempt == 0 ? stratified(k, i) : variates.open_uniform());
      const Launch drawn = from_vector(launch, mean + spread * z);
      if (drawable(drawn)) {
        m.launch = drawn;
        break;
      }
    }
    m.wind_km_s = in_range(options.priors.wind_km_s, stratified(kLaunchSize, i));
    m.drag_per_km = in_range(options.priors.drag_per_km, stratified(kLaunchSize + 1, i));
    members.push_back(m);
  }
  return members;
}

double inverse_normal_cdf(double p) {
  // Acklam's approximation (relative error ~1e-9; coefficients from memory — the Halley
  // step below corrects any error in them as long as the start is close).
  static constexpr double a[] = {-3.969683028665376e+01, 2.209460984245205e+02, -2.759285104469687e+02,
                                 1.383577518672690e+02,  -3.066479806614716e+01, 2.506628277459239e+00};
  static constexpr double b[] = {-5.447609879822406e+01, 1.615858368580409e+02, -1.556989798598866e+02,
                                 6.680131188771972e+01,  -1.328068155288572e+01};
  static constexpr double c[] = {-7.784894002430293e-03, -3.223964580411365e-01, -2.400758277161838e+00,
                                 -2.549732539343734e+00, 4.374664141464968e+00,  2.938163982698783e+00};
  static constexpr double d[] = {7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e+00,
                                 3.754408661907416e+00};
  constexpr double p_low = 0.02425;
  double x;
  if (p < p_low) {
    const double q = std::sqrt(-2.0 * std::log(p));
    x = (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) /
        ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1.0);
  } else if (p > 1.0 - p_low) {
    const double q = std::sqrt(-2.0 * std::log(1.0 - p));
    x = -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) /
        ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1.0);
  } else {
    const double q = p - 0.5, r = q * q;
    x = (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q /
        (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1.0);
  }
  // Halley: e = Φ(x) − p, u = e √(2π) exp(x²/2), x ← x − u / (1 + x u / 2).
  const double e = 0.5 * std::erfc(-x / std::sqrt(2.0)) - p;
  const double u = e * std::sqrt(2.0 * kPi) * std::exp(0.5 * x * x);
  return x - u / (1.0 + 0.5 * x * u);
}

std::optional<MemberArrival> member_arrival(const ArrivalMember& member, const Eigen::Vector3d& heeq_p_target_km) {
  const ShellParams shell = unit_shell(member.launch);
  return arrive(member, heeq_R_shell(shell), shell_shape(shell), heeq_p_target_km);
}

double percentile(std::vector<double>& values, double p) {
  std::sort(values.begin(), values.end());
  const double position = p * static_cast<double>(values.size() - 1);
  const size_t below = static_cast<size_t>(std::floor(position));
  const size_t above = std::min(values.size() - 1, below + 1);
  const double share = position - static_cast<double>(below);
  return values[below] + share * (values[above] - values[below]);
}

std::vector<TargetArrival> arrivals_of_members(const std::vector<ArrivalMember>& members,
                                               const std::vector<Target>& targets) {
  std::vector<TargetArrival> out(targets.size());
  std::vector<std::vector<double>> speeds(targets.size());
  for (size_t k = 0; k < targets.size(); ++k) {
    out[k].target = targets[k];
    out[k].members = static_cast<int>(members.size());
    out[k].times_utc_s.reserve(members.size());
    speeds[k].reserve(members.size());
  }
  // Members outer, targets inner: each member's rotation and shape are made once. Each
  // member's arrivals depend on it alone, so the later half of the members is done on a
  // second thread (on a machine with more than one core); they are gathered in member
  // order, as one thread would have them.
  std::vector<std::optional<MemberArrival>> arrivals(members.size() * targets.size());
  const auto arrive_members = [&](size_t from, size_t to) {
    for (size_t i = from; i < to; ++i) {
      const ShellParams shell = unit_shell(members[i].launch);
      const Eigen::Matrix3d heeq_R_shell_m = heeq_R_shell(shell);
      const ShellShape shape = shell_shape(shell);
      for (size_t k = 0; k < targets.size(); ++k)
        arrivals[i * targets.size() + k] = arrive(members[i], heeq_R_shell_m, shape, targets[k].heeq_p_km);
    }
  };
  const size_t half = std::thread::hardware_concurrency() > 1 ? members.size() / 2 : members.size();
  std::future<void> later;
  if (half < members.size()) later = std::async(std::launch::async, arrive_members, half, members.size());
  arrive_members(0, half);
  if (later.valid()) later.get();
  for (size_t i = 0; i < members.size(); ++i)
    for (size_t k = 0; k < targets.size(); ++k)
      if (const std::optional<MemberArrival>& a = arrivals[i * targets.size() + k]) {
        out[k].times_utc_s.push_back(a->utc_s);
        speeds[k].push_back(a->speed_km_s);
      }
  for (size_t k = 0; k < targets.size(); ++k) {
    TargetArrival& t = out[k];
    t.hits = static_cast<int>(t.times_utc_s.size());
    t.hit_probability = members.empty() ? 0.0 : static_cast<double>(t.hits) / static_cast<double>(members.size());
    if (t.hits == 0) continue;
    t.time_p05 = percentile(t.times_utc_s, 0.05);  // sorts times_utc_s, as TargetArrival promises
    t.time_p50 = percentile(t.times_utc_s, 0.50);
    t.time_p95 = percentile(t.times_utc_s, 0.95);
    t.speed_p05 = percentile(speeds[k], 0.05);
    t.speed_p50 = percentile(speeds[k], 0.50);
    t.speed_p95 = percentile(speeds[k], 0.95);
  }
  return out;
}

std::vector<TargetArrival> forecast_arrivals(const Launch& launch, const LaunchCovariance& covariance,
                                             const std::vector<Target>& targets, const EnsembleOptions& options) {
  return arrivals_of_members(draw_members(launch, covariance, options), targets);
}

}  // namespace occulta::fit
