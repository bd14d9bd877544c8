// Benchmark: the arrival ensemble, 10⁴ members × 3 targets (Earth, L1, a point 40° west).
// Budget (issue "From the fit to an arrival estimate"): < 50 ms on one core.
// Prints the whole estimate (draws, reach, drag model, percentiles), the draws alone, and
// what one call of fit/shell's surface_distance_along costs against front_reach_ratio (why
// the ensemble uses the latter), each with its ratio to the budget.
// --short: fewer repetitions, for the test suite.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>

#include "fit/arrival.hpp"
#include "imaging/time.hpp"
#include "tests/bench/best_of.hpp"

namespace {
using namespace occulta;
using bench::best_of;

}  // namespace

int main(int argc, char** argv) {
  const bool short_mode = argc > 1 && std::strcmp(argv[1], "--short") == 0;
  const int repeats = short_mode ? 2 : 15;
  constexpr double kBudgetS = 0.050;

  const double t0 = imaging::utc_seconds_from_iso("2031-07-09T06:00:00");
  fit::Launch launch;
  launch.boundary_utc_s = t0;
  launch.speed_km_s = 1100.0;
  launch.lon = 12.0 * kRadPerDeg;
  launch.lat = -4.0 * kRadPerDeg;
  launch.tilt = 20.0 * kRadPerDeg;
  launch.half_angle = 30.0 * kRadPerDeg;
  launch.aspect_ratio = 0.35;
  fit::LaunchCovariance c = fit::LaunchCovariance::Zero();
  c(fit::kLaunchSpeed, fit::kLaunchSpeed) = 60.0 * 60.0;
  c(fit::kLaunchLon, fit::kLaunchLon) = c(fit::kLaunchLat, fit::kLaunchLat) = std::pow(5.0 * kRadPerDeg, 2);
  c(fit::kLaunchTilt, fit::kLaunchTilt) = std::pow(10.0 * kRadPerDeg, 2);
  c(fit::kLaunchHalfAngle, fit::kLaunchHalfAngle) = std::pow(5.0 * kRadPerDeg, 2);
  c(fit::kLaunchAspectRatio, fit::kLaunchAspectRatio) = 0.03 * 0.03;
  c(fit::kLaunchTime, fit::kLaunchTime) = 900.0 * 900.0;
  const std::vector<fit::Target> targets = {fit::earth_target(t0), fit::l1_target(t0),
                                            fit::point_target("probe", 40.0, 0.0, 0.8)};
  fit::EnsembleOptions options;  // 10⁴ members, default priors

  std::vector<fit::TargetArrival> out;
  const double whole = best_of(repeats, [&] { out = fit::forecast_arrivals(launch, c, targets, options); });
  const double draws = best_of(repeats, [&] { fit::draw_members(launch, c, options); });

  // One shell, 3·10⁴ directions from the ensemble's spread: the reference surface search
  // against the ensemble's reach ratio.
  fit::ShellParams p{launch.lon, launch.lat, launch.tilt, 1.0, launch.half_angle, launch.aspect_ratio};
  const fit::ShellShape shape = fit::shell_shape(p);
  const Eigen::Matrix3d R = fit::heeq_R_shell(p);
  std::vector<Eigen::Vector3d> dirs;
  for (const auto& m : fit::draw_members(launch, c, options))
    for (const auto& t : targets) {
      const fit::ShellParams q{m.launch.lon, m.launch.lat, m.launch.tilt, 1.0, m.launch.half_angle, m.launch.aspect_ratio};
      dirs.push_back(fit::heeq_R_shell(q).transpose() * t.heeq_p_km.normalized());
    }
  int sink = 0;
  const double fast = best_of(repeats, [&] {
    for (const auto& d : dirs) sink += fit::front_reach_ratio(shape, d).has_value();
  });
  const int reference_calls = short_mode ? 1000 : static_cast<int>(dirs.size());
  const double reference = best_of(short_mode ? 1 : 3, [&] {
    for (int i = 0; i < reference_calls; ++i) sink += fit::surface_distance_along(p, R * dirs[i]).has_value();
  }) * static_cast<double>(dirs.size()) / reference_calls;

  std::printf("arrival bench: %d members x %zu targets, one core (best of %d)\n", options.members, targets.size(),
              repeats);
  std::printf("  whole estimate                %7.1f ms   %.2f x the 50 ms budget\n", whole * 1e3, whole / kBudgetS);
  std::printf("  draws alone                   %7.1f ms   %.2f x the 50 ms budget\n", draws * 1e3, draws / kBudgetS);
  std::printf("  reach: front_reach_ratio      %7.1f ms for %zu directions (%.2f us each)\n", fast * 1e3, dirs.size(),
              fast / dirs.size() * 1e6);
  std::printf("  reach: surface_distance_along %7.1f ms for the same%s (%.2f us each) = %.1f x the 50 ms budget\n",
              reference * 1e3, short_mode ? ", extrapolated from 1000" : "", reference / dirs.size() * 1e6,
              reference / kBudgetS);
  std::printf("  hits: earth %.3f, l1 %.3f, probe %.3f (%d)\n", out[0].hit_probability, out[1].hit_probability,
              out[2].hit_probability, sink > 0);
  return 0;
}
