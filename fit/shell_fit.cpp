// fit/shell_fit.cpp — the GCS fit over all views and times (the problem is described in
// shell_fit.hpp).
#include "fit/shell_fit.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <memory>
#include <numeric>
#include <type_traits>

#include <Eigen/Eigenvalues>
#include <ceres/ceres.h>

#include "imaging/constants.hpp"

namespace occulta::fit {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

inline double value_of(double x) { return x; }
template <typename T, int N>
double value_of(const ceres::Jet<T, N>& x) {
  return x.a;
}

// The line of sight through an observed edge point, HEEQ, R☉.
struct SightLine {
  Eigen::Vector3d heeq_p_obs_rs;  // the observer
  Eigen::Vector3d heeq_w;         // unit direction from the observer through the point
  double sky_depth_rs = 0.0;      // s_sky: observer to the point on the plane of the sky
};

// Unit vector in HEEQ of the plane-of-sky direction at a position angle. HCC (Thompson
// 2006): x̂ west, ŷ north, ẑ toward the observer; PA counts from north toward east (−x),
// so the direction is (−sin PA, cos PA, 0).
Eigen::Vector3d heeq_sky_direction(const imaging::Observer& observer, double pa_deg) {
  const double pa = pa_deg * kRadPerDeg;
  return imaging::hcc_R_heeq(observer).transpose() * Eigen::Vector3d(-std::sin(pa), std::cos(pa), 0.0);
}

SightLine sight_line(const imaging::Observer& observer, double pa_deg, double height_rs) {
  SightLine line;
  line.heeq_p_obs_rs = observer.heeq_p_obs_km() / kSolarRadiusKm;
  const Eigen::Vector3d heeq_p_sky = height_rs * heeq_sky_direction(observer, pa_deg);
  const Eigen::Vector3d along = heeq_p_sky - line.heeq_p_obs_rs;
  line.sky_depth_rs = along.norm();
  line.heeq_w = along / line.sky_depth_rs;
  return line;
}

// Shells the residual can be evaluated on (fit/shell.hpp is_valid, with a margin so the
// legs' walls stay short of the plane normal to the axis).
bool plausible(const ShellParams& p) {
  return std::isfinite(p.lon) && std::isfinite(p.lat) && std::isfinite(p.tilt) && p.apex_height_rs > 0.2 &&
         p.half_angle >= 0.0 && p.aspect_ratio > 0.0 && p.aspect_ratio < 0.95 &&
         p.half_angle + std::asin(p.aspect_ratio) < 0.5 * kPi - 1e-3;
}

// The rotation into the shell frame and the shape of the last shell this thread used.
// Every residual of one Ceres evaluation has the same direction and shape (and a frame's
// points the same apex height), with the same derivative parts for Jets (each residual
// holds the same parameter blocks in the same order), so these are made once per
// evaluation and frame rather than once per point (the same values to rounding).
template <typename T>
bool same_value(const T& a, const T& b) {
  if constexpr (std::is_same_v<T, double>) {
    return a == b;
  } else {
    return a.a == b.a && (a.v.array() == b.v.array()).all();
  }
}

template <typename T>
struct ShellCache {
  bool filled = false;
  BasicShellParams<T> key;
  Eigen::Matrix<T, 3, 3> shell_R_heeq;
  BasicShellShape<T> shape;
};

template <typename T>
const ShellCache<T>& cached_shell(const BasicShellParams<T>& p) {
  thread_local ShellCache<T> cache;
  const BasicShellParams<T>& k = cache.key;
  if (!cache.filled || !(same_value(p.lon, k.lon) && same_value(p.lat, k.lat) && same_value(p.tilt, k.tilt)))
    cache.shell_R_heeq = heeq_R_shell(p).transpose();
  if (!cache.filled || !(same_value(p.apex_height_rs, k.apex_height_rs) && same_value(p.half_angle, k.half_angle) &&
                         same_value(p.aspect_ratio, k.aspect_ratio)))
    cache.shape = shell_shape(p);
  cache.key = p;
  cache.filled = true;
  return cache;
}

// Brent's minimisation of f on [lo, hi] from a point x inside it whose value fx is known
// (Brent 1973, "Algorithms for Minimization without Derivatives", ch. 5, procedure
// localmin: parabolic steps through the three best points, golden-section steps when a
// parabola is not trusted; the method of scipy.optimize.minimize_scalar's "bounded" and
// "brent"). Stops when x is within 2·tol of the bracket's middle; x, fx are the best.
// A non-finite f(u) only narrows the bracket (comparisons with it fail).
template <typename F>
void brent_minimise(const F& f, double lo, double hi, double tol, double& x, double& fx) {
  constexpr double kGoldenStep = 0.3819660112501051;  // (3 − √5) / 2
  double v = x, w = x, fv = fx, fw = fx, d = 0.0, e = 0.0;
  for (int iteration = 0; iteration < 60; ++iteration) {
    const double m = 0.5 * (lo + hi), tol1 = tol, tol2 = 2.0 * tol1;
    if (std::abs(x - m) <= tol2 - 0.5 * (hi - lo)) break;
    double p = 0.0, q = 0.0, r = 0.0;
    if (std::abs(e) > tol1) {
      r = (x - w) * (fx - fv);
      q = (x - v) * (fx - fw);
      p = (x - v) * q - (x - w) * r;
      q = 2.0 * (q - r);
      if (q > 0.0) p = -p;
      else q = -q;
      r = e;
      e = d;
    }
    if (std::abs(p) < std::abs(0.5 * q * r) && p > q * (lo - x) && p < q * (hi - x)) {
      d = p / q;  // parabolic step
      const double u = x + d;
      if (u - lo < tol2 || hi - u < tol2) d = x < m ? tol1 : -tol1;
    } else {
      e = (x < m ? hi : lo) - x;  // golden-section step into the larger part
      d = kGoldenStep * e;
    }
    const double u = x + (std::abs(d) >= tol1 ? d : (d > 0.0 ? tol1 : -tol1));
    const double fu = f(u);
    if (fu <= fx) {
      (u < x ? hi : lo) = x;
      v = w, fv = fw, w = x, fw = fx, x = u, fx = fu;
    } else {
      (u < x ? lo : hi) = u;
      if (fu <= fw || w == x) {
        v = w, fv = fw, w = u, fw = fu;
      } else if (fu <= fv || v == x || v == w) {
        v = u, fv = fu;
      }
    }
  }
}

// s*: the depth along the line where the shell's signed distance is smallest, on values
// alone. Of 32 samples over the stretch of the line within the apex height of Sun centre
// (no surface point lies farther out), the lowest (the first of equals); then Brent's
// minimisation between its neighbours, from it, to 10⁻⁵ of the apex height. (Golden-
// section search before: 20 evaluations to a bracket of ~2·10⁻⁵ of the apex height;
// Brent's parabolic steps reach the same minimum in about 6. d is stationary at s*, so
// the residual moves by O(Δs²), in its 9th digit.)
// The samples are visited from the one nearest `s_hint` (the last s* of this line) outward,
// and those that cannot be the lowest are skipped: d changes by at most kDepthSlope per R☉
// along the line, so k samples beyond one of value d_i lie above d_i − k·kDepthSlope·step,
// and when that is still above the lowest so far they are not evaluated. The lowest
// sample, and so s*, is the one all 32 would give; the skipped ones are most of those far
// from the shell.
// False when no sample has a finite distance (the line meets no piece's domain).
//
// kDepthSlope: the legs' distance changes by at most 1 per R☉ (an exact distance); the
// front's, measured within the cross-section plane through the point, by more near the
// line the planes share (the centre of the front's arc), where its circle turns with the
// plane: the largest slope between neighbouring samples in the fits of
// tests/bench/shell_fit_bench and the sample event was 3.2. 5 leaves a margin (our choice;
// a larger value only skips fewer samples).
constexpr double kDepthSlope = 5.0;

bool closest_depth(const ShellParams& p, const SightLine& line, double s_hint, double& s_star, double& d_star) {
  const ShellCache<double>& cache = cached_shell(p);
  const ShellShape& shape = cache.shape;
  const Eigen::Vector3d o = cache.shell_R_heeq * line.heeq_p_obs_rs, w = cache.shell_R_heeq * line.heeq_w;
  const double centre = -o.dot(w), reach = 1.05 * p.apex_height_rs;
  const auto distance = [&](double s) { return signed_distance_rs(shape, o + s * w); };
  constexpr int kSamples = 32;
  const double step = 2.0 * reach / (kSamples - 1);
  int best = -1;
  double best_d = std::numeric_limits<double>::infinity();
  const int first = std::isfinite(s_hint)
                        ? static_cast<int>(std::lround(std::clamp((s_hint - (centre - reach)) / step, 0.0, kSamples - 1.0)))
                        : kSamples / 2;
  for (const int direction : {1, -1}) {
    for (int i = direction > 0 ? first : first - 1; i >= 0 && i < kSamples;) {
      const double d = distance(centre - reach + i * step);
      if (d < best_d || (d == best_d && i < best)) best_d = d, best = i;
      // Samples i + direction·j, 1 ≤ j ≤ skip, lie above d − j·kDepthSlope·step > best_d.
      const double room = (d - best_d) / (kDepthSlope * step);
      const int skip = std::isfinite(room) && room > 0.0 ? static_cast<int>(std::min(std::ceil(room) - 1.0, 64.0)) : 0;
      i += direction * (1 + skip);
    }
  }
  if (best < 0 || !std::isfinite(best_d)) return false;
  const double lo = centre - reach + std::max(0, best - 1) * step;
  const double hi = centre - reach + std::min(kSamples - 1, best + 1) * step;
  s_star = centre - reach + best * step;
  d_star = best_d;
  brent_minimise(distance, lo, hi, 1e-5 * p.apex_height_rs, s_star, d_star);
  return std::isfinite(d_star) && s_star > 0.0;
}

// Apex height at τ from the law block: h_ref + v τ / R☉ + ½ a τ² / R☉ (v km/s, a m/s²:
// /1000 for km), or the free height itself.
template <int kLawSize, typename T>
T apex_height(const T* law, double tau_s) {
  if constexpr (kLawSize == 3) {
    return law[0] + law[1] * (tau_s / kSolarRadiusKm) + law[2] * (0.5e-3 * tau_s * tau_s / kSolarRadiusKm);
  } else {
    return law[0];
  }
}

// The residual of shell_fit.hpp:
//   r = D_shell(o + s* ŵ; θ, h(t)) · s_sky / s*,   s* = argmin_s D_shell(o + s ŵ),
// s* found on the values and held fixed for the derivatives (envelope theorem).
// Ceres evaluates most accepted points twice — the cost of the trial step, then the
// Jacobian there — so each residual keeps its last s*: the same shell values give the
// same s*, bit for bit, without the search (closest_depth is most of a fit's time). One
// residual is never evaluated by two threads at once (Ceres splits work by residual).
template <int kLawSize>
struct OutlineResidual {
  SightLine line;
  double tau_s = 0.0;
  mutable ShellParams last_shell{kNaN, kNaN, kNaN, kNaN, kNaN, kNaN};
  mutable double last_s_star = kNaN;  // also where the next search starts
  mutable bool last_found = false;

  template <typename T>
  bool operator()(const T* direction, const T* shape, const T* law, T* residual) const {
    BasicShellParams<T> p;
    p.lon = direction[0];
    p.lat = direction[1];
    p.tilt = shape[0];
    p.half_angle = shape[1];
    p.aspect_ratio = shape[2];
    p.apex_height_rs = apex_height<kLawSize>(law, tau_s);
    const ShellParams v{value_of(p.lon),           value_of(p.lat),        value_of(p.tilt),
                        value_of(p.apex_height_rs), value_of(p.half_angle), value_of(p.aspect_ratio)};
    if (!plausible(v)) return false;
    const ShellParams& c = last_shell;
    if (!(v.lon == c.lon && v.lat == c.lat && v.tilt == c.tilt && v.apex_height_rs == c.apex_height_rs &&
          v.half_angle == c.half_angle && v.aspect_ratio == c.aspect_ratio)) {
      double d_star = 0.0;
      last_found = closest_depth(v, line, last_s_star, last_s_star, d_star);
      last_shell = v;
    }
    if (!last_found) return false;
    const double s_star = last_s_star;
    const Eigen::Vector3d heeq_q = line.heeq_p_obs_rs + s_star * line.heeq_w;
    const ShellCache<T>& cache = cached_shell(p);
    const Eigen::Matrix<T, 3, 1> shell_q = cache.shell_R_heeq * heeq_q.cast<T>();
    residual[0] = signed_distance_rs(cache.shape, shell_q) * (line.sky_depth_rs / s_star);
    return true;
  }
};

// A weak prior on the aspect ratio, so sparse points cannot thin the shell to a line:
//   r = σ_edge (κ − κ₀) / σ_κ,
// which, beside point residuals of about σ_edge, is the Gaussian prior κ ~ N(κ₀, σ_κ²).
// κ₀ = 0.3, σ_κ = 0.15 cover the aspect ratios fitted to CMEs, ~0.2–0.5 (our reading of
// common practice, from memory); σ_edge = 0.3 R☉ (two pixels of a 15 R☉ field at 512²).
struct AspectPrior {
  double kappa0 = 0.3, sigma_kappa = 0.15, sigma_edge_rs = 0.3;
  template <typename T>
  bool operator()(const T* shape, T* residual) const {
    residual[0] = sigma_edge_rs * (shape[2] - kappa0) / sigma_kappa;
    return true;
  }
};

// Everything the solves share.
struct Data {
  std::vector<SightLine> lines;
  std::vector<double> tau_s;
  std::vector<int> time_group;       // index of the point's distinct time (free-per-time fits)
  std::vector<double> group_time_s;  // the distinct times
  double ref_time_s = 0.0;
};

// The parameter vector of a solve: direction, shape, law (h, v, a) or free heights.
struct Params {
  std::array<double, 2> direction{};
  std::array<double, 3> shape{};
  std::array<double, 3> law{};
  std::vector<double> heights;  // free per time
};

ShellParams shell_of(const Params& x, double tau_s) {
  ShellParams p;
  p.lon = x.direction[0];
  p.lat = x.direction[1];
  p.tilt = x.shape[0];
  p.half_angle = x.shape[1];
  p.aspect_ratio = x.shape[2];
  p.apex_height_rs = apex_height<3>(x.law.data(), tau_s);
  return p;
}

// A solve's Ceres blocks all live in one array, in a fixed order (direction 2, shape 3, law
// 3, free heights): Ceres orders a covariance's parameter blocks by their addresses, so
// with the heights in an allocation of their own the order, and the covariance's last
// bits (~1e-14 relative), changed with where the heap put them from run to run. Ceres
// works on `packed`; `x` holds the values before and after.
struct Solve {
  std::unique_ptr<ceres::Problem> problem;
  Params x;
  std::vector<double> packed;
  double cost = std::numeric_limits<double>::infinity();
  bool usable = false;
  double* direction() { return packed.data(); }
  double* shape() { return packed.data() + 2; }
  double* law() { return packed.data() + 5; }
  double* height(std::size_t g) { return packed.data() + 8 + g; }
};

// One Ceres solve from a start over the points `use` (all when empty).
void run_solve(Solve& solve, const Data& d, ApexLawKind kind, bool hold_direction, double huber_rs,
               int max_iterations, const std::vector<int>& use) {
  ceres::Problem::Options problem_options;
  problem_options.loss_function_ownership = ceres::TAKE_OWNERSHIP;
  solve.problem = std::make_unique<ceres::Problem>(problem_options);
  ceres::Problem& problem = *solve.problem;
  Params& x = solve.x;
  if (kind == ApexLawKind::free_per_time && x.heights.size() != d.group_time_s.size()) {
    x.heights.resize(d.group_time_s.size());
    for (std::size_t g = 0; g < d.group_time_s.size(); ++g)
      x.heights[g] = apex_height<3>(x.law.data(), d.group_time_s[g] - d.ref_time_s);
  }
  solve.packed.assign(x.direction.begin(), x.direction.end());
  solve.packed.insert(solve.packed.end(), x.shape.begin(), x.shape.end());
  solve.packed.insert(solve.packed.end(), x.law.begin(), x.law.end());
  if (kind == ApexLawKind::free_per_time) solve.packed.insert(solve.packed.end(), x.heights.begin(), x.heights.end());
  ceres::LossFunction* loss = new ceres::HuberLoss(huber_rs);
  const auto add = [&](int i) {
    if (kind == ApexLawKind::free_per_time) {
      auto* cost = new ceres::AutoDiffCostFunction<OutlineResidual<1>, 1, 2, 3, 1>(
          new OutlineResidual<1>{d.lines[i], d.tau_s[i]});
      problem.AddResidualBlock(cost, loss, solve.direction(), solve.shape(),
                               solve.height(static_cast<std::size_t>(d.time_group[i])));
    } else {
      auto* cost = new ceres::AutoDiffCostFunction<OutlineResidual<3>, 1, 2, 3, 3>(
          new OutlineResidual<3>{d.lines[i], d.tau_s[i]});
      problem.AddResidualBlock(cost, loss, solve.direction(), solve.shape(), solve.law());
    }
  };
  if (use.empty()) {
    for (int i = 0; i < static_cast<int>(d.lines.size()); ++i) add(i);
  } else {
    for (const int i : use) add(i);
  }
  problem.AddResidualBlock(new ceres::AutoDiffCostFunction<AspectPrior, 1, 3>(new AspectPrior{}), nullptr,
                           solve.shape());
  // Bounds (rad, R☉, km/s, m/s²): latitudes short of the poles, half-angles and aspect
  // ratios within the shapes the model describes, speeds and accelerations of CMEs
  // (~100–3000 km/s, common practice) with room on both sides.
  problem.SetParameterLowerBound(solve.direction(), 1, -0.49 * kPi);
  problem.SetParameterUpperBound(solve.direction(), 1, 0.49 * kPi);
  problem.SetParameterLowerBound(solve.shape(), 1, 1.0 * kRadPerDeg);
  problem.SetParameterUpperBound(solve.shape(), 1, 75.0 * kRadPerDeg);
  problem.SetParameterLowerBound(solve.shape(), 2, 0.03);
  problem.SetParameterUpperBound(solve.shape(), 2, 0.85);
  if (hold_direction) problem.SetParameterBlockConstant(solve.direction());
  if (kind == ApexLawKind::free_per_time) {
    for (std::size_t g = 0; g < x.heights.size(); ++g) {
      if (!problem.HasParameterBlock(solve.height(g))) continue;
      problem.SetParameterLowerBound(solve.height(g), 0, 1.0);
      problem.SetParameterUpperBound(solve.height(g), 0, 300.0);
    }
  } else {
    problem.SetParameterLowerBound(solve.law(), 0, 1.0);
    problem.SetParameterUpperBound(solve.law(), 0, 300.0);
    problem.SetParameterLowerBound(solve.law(), 1, 10.0);
    problem.SetParameterUpperBound(solve.law(), 1, 6000.0);
    problem.SetParameterLowerBound(solve.law(), 2, -1000.0);
    problem.SetParameterUpperBound(solve.law(), 2, 1000.0);
    if (kind == ApexLawKind::linear) {
      solve.law()[2] = 0.0;
      problem.SetManifold(solve.law(), new ceres::SubsetManifold(3, {2}));
    }
  }
  ceres::Solver::Options options;
  options.linear_solver_type = ceres::DENSE_QR;
  options.max_num_iterations = max_iterations;
  options.function_tolerance = 1e-8;
  options.parameter_tolerance = 1e-8;
  options.logging_type = ceres::SILENT;
  options.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(options, &problem, &summary);
  std::copy_n(solve.direction(), 2, x.direction.begin());
  std::copy_n(solve.shape(), 3, x.shape.begin());
  std::copy_n(solve.law(), 3, x.law.begin());
  if (kind == ApexLawKind::free_per_time) std::copy_n(solve.height(0), x.heights.size(), x.heights.begin());
  solve.usable = summary.IsSolutionUsable() && std::isfinite(summary.final_cost);
  solve.cost = solve.usable ? summary.final_cost : std::numeric_limits<double>::infinity();
}

double wrap_pi(double a) {
  a = std::fmod(a + kPi, 2.0 * kPi);
  if (a < 0.0) a += 2.0 * kPi;
  return a - kPi;
}

// Two coarse solutions (normalised) in the same minimum: every parameter within 10⁻³ (rad,
// κ; h, v and a relative to their size). The coarse solves stop within ~10⁻⁴ of their
// minimum (shell_fit_bench: starts at six tilts end within 10⁻⁴ rad of each other); two
// distinct minima of the shell's cost lie much farther apart than that (our choice).
bool same_minimum(const Params& a, const Params& b) {
  const auto near = [](double x, double y, double scale) { return std::abs(x - y) <= 1e-3 * scale; };
  return std::abs(wrap_pi(a.direction[0] - b.direction[0])) <= 1e-3 && near(a.direction[1], b.direction[1], 1.0) &&
         std::abs(std::remainder(a.shape[0] - b.shape[0], kPi)) <= 1e-3 && near(a.shape[1], b.shape[1], 1.0) &&
         near(a.shape[2], b.shape[2], 1.0) && near(a.law[0], b.law[0], std::abs(a.law[0])) &&
         near(a.law[1], b.law[1], std::abs(a.law[1])) && near(a.law[2], b.law[2], std::max(1.0, std::abs(a.law[2])));
}

// lon into (−π, π]; tilt into (−π/2, π/2] (the shell is the same turned by π about its
// axis: the legs swap and the cross-sections are symmetric).
void normalise(Params& x) {
  x.direction[0] = wrap_pi(x.direction[0]);
  double t = std::fmod(x.shape[0], kPi);
  if (t <= -0.5 * kPi) t += kPi;
  if (t > 0.5 * kPi) t -= kPi;
  x.shape[0] = t;
}

// The largest angle between two views' central-PA planes (direction_from_planes), deg.
double plane_spread_deg(const std::vector<ShellView>& views) {
  std::vector<Eigen::Vector3d> normals;
  for (const ShellView& v : views)
    if (v.width_deg < 300.0)
      normals.push_back(v.observer.heeq_p_obs_km().normalized().cross(heeq_sky_direction(v.observer, v.central_pa_deg)).normalized());
  double widest = 0.0;
  for (std::size_t i = 0; i < normals.size(); ++i)
    for (std::size_t j = i + 1; j < normals.size(); ++j)
      widest = std::max(widest, std::acos(std::clamp(std::abs(normals[i].dot(normals[j])), 0.0, 1.0)) * kDegPerRad);
  return widest;
}

// Candidate apex directions for the start.
std::vector<Eigen::Vector3d> start_directions(const std::vector<ShellView>& views, const ShellFitOptions& options,
                                              bool& constrained, bool& held) {
  constrained = true;
  held = false;
  std::vector<Eigen::Vector3d> out;
  const auto planes = direction_from_planes(views);
  if (planes) out.push_back(*planes);
  // Planes a few degrees apart fix the start's direction poorly (their intersection
  // moves by tens of degrees for a degree of central PA): more starts then, along the
  // first view's plane, as below — two views stay two views (issue 11).
  if (planes && plane_spread_deg(views) >= kPlanesWellApartDeg) return out;
  std::vector<const ShellView*> with_pa, halos;
  for (const ShellView& v : views) (v.width_deg >= 300.0 ? halos : with_pa).push_back(&v);
  if (views.size() == 1 && options.source_lon_lat_deg) {
    const double lon = (*options.source_lon_lat_deg)[0] * kRadPerDeg, lat = (*options.source_lon_lat_deg)[1] * kRadPerDeg;
    out.emplace_back(std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat));
    held = true;
    return out;
  }
  if (!with_pa.empty()) {
    // The direction lies in the plane through the observer and Sun centre at the central
    // PA. A halo elsewhere says it runs near that observer's line (toward or away);
    // otherwise try several angles ε out of the plane of the sky.
    const ShellView& v = *with_pa.front();
    const Eigen::Vector3d sky = heeq_sky_direction(v.observer, v.central_pa_deg);
    const Eigen::Vector3d toward = v.observer.heeq_p_obs_km().normalized();
    for (const ShellView* h : halos) {
      for (const double sign : {1.0, -1.0}) {
        const Eigen::Vector3d line = sign * h->observer.heeq_p_obs_km().normalized();
        const double a = line.dot(sky), b = line.dot(toward);
        if (a > 0.0) out.push_back((a * sky + b * toward).normalized());
      }
    }
    if (!out.empty() && !planes) return out;
    // One view: nothing but a source region could fix the direction. Two or more: the
    // fit's covariance decides (fit_shell).
    constrained = views.size() >= 2;
    for (const double eps_deg : {-85.0, -60.0, -30.0, 0.0, 30.0, 60.0, 85.0}) {
      const double e = eps_deg * kRadPerDeg;
      out.push_back(std::cos(e) * sky + std::sin(e) * toward);
    }
    return out;
  }
  // Only halos: the CME runs along (toward or away from) the first observer's line.
  const Eigen::Vector3d line = views.front().observer.heeq_p_obs_km().normalized();
  out.push_back(line);
  out.push_back(-line);
  return out;
}

// Linear law from the outermost edge of the least foreshortened view: its sky height
// divided by the cosine of the angle ε between the direction and that view's sky plane.
std::array<double, 3> start_law(const Data& d, const std::vector<ShellView>& views, const std::vector<EdgePoint>& pts,
                                const Eigen::Vector3d& direction) {
  int best_view = 0;
  double best_cos = -1.0;
  for (std::size_t v = 0; v < views.size(); ++v) {
    const double sin_eps = std::abs(direction.dot(views[v].observer.heeq_p_obs_km().normalized()));
    const double cos_eps = std::sqrt(std::max(0.0, 1.0 - sin_eps * sin_eps));
    bool has_points = false;
    for (const EdgePoint& p : pts) has_points |= p.view == static_cast<int>(v);
    if (has_points && cos_eps > best_cos) best_cos = cos_eps, best_view = static_cast<int>(v);
  }
  const double cos_eps = std::max(best_cos, 0.5);
  std::map<double, double> outermost;
  for (std::size_t i = 0; i < pts.size(); ++i) {
    if (pts[i].view != best_view) continue;
    double& h = outermost[d.tau_s[i]];
    h = std::max(h, pts[i].height_rs / cos_eps);
  }
  std::array<double, 3> law{5.0, 600.0, 0.0};
  if (outermost.empty()) return law;
  double st = 0, sh = 0, stt = 0, sth = 0;
  for (const auto& [t, h] : outermost) st += t, sh += h, stt += t * t, sth += t * h;
  const double n = static_cast<double>(outermost.size());
  law[0] = sh / n;
  const double var = stt - st * st / n;
  if (outermost.size() >= 2 && var > 0.0) {
    const double slope = (sth - st * sh / n) / var;  // R☉/s
    law[0] = (sh - slope * st) / n;                  // at τ = 0
    law[1] = std::clamp(slope * kSolarRadiusKm, 100.0, 4000.0);
  }
  law[0] = std::clamp(law[0], 1.5, 250.0);
  return law;
}

// At most `cap` points of each view's frame, evenly spaced in PA order (all when cap ≤ 0).
std::vector<EdgePoint> thinned(const std::vector<EdgePoint>& points, int cap) {
  if (cap <= 0) return points;
  std::map<std::pair<int, long long>, std::vector<const EdgePoint*>> frames;
  for (const EdgePoint& p : points) frames[{p.view, std::llround(p.time_s)}].push_back(&p);
  std::vector<EdgePoint> out;
  for (auto& [key, pts] : frames) {
    std::sort(pts.begin(), pts.end(), [](const EdgePoint* a, const EdgePoint* b) { return a->pa_deg < b->pa_deg; });
    const std::size_t n = pts.size(), keep = std::min(n, static_cast<std::size_t>(cap));
    for (std::size_t k = 0; k < keep; ++k) out.push_back(*pts[keep > 1 ? k * (n - 1) / (keep - 1) : 0]);
  }
  return out;
}

// Residuals at a solution, on values.
std::vector<double> residuals_at(const Data& d, const Params& x, ApexLawKind kind) {
  std::vector<double> r(d.lines.size(), kNaN);
  for (std::size_t i = 0; i < d.lines.size(); ++i) {
    double out = kNaN;
    if (kind == ApexLawKind::free_per_time) {
      OutlineResidual<1>{d.lines[i], d.tau_s[i]}(x.direction.data(), x.shape.data(),
                                                  &x.heights[static_cast<std::size_t>(d.time_group[i])], &out);
    } else {
      OutlineResidual<3>{d.lines[i], d.tau_s[i]}(x.direction.data(), x.shape.data(), x.law.data(), &out);
    }
    r[i] = out;
  }
  return r;
}

// The design effect of one frame's points moving together: the ratio of the cluster-
// robust ("sandwich") variance, clusters = one view's frame, to the plain one,
//   C_plain = (JᵀJ)⁻¹ s²,   C_cluster = (JᵀJ)⁻¹ (Σ_c J_cᵀ r_c r_cᵀ J_c) (JᵀJ)⁻¹ · G/(G − 1) · (n − 1)/(n − p)
// (Liang & Zeger 1986; the small-sample factor is the usual one — common practice),
// largest over the parameters and at least 1. J and r are the raw residuals' (no loss),
// over the blocks `free`, in their tangent spaces.
double design_effect(ceres::Problem& problem, const std::vector<double*>& free, const std::vector<int>& cluster,
                     double s2) {
  ceres::Problem::EvaluateOptions eval;
  eval.parameter_blocks = free;
  eval.apply_loss_function = false;
  std::vector<double> r;
  ceres::CRSMatrix crs;
  if (!problem.Evaluate(eval, nullptr, &r, nullptr, &crs) || r.size() != cluster.size()) return 1.0;
  const int n = crs.num_rows, k = crs.num_cols;
  Eigen::MatrixXd J = Eigen::MatrixXd::Zero(n, k);
  for (int i = 0; i < n; ++i)
    for (int e = crs.rows[static_cast<std::size_t>(i)]; e < crs.rows[static_cast<std::size_t>(i) + 1]; ++e)
      J(i, crs.cols[static_cast<std::size_t>(e)]) = crs.values[static_cast<std::size_t>(e)];
  const Eigen::MatrixXd A_inv = (J.transpose() * J).completeOrthogonalDecomposition().pseudoInverse();
  std::map<int, Eigen::VectorXd> scores;
  for (int i = 0; i < n; ++i) {
    auto [it, fresh] = scores.try_emplace(cluster[static_cast<std::size_t>(i)], Eigen::VectorXd::Zero(k));
    it->second += J.row(i).transpose() * r[static_cast<std::size_t>(i)];
  }
  const double g = static_cast<double>(scores.size());
  if (g < 2.0 || n <= k) return 1.0;
  Eigen::MatrixXd B = Eigen::MatrixXd::Zero(k, k);
  for (const auto& [c, score] : scores) B += score * score.transpose();
  const Eigen::MatrixXd C_cluster = A_inv * B * A_inv * (g / (g - 1.0)) * ((n - 1.0) / (n - k));
  double f = 1.0;
  for (int i = 0; i < k; ++i)
    if (A_inv(i, i) > 0.0) f = std::max(f, C_cluster(i, i) / (A_inv(i, i) * s2));
  return f;
}

}  // namespace

const char* to_string(ApexLawKind kind) {
  switch (kind) {
    case ApexLawKind::linear: return "linear";
    case ApexLawKind::quadratic: return "quadratic";
    case ApexLawKind::free_per_time: return "free per time";
  }
  return "?";
}

std::optional<Eigen::Vector3d> direction_from_planes(const std::vector<ShellView>& views) {
  // Each view: the plane through the observer and Sun centre holding the sky direction at
  // its central PA, normal n = ô × û_PA. The CME's direction lies in every such plane, so
  // it is the direction most nearly normal to all n: the eigenvector of Σ n nᵀ with the
  // smallest eigenvalue (for two views, n₁ × n₂) — Inhester (2006), shared/REFERENCES.md.
  Eigen::Matrix3d scatter = Eigen::Matrix3d::Zero();
  std::vector<Eigen::Vector3d> skies;
  for (const ShellView& v : views) {
    if (v.width_deg >= 300.0) continue;  // a halo has no central PA
    const Eigen::Vector3d sky = heeq_sky_direction(v.observer, v.central_pa_deg);
    const Eigen::Vector3d n = v.observer.heeq_p_obs_km().normalized().cross(sky).normalized();
    scatter += n * n.transpose();
    skies.push_back(sky);
  }
  if (skies.size() < 2) return std::nullopt;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eig(scatter);
  // Two unit normals at an angle θ give the eigenvalues 1 ± cos θ (and 0), so the middle
  // one is 1 − cos θ = 2 sin²(θ/2) ≈ θ²/2 — not sin²θ. Planes within kPlanesApartMinDeg of
  // each other leave the line along them undetermined for the start; the fit then starts
  // from several directions in those planes (start_directions) and its covariance says
  // how well the views fix the direction.
  if (eig.eigenvalues()(1) < 2.0 * std::pow(std::sin(0.5 * kPlanesApartMinDeg * kRadPerDeg), 2)) return std::nullopt;
  Eigen::Vector3d dir = eig.eigenvectors().col(0).normalized();
  double toward = 0.0;
  for (const Eigen::Vector3d& sky : skies) toward += dir.dot(sky);
  if (toward < 0.0) dir = -dir;  // the sense that appears at the measured PAs, not 180° from them
  return dir;
}

double outline_distance_rs(const ShellParams& shell, const imaging::Observer& observer, double pa_deg,
                           double height_rs) {
  Params x;
  x.direction = {shell.lon, shell.lat};
  x.shape = {shell.tilt, shell.half_angle, shell.aspect_ratio};
  x.law = {shell.apex_height_rs, 0.0, 0.0};
  double r = kNaN;
  OutlineResidual<3>{sight_line(observer, pa_deg, height_rs), 0.0}(x.direction.data(), x.shape.data(), x.law.data(),
                                                                   &r);
  return r;
}

ShellFit fit_shell(const std::vector<ShellView>& views, const std::vector<EdgePoint>& observed,
                   const ShellFitOptions& options) {
  ShellFit fit;
  fit.law_kind = options.law;
  const int p_count = (options.law == ApexLawKind::quadratic ? 8 : 7);
  if (views.empty() || observed.size() < static_cast<std::size_t>(p_count + 2)) {
    fit.problem = "too few leading-edge points for a shell fit (" + std::to_string(observed.size()) + ")";
    return fit;
  }
  for (const EdgePoint& p : observed) {
    if (p.view < 0 || p.view >= static_cast<int>(views.size()) || !std::isfinite(p.height_rs) ||
        !std::isfinite(p.pa_deg) || !std::isfinite(p.time_s) || p.height_rs <= 0.0) {
      fit.problem = "a leading-edge point has no valid view, time, PA or height";
      return fit;
    }
  }
  const std::vector<EdgePoint> points = thinned(observed, options.max_points_per_frame);
  Data d;
  const auto [tmin, tmax] = std::minmax_element(points.begin(), points.end(),
                                                [](const EdgePoint& a, const EdgePoint& b) { return a.time_s < b.time_s; });
  d.ref_time_s = std::round(0.5 * (tmin->time_s + tmax->time_s));
  std::map<long long, int> groups;
  for (const EdgePoint& p : points) {
    d.lines.push_back(sight_line(views[static_cast<std::size_t>(p.view)].observer, p.pa_deg, p.height_rs));
    d.tau_s.push_back(p.time_s - d.ref_time_s);
    const long long key = std::llround(p.time_s / 60.0);  // views within a minute share a time
    auto [it, inserted] = groups.emplace(key, static_cast<int>(groups.size()));
    if (inserted) d.group_time_s.push_back(p.time_s);
    d.time_group.push_back(it->second);
  }

  bool constrained = true, held = false;
  const std::vector<Eigen::Vector3d> directions = start_directions(views, options, constrained, held);
  fit.direction_constrained = constrained || held;
  fit.direction_held = held;
  double widest = 0.0;
  for (const ShellView& v : views)
    if (v.width_deg < 300.0) widest = std::max(widest, v.width_deg);
  const double kappa0 = 0.3;
  const double alpha0 =
      std::clamp(0.5 * (widest > 0.0 ? widest : 60.0) * kRadPerDeg - std::asin(kappa0), 5.0 * kRadPerDeg, 55.0 * kRadPerDeg);

  // Starts on every fourth point (the coarse search), the best refined on all.
  std::vector<int> coarse;
  for (int i = 0; i < static_cast<int>(points.size()); i += 4) coarse.push_back(i);
  // Coarse solves from every start; the best few are then refined on all points and the
  // lowest final cost wins (a coarse cost can rank two basins wrongly when few points
  // separate them, e.g. a thin shell seen nearly along its legs' plane).
  std::vector<std::pair<double, Params>> coarse_results;
  for (const Eigen::Vector3d& dir : directions) {
    const std::array<double, 3> law = start_law(d, views, points, dir);
    for (const double alpha : {alpha0, 0.6 * alpha0}) {
      for (const double tilt_deg : options.start_tilts_deg) {
        Solve s;
        s.x.direction = {std::atan2(dir.y(), dir.x()), std::asin(std::clamp(dir.z(), -1.0, 1.0))};
        s.x.shape = {tilt_deg * kRadPerDeg, alpha, kappa0};
        s.x.law = law;
        // Every law starts from a straight line: the coarse search only ranks basins.
        run_solve(s, d, ApexLawKind::linear, held, options.huber_rs, std::min(options.max_iterations, 20), coarse);
        ++fit.starts_tried;
        if (s.usable) coarse_results.emplace_back(s.cost, s.x);
      }
    }
  }
  if (coarse_results.empty()) {
    fit.problem = "the shell fit found no usable solution from any start";
    return fit;
  }
  std::sort(coarse_results.begin(), coarse_results.end(),
            [](const auto& a, const auto& b) { return a.first < b.first; });
  // Solves live on the heap: their Ceres problems point into their parameters.
  std::unique_ptr<Solve> chosen;
  std::vector<Params> refined_from;
  for (std::size_t k = 0; k < std::min<std::size_t>(3, coarse_results.size()); ++k) {
    // Starts that ended in the same minimum as one already refined (most do) would refine
    // to it again, to the solver's tolerance: refined once.
    Params start = coarse_results[k].second;
    normalise(start);
    if (std::any_of(refined_from.begin(), refined_from.end(), [&](const Params& q) { return same_minimum(q, start); }))
      continue;
    refined_from.push_back(start);
    auto refined = std::make_unique<Solve>();
    refined->x = coarse_results[k].second;
    refined->x.heights.clear();
    run_solve(*refined, d, options.law, held, options.huber_rs, options.max_iterations, {});
    if (refined->usable && (!chosen || refined->cost < chosen->cost)) chosen = std::move(refined);
  }
  if (!chosen) {
    fit.problem = "the shell fit did not converge on all points";
    return fit;
  }
  Solve& final_solve = *chosen;
  Params& x = final_solve.x;

  // Covariance of the free blocks (the direction too unless held or unconstrained).
  double ssr = 0.0;
  int finite = 0;
  for (const double r : residuals_at(d, x, options.law))
    if (std::isfinite(r)) ssr += r * r, ++finite;
  fit.points_used = finite;
  fit.cost = final_solve.cost;
  const int p_free = (held || !constrained ? 0 : 2) + 3 + (options.law == ApexLawKind::free_per_time
                                                                ? static_cast<int>(d.group_time_s.size())
                                                                : (options.law == ApexLawKind::quadratic ? 3 : 2));
  const double s2 = finite > p_free ? ssr / (finite - p_free) : kNaN;

  std::vector<const double*> blocks;
  if (constrained && !held) blocks.push_back(final_solve.direction());
  blocks.push_back(final_solve.shape());
  if (options.law != ApexLawKind::free_per_time) blocks.push_back(final_solve.law());
  if (!constrained || held) final_solve.problem->SetParameterBlockConstant(final_solve.direction());
  ceres::Covariance::Options cov_options;
  cov_options.algorithm_type = ceres::DENSE_SVD;
  cov_options.num_threads = 1;
  ceres::Covariance covariance(cov_options);
  std::vector<std::pair<const double*, const double*>> pairs;
  for (const double* a : blocks)
    for (const double* b : blocks) pairs.emplace_back(a, b);
  const bool have_cov = std::isfinite(s2) && covariance.Compute(pairs, final_solve.problem.get());
  if (have_cov) {
    std::vector<int> cluster;
    std::map<std::pair<int, long long>, int> ids;
    for (const EdgePoint& p : points)
      cluster.push_back(ids.try_emplace({p.view, std::llround(p.time_s)}, static_cast<int>(ids.size())).first->second);
    cluster.push_back(-1);  // the aspect-ratio prior, added last: a cluster of its own
    std::vector<double*> free;
    for (const double* b : blocks) free.push_back(const_cast<double*>(b));
    fit.covariance_inflation = design_effect(*final_solve.problem, free, cluster, s2);
  }
  // Map each block to its rows in ShellFit::covariance.
  const auto rows_of = [&](const double* block) -> std::pair<int, int> {
    if (block == final_solve.direction()) return {kLon, 2};
    if (block == final_solve.shape()) return {kTilt, 3};
    return {kHeight, 3};
  };
  if (have_cov) {
    for (const double* a : blocks) {
      for (const double* b : blocks) {
        const auto [ra, na] = rows_of(a);
        const auto [rb, nb] = rows_of(b);
        std::vector<double> c(static_cast<std::size_t>(na * nb));
        covariance.GetCovarianceBlock(a, b, c.data());
        for (int i = 0; i < na; ++i)
          for (int j = 0; j < nb; ++j)
            fit.covariance(ra + i, rb + j) = c[static_cast<std::size_t>(i * nb + j)] * s2 * fit.covariance_inflation;
      }
    }
    if (options.law == ApexLawKind::linear) {
      fit.covariance.row(kAccel).setZero();
      fit.covariance.col(kAccel).setZero();
    }
  } else {
    fit.notes.push_back("the shell fit's covariance could not be computed (too few points or a degenerate geometry)");
  }

  // Residuals of every observed point, also those thinned out (on the final values).
  Data all = d;
  all.lines.clear(), all.tau_s.clear(), all.time_group.clear();
  for (const EdgePoint& p : observed) {
    all.lines.push_back(sight_line(views[static_cast<std::size_t>(p.view)].observer, p.pa_deg, p.height_rs));
    all.tau_s.push_back(p.time_s - d.ref_time_s);
    int group = 0;  // the nearest distinct time of the fit (free-per-time heights)
    for (std::size_t g = 0; g < d.group_time_s.size(); ++g)
      if (std::abs(d.group_time_s[g] - p.time_s) < std::abs(d.group_time_s[static_cast<std::size_t>(group)] - p.time_s))
        group = static_cast<int>(g);
    all.time_group.push_back(group);
  }
  fit.residuals_rs = residuals_at(all, x, options.law);
  double ssr_all = 0.0;
  int finite_all = 0;
  for (const double r : fit.residuals_rs)
    if (std::isfinite(r)) ssr_all += r * r, ++finite_all;
  fit.residual_rms_rs = finite_all > 0 ? std::sqrt(ssr_all / finite_all) : kNaN;

  normalise(x);
  fit.shell = shell_of(x, 0.0);
  fit.law.ref_time_s = d.ref_time_s;
  if (options.law == ApexLawKind::free_per_time) {
    // The law reported for a free fit: a straight line through its heights (unweighted).
    double st = 0, sh = 0, stt = 0, sth = 0;
    for (std::size_t g = 0; g < x.heights.size(); ++g) {
      const double t = d.group_time_s[g] - d.ref_time_s, h = x.heights[g];
      fit.free_heights.emplace_back(d.group_time_s[g], h);
      st += t, sh += h, stt += t * t, sth += t * h;
    }
    const double m = static_cast<double>(x.heights.size());
    const double slope = m > 1 && stt - st * st / m > 0.0 ? (sth - st * sh / m) / (stt - st * st / m) : 0.0;
    fit.law.height_rs = (sh - slope * st) / m;
    fit.law.speed_km_s = slope * kSolarRadiusKm;
    fit.shell.apex_height_rs = fit.law.height_rs;
    std::sort(fit.free_heights.begin(), fit.free_heights.end());
  } else {
    fit.law.height_rs = x.law[0];
    fit.law.speed_km_s = x.law[1];
    fit.law.accel_m_s2 = options.law == ApexLawKind::quadratic ? x.law[2] : 0.0;
  }
  for (int i = 0; i < kShellParams; ++i) fit.sigma[static_cast<std::size_t>(i)] = have_cov ? std::sqrt(std::max(0.0, fit.covariance(i, i))) : kNaN;
  if (options.law == ApexLawKind::linear) fit.sigma[kAccel] = 0.0;
  fit.covariance_ok = have_cov;
  if (!held && constrained &&
      !(have_cov && fit.sigma[kLon] * kDegPerRad <= kDirectionConstrainedDeg &&
        fit.sigma[kLat] * kDegPerRad <= kDirectionConstrainedDeg)) {
    // Two or more views, but the full fit's covariance leaves the direction loose (or
    // cannot be computed): the views do not constrain it.
    constrained = false;
    fit.direction_constrained = false;
    char text[200];
    std::snprintf(text, sizeof text,
                  "%zu views, but the fit's covariance leaves the direction unconstrained (σ lon %.0f°, lat %.0f°; limit %.0f°)",
                  views.size(), fit.sigma[kLon] * kDegPerRad, fit.sigma[kLat] * kDegPerRad, kDirectionConstrainedDeg);
    fit.notes.push_back(text);
    fit.sigma[kLon] = std::max(std::isfinite(fit.sigma[kLon]) ? fit.sigma[kLon] : 0.0, kUnconstrainedLonSigmaDeg * kRadPerDeg);
    fit.sigma[kLat] = std::max(std::isfinite(fit.sigma[kLat]) ? fit.sigma[kLat] : 0.0, kUnconstrainedLatSigmaDeg * kRadPerDeg);
  } else if (held) {
    fit.sigma[kLon] = fit.sigma[kLat] = options.source_sigma_deg * kRadPerDeg;
    fit.notes.push_back("one view: the direction is the source region's, held fixed; its σ is the stated " +
                        std::to_string(static_cast<int>(options.source_sigma_deg)) + "° allowance");
  } else if (!constrained) {
    fit.sigma[kLon] = kUnconstrainedLonSigmaDeg * kRadPerDeg;
    fit.sigma[kLat] = kUnconstrainedLatSigmaDeg * kRadPerDeg;
    fit.notes.push_back("one view and no source region: the direction is unconstrained (wide σ)");
  }
  // Parameters the solver left on a bound of run_solve (x before normalise: the bounds
  // apply to the raw values; lat is not wrapped, so it is the same).
  const auto on = [](double value, double bound) { return std::abs(value - bound) <= 1e-6 * std::max(1.0, std::abs(bound)); };
  if (!held && constrained && (on(x.direction[1], -0.49 * kPi) || on(x.direction[1], 0.49 * kPi))) fit.at_bound.push_back("lat_deg");
  if (on(x.shape[1], 1.0 * kRadPerDeg) || on(x.shape[1], 75.0 * kRadPerDeg)) fit.at_bound.push_back("half_angle_deg");
  if (on(x.shape[2], 0.03) || on(x.shape[2], 0.85)) fit.at_bound.push_back("aspect_ratio");
  if (options.law != ApexLawKind::free_per_time) {
    if (on(x.law[0], 1.0) || on(x.law[0], 300.0)) fit.at_bound.push_back("apex_height_rs");
    if (on(x.law[1], 10.0) || on(x.law[1], 6000.0)) fit.at_bound.push_back("speed_km_s");
    if (options.law == ApexLawKind::quadratic && (on(x.law[2], -1000.0) || on(x.law[2], 1000.0)))
      fit.at_bound.push_back("accel_m_s2");
  }
  fit.ok = true;
  return fit;
}

void merge_edge_fits(ShellFit& fit, const ShellFit& other) {
  if (!fit.ok || !other.ok) return;
  // Angles compared on their circles: longitude mod 2π, tilt mod π (shell_fit.cpp normalise).
  const double d[kShellParams] = {std::remainder(fit.shell.lon - other.shell.lon, 2.0 * kPi),
                                  fit.shell.lat - other.shell.lat,
                                  std::remainder(fit.shell.tilt - other.shell.tilt, kPi),
                                  fit.shell.half_angle - other.shell.half_angle,
                                  fit.shell.aspect_ratio - other.shell.aspect_ratio,
                                  fit.law.height_rs - other.law.height_at(fit.law.ref_time_s),
                                  fit.law.speed_km_s - other.law.speed_at(fit.law.ref_time_s),
                                  fit.law.accel_m_s2 - other.law.accel_m_s2};
  for (int i = 0; i < kShellParams; ++i) {
    const std::size_t k = static_cast<std::size_t>(i);
    if (!fit.direction_constrained && i <= kLat) continue;  // already the wide σ
    fit.systematic[k] = 0.5 * std::abs(d[i]);
    fit.covariance(i, i) += fit.systematic[k] * fit.systematic[k];
    if (std::isfinite(fit.sigma[k])) fit.sigma[k] = std::hypot(fit.sigma[k], fit.systematic[k]);
  }
  // The apex law: the mean of the two at the rim fit's reference time.
  fit.law.height_rs -= 0.5 * d[kHeight];
  fit.law.speed_km_s -= 0.5 * d[kSpeed];
  fit.law.accel_m_s2 -= 0.5 * d[kAccel];
  fit.shell.apex_height_rs = fit.law.height_rs;
}

ShellParams shell_at(const ShellFit& fit, double time_s) {
  ShellParams p = fit.shell;
  p.apex_height_rs = fit.law.height_at(time_s);
  return p;
}

double face_on_width_sigma_rad(const ShellFit& fit) {
  // 2(α + asin κ): ∂/∂α = 2, ∂/∂κ = 2 / √(1 − κ²).
  Eigen::Matrix<double, kShellParams, 1> g = Eigen::Matrix<double, kShellParams, 1>::Zero();
  g(kHalfAngle) = 2.0;
  g(kAspect) = 2.0 / std::sqrt(1.0 - fit.shell.aspect_ratio * fit.shell.aspect_ratio);
  return std::sqrt(std::max(0.0, g.dot(fit.covariance * g)));
}

double edge_on_width_sigma_rad(const ShellFit& fit) {
  return 2.0 / std::sqrt(1.0 - fit.shell.aspect_ratio * fit.shell.aspect_ratio) * fit.sigma[kAspect];
}

ApexCrossing apex_crossing(const ShellFit& fit, double height_rs) {
  ApexCrossing out;
  // h(τ) = h₀ + (v/R☉) τ + ½ (a/(1000 R☉)) τ²: the rising root of h(τ) = height_rs.
  const double c2 = 0.5 * fit.law.accel_m_s2 / (1000.0 * kSolarRadiusKm);
  const double c1 = fit.law.speed_km_s / kSolarRadiusKm, c0 = fit.law.height_rs - height_rs;
  double tau = kNaN;
  if (std::abs(c2) < 1e-300) {
    if (c1 > 0.0) tau = -c0 / c1;
  } else {
    const double disc = c1 * c1 - 4.0 * c2 * c0;
    if (disc >= 0.0) {
      // The root where h′ = c1 + 2 c2 τ > 0.
      const double q = std::sqrt(disc);
      for (const double r : {(-c1 + q) / (2.0 * c2), (-c1 - q) / (2.0 * c2)})
        if (c1 + 2.0 * c2 * r > 0.0 && (std::isnan(tau) || r < tau)) tau = r;
    }
  }
  if (!std::isfinite(tau)) return out;
  out.found = true;
  out.time_s = fit.law.ref_time_s + tau;
  out.speed_km_s = fit.law.speed_km_s + fit.law.accel_m_s2 / 1000.0 * tau;
  // σ by first-order propagation through the law block of the covariance.
  const Eigen::Matrix3d c = fit.covariance.block<3, 3>(kHeight, kHeight);
  const double rate = c1 + 2.0 * c2 * tau;  // R☉/s
  const Eigen::Vector3d dh(1.0, tau / kSolarRadiusKm, 0.5e-3 * tau * tau / kSolarRadiusKm);
  out.time_sigma_s = std::sqrt(std::max(0.0, dh.dot(c * dh))) / rate;
  const Eigen::Vector3d dv(0.0, 1.0, 1e-3 * tau);
  out.speed_sigma_km_s = std::sqrt(std::max(0.0, dv.dot(c * dv)));
  return out;
}

}  // namespace occulta::fit
