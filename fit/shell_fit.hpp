// fit/shell_fit.hpp — one least-squares fit of the graduated cylindrical shell (fit/shell.hpp)
// to the leading edges of every view at every time: the CME's true direction, width,
// apex height law and speed, with their uncertainties.
//
// The problem (Ceres). Parameters, shared by all times (self-similar expansion,
// Thernisien 2011):
//   direction [lon, lat]            rad, Stonyhurst/HEEQ (fit/shell.hpp)
//   shape     [tilt, α, κ]          rad, rad, 1
//   law       [h_ref, v, a]         apex height at ref_time_s (R☉), speed (km/s), accel (m/s²):
//             h(t) = h_ref + v τ / R☉ + ½ a τ² / R☉,  τ = t − ref_time_s (linear: a = 0)
//             or, for checking, one free apex height per observation time.
// Residual, one per observed leading-edge point (view, time, PA, sky height):
//   r = d(θ) · s_sky / s*,   d(θ) = min over s of D_shell(o + s ŵ; θ, h(t)),
// the smallest signed distance (fit/shell.hpp signed_distance_rs: > 0 outside the shell)
// between the shell and the line of sight o + s ŵ from the observer through the point's
// place on the plane of the sky, taken at the depth s* where the line passes closest,
// and carried back to the plane of the sky (distance s_sky from the observer) by the
// perspective factor s_sky / s*. So r is the sky-plane distance between the point and the
// shell's projected outline, normal to the outline — on the nose of the front this is the
// distance along the point's PA; toward the flanks, where the outline runs nearly radial,
// it is that distance times the cosine of the outline's slope, which keeps points there
// from dominating. r > 0: the point lies outside the outline (the model is too small).
// Ceres differentiates r automatically through the templated shell; s* is found on the
// values alone (sampling, then golden-section refinement), which is exact to first order
// because d is stationary in s at s* (the envelope theorem). Loss: Huber. One more
// residual holds a weak prior on the aspect ratio, κ ~ N(0.3, 0.15²) (shell_fit.cpp
// AspectPrior), so that a few sparse points cannot thin the shell to a line; a frame's
// points are thinned to max_points_per_frame, evenly in PA.
//
// Start (for two or more views that see the CME off the Sun–observer line): the
// direction from the intersection of the planes through each observer and Sun centre at
// that view's central PA (Inhester 2006, shared/REFERENCES.md); half-angle from the
// widest PA span; aspect ratio 0.3; the height law from the outermost leading edge of the
// least foreshortened view. Six tilts × two half-angles are started on a quarter of the
// points; the three best are refined on all points (each minimum among them once) and the
// lowest cost is kept.
// Planes fewer than kPlanesWellApartDeg apart also start from seven directions along the
// first view's plane (ε = 0, ±30°, ±60°, ±85° out of its sky plane: ±85° are nearly
// toward and away from that observer, where a CME seen as a partial halo there lies). Two or more views always
// fit the direction; the full fit's covariance decides whether it is constrained
// (kDirectionConstrainedDeg), never the start.
// One view: the event's source region fixes the direction (held constant, σ stated by the
// caller); with no source the direction is searched over a grid, and the result says it
// is unconstrained and carries wide σ (kUnconstrainedLonSigmaDeg, …).
//
// Uncertainty: ceres::Covariance at the solution, scaled by the residual variance
// s² = Σ r² / (n − p). Neighbouring leading-edge points of one frame are not independent
// (the detector smooths over PA, and one bright blob moves many of them together), so the
// covariance is further multiplied by the design effect of that clustering: the largest
// ratio, over the parameters, of the cluster-robust variance (clusters = one view's
// frame) to the plain one (shell_fit.cpp), at least 1 — checked for honesty over noisy
// realisations in tests/fit/shell_fit_test.cpp.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "fit/scenario.hpp"
#include "fit/shell.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

// Wide σ for a direction no view constrains (one view, no source region): a quarter of
// the circle in longitude, a sixth in latitude — our choice, stated in the result.
inline constexpr double kUnconstrainedLonSigmaDeg = 90.0;
inline constexpr double kUnconstrainedLatSigmaDeg = 60.0;
// Two or more views: the direction counts as constrained when the full fit's covariance
// gives σ lon and σ lat at most this (our choice: wider, and a hit on a target 30° off
// the axis is a coin toss). Central-PA planes closer than kPlanesApartMinDeg give no
// start direction; closer than kPlanesWellApartDeg, more starts along them as well.
inline constexpr double kDirectionConstrainedDeg = 30.0;
inline constexpr double kPlanesApartMinDeg = 0.5;
inline constexpr double kPlanesWellApartDeg = 10.0;

// One observed leading-edge point.
struct EdgePoint {
  int view = 0;            // index into the views of the fit
  double time_s = 0.0;     // UTC seconds since 2000-01-01
  double pa_deg = 0.0;     // position angle, CCW from solar north through east
  double height_rs = 0.0;  // plane-of-sky height from Sun centre, R☉
};

// What each view saw, for the start (imaging/front: central PA and sky width).
struct ShellView {
  std::string name;
  imaging::Observer observer;   // where the view looked from (its frames' observer)
  double central_pa_deg = 0.0;
  double width_deg = 0.0;       // sky width of the CME; ≥ 300 counts as a halo (no PA)
};

enum class ApexLawKind { linear, quadratic, free_per_time };

struct ShellFitOptions {
  ApexLawKind law = ApexLawKind::linear;
  // One view only: the source region's direction (deg) and how far the CME may be from it.
  std::optional<std::array<double, 2>> source_lon_lat_deg;
  double source_sigma_deg = 10.0;  // σ reported for a direction fixed by the source — our choice
  double huber_rs = 0.4;           // Huber loss scale, R☉ (about two polar rows at 15 R☉ fields)
  std::vector<double> start_tilts_deg{-60.0, -30.0, 0.0, 30.0, 60.0, 90.0};
  int max_iterations = 60;
  // Points per view and frame the fit uses, evenly spaced in PA (0: all). Thirty points
  // across a front sample it finer than its leading edge is resolved; more only cost time.
  int max_points_per_frame = 30;
};

// Indices into ShellFit::covariance (and the parameter vector).
enum ShellParam { kLon = 0, kLat, kTilt, kHalfAngle, kAspect, kHeight, kSpeed, kAccel, kShellParams };

struct ShellFit {
  bool ok = false;
  std::string problem;              // one sentence when not ok
  std::vector<std::string> notes;   // what the reader should know (direction unconstrained, …)
  ApexLawKind law_kind = ApexLawKind::linear;

  // The shell at ref_time_s (lon, lat, tilt normalised: lon in (−π, π], tilt in (−π/2, π/2]).
  ShellParams shell;
  ApexLaw law;                      // apex height law (linear: accel 0)
  // Free-per-time fits: the apex height at each distinct observation time.
  std::vector<std::pair<double, double>> free_heights;  // (time_s, apex height R☉)

  // Covariance of (lon, lat, tilt, α, κ in rad/1; h_ref R☉, v km/s, a m/s²), scaled as
  // described above. Rows of held or absent parameters are 0; a held direction then gets
  // its σ from the options (source) or the wide σ above (unconstrained).
  Eigen::Matrix<double, kShellParams, kShellParams> covariance =
      Eigen::Matrix<double, kShellParams, kShellParams>::Zero();
  std::array<double, kShellParams> sigma{};  // √diag, with the held-direction σ filled in
  bool direction_constrained = true;
  bool direction_held = false;               // one view: the source region's direction, held fixed
  bool covariance_ok = false;                // ceres::Covariance succeeded (else σ are NaN)
  std::vector<std::string> at_bound;         // shell-block keys of parameters left on a solver bound
  double covariance_inflation = 1.0;         // the design effect, applied above
  std::array<double, kShellParams> systematic{};  // σ_sys added by merge_edge_fits (0: none)

  int points_used = 0;               // after thinning (max_points_per_frame)
  double residual_rms_rs = 0.0;      // √(mean r²) over all input points, r as above
  std::vector<double> residuals_rs;  // per input point, in input order
  double cost = 0.0;                 // final Ceres cost (robust)
  int starts_tried = 0;
};

// The fit. views[i].observer must be valid for every point's view index.
ShellFit fit_shell(const std::vector<ShellView>& views, const std::vector<EdgePoint>& points,
                   const ShellFitOptions& options = {});

// The start direction from two or more views' central PAs (unit HEEQ vector), or nullopt
// when fewer than two views give a PA or their planes nearly coincide.
std::optional<Eigen::Vector3d> direction_from_planes(const std::vector<ShellView>& views);

// The residual r of one point against a shell (the formula above), for tests and overlays.
double outline_distance_rs(const ShellParams& shell, const imaging::Observer& observer, double pa_deg,
                           double height_rs);

// Joins the fits of one CME to two definitions of its edge — `rim`, the front's bright
// rim (imaging/front_ridge), and `outer`, its outer threshold edge (imaging/front) — into
// the reported one. The surface a shell stands for lies between the two (a sheath's rim
// sits a little inside it, the threshold edge in its outer wing), and no scatter of the
// points shows where, so:
//   shape (direction, tilt, α, κ): the rim fit's — the outer edge's wing widens shells at
//     their flanks, the rim's does not;
//   apex law (h, v, a): the mean of the two fits' laws at the reference time;
//   σ: each parameter's σ widened by σ_sys,i = |θ_rim,i − θ_outer,i| / 2 in quadrature
//     (added to the covariance's diagonal), kept in `systematic`.
// Our construction; tests/app/shell_measure_test.cpp checks that it is honest end to end.
void merge_edge_fits(ShellFit& rim, const ShellFit& outer);

// The fitted shell at another time (apex height from the law).
ShellParams shell_at(const ShellFit& fit, double time_s);

// Derived widths (Thernisien 2011, fit/shell.hpp) and their σ from the covariance.
double face_on_width_sigma_rad(const ShellFit& fit);
double edge_on_width_sigma_rad(const ShellFit& fit);

// When the apex passes a height (the 21.5 R☉ inner boundary of heliospheric models), its
// speed there, and first-order σ of both.
struct ApexCrossing {
  bool found = false;
  double time_s = 0.0, time_sigma_s = 0.0;
  double speed_km_s = 0.0, speed_sigma_km_s = 0.0;
};
ApexCrossing apex_crossing(const ShellFit& fit, double height_rs);

const char* to_string(ApexLawKind kind);  // "linear" | "quadratic" | "free per time"

}  // namespace occulta::fit
