// fit/arrival.cpp — the arrival ensemble: members drawn from the launch's covariance and
// the drag priors, each carried to each target (conventions in fit/arrival.hpp).
#include "fit/arrival.hpp"

#include <algorithm>
#include <cmath>
#include <random>

#include <Eigen/Eigenvalues>

namespace occulta::fit {

namespace {

// Variates from std::mt19937_64, whose output the C++ standard fixes, so that a seed gives
// the same members with every standard library.
class Variates {
 public:
  explicit Variates(std::uint64_t seed) : engine_(seed) {}
  // Uniform on [0, 1): the top 53 bits of one 64-bit output.
  double uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }
  // Standard normal by Box–Muller (common practice): √(−2 ln u₁) (cos, sin)(2π u₂), u₁ ∈ (0, 1].
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double radius = std::sqrt(-2.0 * std::log(1.0 - uniform()));
    const double angle = 2.0 * kPi * uniform();
    spare_ = radius * std::sin(angle);
    has_spare_ = true;
    return radius * std::cos(angle);
  }

 private:
  std::mt19937_64 engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
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
  const auto uniform_in = [&](const std::array<double, 2>& range) {
    return range[0] + (range[1] - range[0]) * variates.uniform();
  };
  std::vector<ArrivalMember> members;
  members.reserve(static_cast<size_t>(std::max(0, options.members)));
  for (int i = 0; i < options.members; ++i) {
    ArrivalMember m;
    m.launch = launch;
    for (int attempt = 0; attempt < 1000; ++attempt) {
      LaunchVector z;
      for (int k = 0; k < kLaunchSize; ++k) z[k] = variates.normal();
      const Launch drawn = from_vector(launch, mean + spread * z);
      if (drawable(drawn)) {
        m.launch = drawn;
        break;
      }
    }
    m.wind_km_s = uniform_in(options.priors.wind_km_s);
    m.drag_per_km = uniform_in(options.priors.drag_per_km);
    members.push_back(m);
  }
  return members;
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
  // Members outer, targets inner: each member's rotation and shape are made once.
  for (const ArrivalMember& m : members) {
    const ShellParams shell = unit_shell(m.launch);
    const Eigen::Matrix3d heeq_R_shell_m = heeq_R_shell(shell);
    const ShellShape shape = shell_shape(shell);
    for (size_t k = 0; k < targets.size(); ++k) {
      const std::optional<MemberArrival> a = arrive(m, heeq_R_shell_m, shape, targets[k].heeq_p_km);
      if (!a) continue;
      out[k].times_utc_s.push_back(a->utc_s);
      speeds[k].push_back(a->speed_km_s);
    }
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
