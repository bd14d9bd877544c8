// fit/arrival.hpp — when and how fast a CME's front reaches a target: the drag-based model
// (Vršnak et al. 2013, Sol. Phys. 285, 295) from the inner boundary outward, the fitted
// shell's self-similar shape for whether and where the front meets the target, and a
// seeded Monte-Carlo ensemble over the fit's uncertainty and the drag priors.
//
// Conventions: distances in km, speeds in km/s, the drag parameter γ in km⁻¹, times in
// UTC seconds since 2000-01-01 (imaging/time.hpp), angles in radians. Positions are HEEQ
// (Thompson 2006: x toward Earth's central meridian on the solar equator, z solar north),
// origin Sun centre; names say so (heeq_p_target_km).
//
// What the model assumes (say it wherever the numbers are shown): the apex follows the
// drag-based model from the boundary (21.5 R☉) on, with one constant ambient wind speed w
// and drag parameter γ per member; the shell keeps its shape (self-similar), so the front's
// distance along any fixed direction is a constant ratio q of the apex distance; the target
// stays where it is at the boundary time. Arrival is when the front along the target's
// direction reaches the target's distance; impact speed is q times the apex speed then.
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <Eigen/Core>

#include "fit/kinematics.hpp"
#include "fit/shell.hpp"
#include "imaging/constants.hpp"

namespace occulta::fit {

// The caution (shared RULES.md, "Cautions"). The one place its text lives: the forecast
// table, arrival.json, result.json and the README say this.
inline constexpr std::string_view kArrivalCaution =
    "Arrival estimates from occulta are model results with stated uncertainty, for expert use; "
    "operational space-weather warnings come from the responsible national forecasting services.";

// The inner boundary of heliospheric models, 21.5 R☉ ≈ 0.1 au (common practice): where
// result.json's `boundary` block gives the CME, and where the drag-based model starts.
// kBoundaryHeightRs (21.5 R☉, fit/kinematics.hpp): where the launch is taken.
// L1 lies about 1.5 million km sunward of Earth on the Sun–Earth line (common practice).
inline constexpr double kL1SunwardOfEarthKm = 1.5e6;

// --- the drag-based model --------------------------------------------------------------
// dv/dt = −γ (v − w)|v − w| (Vršnak et al. 2013). With u = v₀ − w, S = sign(u):
//   v(t) = u / (1 + S γ u t) + w,   r(t) = (S/γ) ln(1 + S γ u t) + w t + r₀.
// Valid for γ > 0, w > 0, v₀ > 0, t ≥ 0 (then 1 + S γ u t ≥ 1 and r grows monotonically:
// v(t) lies between v₀ and w, both positive).
struct DragState {
  double distance_km = 0.0;
  double speed_km_s = 0.0;
};
DragState drag_state(double r0_km, double v0_km_s, double wind_km_s, double drag_per_km, double t_s);

// The time t ≥ 0 at which r(t) = distance_km (> r0_km): Newton's method on the monotone
// r(t) (r′ = v > 0), kept inside a bracket [0, (R − r₀)/min(v₀, w)] — v never falls below
// min(v₀, w), so the root lies in it — with bisection when a Newton step leaves the bracket.
// Converges to 1e-6 s.
double drag_time_to_distance(double r0_km, double v0_km_s, double wind_km_s, double drag_per_km, double distance_km);

// --- targets ---------------------------------------------------------------------------
struct Target {
  std::string name;              // "earth", "l1", or the analyst's name
  Eigen::Vector3d heeq_p_km;     // position at the boundary time, HEEQ, km
};

// Earth from the Sun at a time: its heliographic latitude (the solar B0 angle) and its
// distance. Earth's HEEQ longitude is 0 by the definition of HEEQ.
struct EarthPosition {
  double b0 = 0.0;            // rad
  double distance_km = 0.0;
};
// Low-precision solar ephemeris (Astronomical Almanac "low-precision formulas for the
// Sun", ≈0.01° 1950–2050) and the solar equator's inclination and node (Carrington's
// elements as given by Meeus, Astronomical Algorithms, ch. 29), both from memory; checked
// against astropy's builtin ERFA ephemeris in tests/fit/arrival_test.cpp.
EarthPosition earth_position(double utc_s);

Target earth_target(double utc_s);
Target l1_target(double utc_s);
// A heliocentric position: Stonyhurst longitude and latitude (deg), distance (au).
Target point_target(std::string name, double lon_deg, double lat_deg, double dist_au);

// A target as the analyst writes it: "earth", "l1", or "NAME:LON,LAT,AU" (NAME letters,
// digits, '-' and '_'; LON, LAT in degrees, Stonyhurst; AU the distance from Sun centre,
// beyond the inner boundary and at most 100 au). Throws std::invalid_argument with a
// sentence saying what is wrong (the caller adds the source).
Target parse_target(std::string_view text, double utc_s);

// --- where the front meets a direction -------------------------------------------------
// The ratio q = (distance of the shell's outermost surface crossing along a direction) /
// (apex height), for a shell shape of apex height 1 (shell_shape with apex_height_rs = 1)
// and a unit direction in the shell frame; nullopt when the direction misses the shell.
// The same quantity as surface_distance_along(params, heeq_dir) / apex height (fit/shell),
// computed faster for the ensemble: directions farther than α + δ from the apex axis miss
// (every point of the shell lies within α + δ of it — the legs' cones by construction,
// the front by Thernisien 2011's face-on width; the test checks it on the mesh); inside a
// leg cone the ray stays in the leg up to the leg top, h / (d·a); the front tube is found
// by a 192-sample scan of the sign of its cross-section-circle test (one square root each,
// the test of fit/shell's signed distance squared out) and bisection to 1e-9 of the apex height. A chord
// through the front shorter than 1/192 of the apex height can be missed, as in
// surface_distance_along.
std::optional<double> front_reach_ratio(const ShellShape& unit_shape, const Eigen::Vector3d& shell_dir);

// --- the ensemble ----------------------------------------------------------------------
// The nominal launch: the apex at the inner boundary and the shell's shape.
struct Launch {
  double boundary_utc_s = 0.0;                               // apex at boundary_distance_km
  double boundary_distance_km = kBoundaryHeightRs * kSolarRadiusKm;
  double speed_km_s = 0.0;                                    // apex speed there
  double lon = 0.0, lat = 0.0;                                // apex direction, Stonyhurst, rad
  double tilt = 0.0, half_angle = 0.0, aspect_ratio = 0.0;    // shell shape (fit/shell.hpp)
};

// The launch's uncertainty: a covariance over these perturbations, in these units.
enum LaunchIndex : int {
  kLaunchSpeed = 0,     // km/s
  kLaunchLon,           // rad
  kLaunchLat,           // rad
  kLaunchTilt,          // rad
  kLaunchHalfAngle,     // rad
  kLaunchAspectRatio,   // 1
  kLaunchTime,          // s (boundary time)
  kLaunchSize
};
using LaunchCovariance = Eigen::Matrix<double, kLaunchSize, kLaunchSize>;

// Uniform priors on the ambient wind speed and the drag parameter. Defaults: the ranges
// of REFERENCES.md ("Drag-based model": w ≈ 300–600 km/s, γ ≈ 0.1–2 × 10⁻⁷ km⁻¹, from
// memory of Vršnak et al. 2013).
struct DragPriors {
  std::array<double, 2> wind_km_s{300.0, 600.0};
  std::array<double, 2> drag_per_km{0.1e-7, 2.0e-7};
};

struct EnsembleOptions {
  int members = 10000;
  std::uint64_t seed = 1;
  DragPriors priors;
};

// One member: a launch drawn from the covariance and one (w, γ) from the priors.
struct ArrivalMember {
  Launch launch;
  double wind_km_s = 0.0, drag_per_km = 0.0;
};

// Members drawn reproducibly: std::mt19937_64 seeded with `seed` (its output sequence is
// fixed by the C++ standard), uniform variates from its top 53 bits — written out here
// because the standard library's distributions differ between implementations. The draws
// are a Latin hypercube (McKay, Beckman & Conover 1979 — common practice for Monte-Carlo
// ensembles): in each of the 9 dimensions (7 of the launch, w, γ) the N members fall one
// in each of N equal-probability strata, in an order shuffled per dimension, so that the
// percentiles of monotone quantities (transit time against speed, w, γ) scatter far less
// between seeds than with independent draws. Standard normals are the inverse normal CDF of
// the stratified uniforms (inverse_normal_cdf). Correlated normals are x̄ + L z with
// L = V √Λ from the covariance's eigen-decomposition (zero for directions it leaves
// unconstrained). Members whose draw is not a valid shell (speed ≤ 0, α < 0, κ outside
// [0, 0.95], α + asin κ ≥ 89°) are drawn again without strata (up to 1000 times, then the
// nominal launch): the priors are truncated normals.
std::vector<ArrivalMember> draw_members(const Launch& launch, const LaunchCovariance& covariance,
                                        const EnsembleOptions& options);

// Φ⁻¹(p), the standard normal quantile, for p in (0, 1): Acklam's rational approximation
// (from memory) refined by one Halley step on Φ(x) = erfc(−x/√2)/2 (std::erfc), which
// makes it exact to rounding; checked against std::erfc in tests/fit/arrival_test.cpp.
double inverse_normal_cdf(double p);

// One member's arrival at a target: nullopt when the shell misses it.
struct MemberArrival {
  double utc_s = 0.0;
  double speed_km_s = 0.0;  // of the front along the target's direction: q × apex speed
};
// Valid targets only: |heeq_p_target_km| beyond the boundary distance × 1.001.
std::optional<MemberArrival> member_arrival(const ArrivalMember& member, const Eigen::Vector3d& heeq_p_target_km);

// What the ensemble says about one target.
struct TargetArrival {
  Target target;
  int members = 0, hits = 0;
  double hit_probability = 0.0;          // hits / members
  // Over the members that hit (nullopt when none does): arrival time (UTC s) and impact
  // speed (km/s) percentiles, linear between order statistics (common practice; numpy's
  // default "linear" method).
  std::optional<double> time_p05, time_p50, time_p95;
  std::optional<double> speed_p05, speed_p50, speed_p95;
  std::vector<double> times_utc_s;       // every hit's arrival time, sorted (for histograms)
};

// The p-quantile (0 ≤ p ≤ 1) of a non-empty sample, linear between order statistics at
// position p·(n − 1). Reorders `values`.
double percentile(std::vector<double>& values, double p);

// The whole estimate: draw_members, then every member at every target.
std::vector<TargetArrival> forecast_arrivals(const Launch& launch, const LaunchCovariance& covariance,
                                             const std::vector<Target>& targets, const EnsembleOptions& options);
// The same over members already drawn.
std::vector<TargetArrival> arrivals_of_members(const std::vector<ArrivalMember>& members,
                                               const std::vector<Target>& targets);

}  // namespace occulta::fit
