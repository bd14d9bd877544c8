// fit/shell.hpp — graduated cylindrical shell (GCS) geometry: parameters, surface,
// mesh, distance to the surface, and the outline a view sees.
//
// The model: Thernisien, Howard & Vourlidas (2006, ApJ 652, 763); Thernisien, Vourlidas
// & Howard (2009, Sol. Phys. 256, 111); Thernisien (2011, ApJS 194, 33). Two conical
// legs from Sun centre, a pseudo-circular front joining them, circular cross-sections,
// self-similar expansion (every length scales with the apex height).
//
// The shell's own frame ("shell"), right-handed, origin Sun centre, lengths in R☉:
//   z_shell  the apex direction;
//   x_shell  in the plane of the legs, toward the leg drawn first (the "+x leg");
//   y_shell  = z_shell × x_shell, normal to the legs' plane.
// It is carried into HEEQ by three rotations, applied in this order:
//   1. tilt τ about z_shell (the apex axis);
//   2. latitude: z_shell swung from the HEEQ equator to latitude `lat`;
//   3. longitude: about HEEQ z by `lon` (Stonyhurst longitude, positive to solar west).
// With τ = 0 the legs lie along the local west direction ê (increasing longitude, parallel
// to the solar equator). Positive τ turns x_shell from ê toward local north n̂, which is a
// right-handed turn about the outward apex direction: counter-clockwise for an observer
// looking back at the Sun along the apex direction (for a CME at disc centre seen from
// Earth, counter-clockwise on a north-up, west-right image). Our convention; the papers
// above define tilt against the solar equator with their own sign, which we do not copy.
//   heeq_R_shell = [ x_s  y_s  z_s ] with z_s = (cos lat cos lon, cos lat sin lon, sin lat),
//   ê = (−sin lon, cos lon, 0), n̂ = (−sin lat cos lon, −sin lat sin lon, cos lat),
//   x_s = cos τ ê + sin τ n̂,  y_s = −sin τ ê + cos τ n̂.
//
// Lengths are in R☉ (695 700 km, imaging/constants.hpp) throughout this file; angles are
// radians.
#pragma once

#include <cmath>
#include <limits>
#include <optional>
#include <vector>

#include <Eigen/Core>

#include "imaging/constants.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

// The six GCS parameters. T is double, or ceres::Jet when Ceres differentiates a fit
// through the surface (shell_point and heeq_R_shell are templated for that).
template <typename T>
struct BasicShellParams {
  T lon{0.0};             // Stonyhurst longitude of the apex direction, rad (HEEQ)
  T lat{0.0};             // Stonyhurst latitude of the apex direction, rad
  T tilt{0.0};            // turn of the legs' plane about the apex direction, rad (sign above)
  T apex_height_rs{1.0};  // distance of the apex from Sun centre, R☉
  T half_angle{0.0};      // α: half the angle between the two leg axes, rad
  T aspect_ratio{0.0};    // κ = sin δ: cross-section radius over distance, at the apex
};
using ShellParams = BasicShellParams<double>;

// Valid shells: apex_height_rs > 0, 0 ≤ α, 0 ≤ κ < 1, α + asin κ < π/2 (the legs' outer
// walls lean no further than the plane of the Sun centre normal to the apex axis).
bool is_valid(const ShellParams& params);

// --- closed forms (Thernisien 2011, as written down in shared/REFERENCES.md) -------------
// δ = asin κ: half-angle of each leg cone.
inline double leg_half_angle(double aspect_ratio) { return std::asin(aspect_ratio); }
// apex height = h (1 + sin α) / ((1 − κ) cos α), h the leg height (length of a leg axis).
inline double apex_height_from_leg_height(double leg_height_rs, double half_angle, double aspect_ratio) {
  return leg_height_rs * (1.0 + std::sin(half_angle)) / ((1.0 - aspect_ratio) * std::cos(half_angle));
}
inline double leg_height_from_apex_height(double apex_height_rs, double half_angle, double aspect_ratio) {
  return apex_height_rs * (1.0 - aspect_ratio) * std::cos(half_angle) / (1.0 + std::sin(half_angle));
}
// Angular widths seen from Sun centre (Thernisien 2011): face-on (in the legs' plane)
// 2(α + δ), edge-on (in the plane through the apex axis normal to the legs' plane) 2δ.
// The edge-on width is that of the front's apex cross-section. Projected along x_shell
// onto the sky of a distant observer the tilted leg cones look wider,
// 2 asin(κ / cos α) (derived in shell.cpp beside projected_edge_on_width), and that
// is what an image of an edge-on shell spans.
inline double face_on_width(double half_angle, double aspect_ratio) {
  return 2.0 * (half_angle + leg_half_angle(aspect_ratio));
}
inline double edge_on_width(double aspect_ratio) { return 2.0 * leg_half_angle(aspect_ratio); }
double projected_edge_on_width(double half_angle, double aspect_ratio);
// Radius of the front's cross-section at the apex: κ (b + ρ) / (1 − κ²) — see shell.cpp.
double apex_cross_section_radius_rs(const ShellParams& params);

// --- the rotation into HEEQ --------------------------------------------------------------
template <typename T>
Eigen::Matrix<T, 3, 3> heeq_R_shell(const BasicShellParams<T>& p) {
  using std::cos;
  using std::sin;
  const T clon = cos(p.lon), slon = sin(p.lon), clat = cos(p.lat), slat = sin(p.lat);
  const T ct = cos(p.tilt), st = sin(p.tilt);
  const Eigen::Matrix<T, 3, 1> z_s(clat * clon, clat * slon, slat);
  const Eigen::Matrix<T, 3, 1> east(-slon, clon, T(0.0));  // ê: increasing longitude
  const Eigen::Matrix<T, 3, 1> north(-slat * clon, -slat * slon, clat);
  Eigen::Matrix<T, 3, 3> R;
  R.col(0) = ct * east + st * north;
  R.col(1) = -st * east + ct * north;
  R.col(2) = z_s;
  return R;
}

// --- the surface -------------------------------------------------------------------------
// Surface coordinates: u runs along the shell, v around its cross-section.
//   u ∈ [0, 1/3]   the +x leg, from its foot at Sun centre (u = 0) to its top (u = 1/3);
//   u ∈ [1/3, 2/3] the front, β = −α + (3u − 1)(π + 2α), apex at u = 1/2;
//   u ∈ [2/3, 1]   the −x leg, from its top back down to Sun centre (u = 1).
//   v ∈ [0, 2π)    angle around the cross-section, from the outward radial direction of
//                  the front's axis circle (v = 0 on the legs' plane, outer side) toward +y_shell.
// In the legs' plane, with b = h / cos α, ρ = h tan α (Thernisien 2011):
//   front: centre c(β) = (0, 0, b) + X₀(β) ê(β),  ê(β) = (cos β, 0, sin β),
//          X₀(β) = (ρ + b κ² sin β) / (1 − κ²),  r(β) = √((b²κ² − ρ²)/(1 − κ²) + X₀(β)²),
//          P = c(β) + r(β) (cos v ê(β) + sin v ŷ).
//   leg:   axis a = (±sin α, 0, cos α), t ∈ [0, h] along it, radius t tan δ,
//          P = t a + t tan δ (cos v e₁ + sin v ŷ), e₁ = (±cos α, 0, −sin α).
// At the leg tops (β = −α, β = π + α) the front's cross-section is the leg's own top
// circle (X₀ = ρ, r = h tan δ, ê = e₁), so the surface is continuous there with the same v.
// u and v are plain doubles: they choose a point, they are never fit parameters.
template <typename T>
Eigen::Matrix<T, 3, 1> shell_point_in_shell_frame(const BasicShellParams<T>& p, double u, double v) {
  using std::cos;
  using std::sin;
  using std::sqrt;
  using std::tan;
  using std::asin;
  const T ca = cos(p.half_angle), sa = sin(p.half_angle);
  const T k = p.aspect_ratio;
  const T h = p.apex_height_rs * (T(1.0) - k) * ca / (T(1.0) + sa);
  const double cv = std::cos(v), sv = std::sin(v);
  if (u < 1.0 / 3.0 || u > 2.0 / 3.0) {
    const double side = u < 1.0 / 3.0 ? 1.0 : -1.0;
    const double along = u < 1.0 / 3.0 ? 3.0 * u : 3.0 * (1.0 - u);  // t / h
    const T t = h * along;
    const T radius = t * tan(asin(k));
    const Eigen::Matrix<T, 3, 1> axis(side * sa, T(0.0), ca);
    const Eigen::Matrix<T, 3, 1> e1(side * ca, T(0.0), -sa);
    const Eigen::Matrix<T, 3, 1> y(T(0.0), T(1.0), T(0.0));
    return t * axis + radius * (cv * e1 + sv * y);
  }
  const T b = h / ca, rho = h * sa / ca;
  const T beta = -p.half_angle + (3.0 * u - 1.0) * (T(kPi) + 2.0 * p.half_angle);
  const T one_minus_k2 = T(1.0) - k * k;
  const T x0 = (rho + b * k * k * sin(beta)) / one_minus_k2;
  const T r = sqrt((b * b * k * k - rho * rho) / one_minus_k2 + x0 * x0);
  const Eigen::Matrix<T, 3, 1> e(cos(beta), T(0.0), sin(beta));
  const Eigen::Matrix<T, 3, 1> y(T(0.0), T(1.0), T(0.0));
  const Eigen::Matrix<T, 3, 1> centre = Eigen::Matrix<T, 3, 1>(T(0.0), T(0.0), b) + x0 * e;
  return centre + r * (cv * e + sv * y);
}

// The same point in HEEQ, R☉: heeq_p = heeq_R_shell · shell_p.
template <typename T>
Eigen::Matrix<T, 3, 1> shell_point(const BasicShellParams<T>& p, double u, double v) {
  return heeq_R_shell(p) * shell_point_in_shell_frame(p, u, v);
}

// --- mesh --------------------------------------------------------------------------------
struct MeshResolution {
  int per_leg = 12;  // rows along each leg, foot to top
  int front = 48;    // rows along the front, leg top to leg top
  int around = 36;   // columns around the cross-section
};

// Points on a (rows × around) grid in HEEQ, R☉; row i, column j at index i·around + j.
// Rows run u = 0 … 1 (the leg tops are shared rows); columns v = 2π j / around.
struct ShellMesh {
  int rows = 0, around = 0;
  std::vector<double> u;                  // u of each row
  std::vector<Eigen::Vector3d> heeq_p_rs;
};
ShellMesh make_mesh(const ShellParams& params, const MeshResolution& resolution = {});

// --- distance to the surface -------------------------------------------------------------
// A shell's shape in its own frame, computed once (for the many distance evaluations of a
// line-of-sight integration or a fit): h, b, ρ, δ and the constants of X₀(β) and r(β).
// Templated like the surface, so a fit can differentiate distances through it.
template <typename T>
struct BasicShellShape {
  T apex_height_rs{0.0}, leg_height_rs{0.0};
  T sin_alpha{0.0}, cos_alpha{1.0}, kappa{0.0};
  T b{0.0}, rho{0.0};
  T sin_delta{0.0}, cos_delta{1.0}, slant_length{0.0};  // leg wall length h / cos δ
  T x0_offset{0.0}, x0_slope{0.0};  // X₀(β) = x0_offset + x0_slope sin β
  T r2_offset{0.0};                 // r(β)² = r2_offset + X₀(β)²
};
using ShellShape = BasicShellShape<double>;

template <typename T>
BasicShellShape<T> shell_shape(const BasicShellParams<T>& params) {
  using std::cos;
  using std::sin;
  using std::sqrt;
  BasicShellShape<T> s;
  s.apex_height_rs = params.apex_height_rs;
  s.kappa = params.aspect_ratio;
  s.sin_alpha = sin(params.half_angle);
  s.cos_alpha = cos(params.half_angle);
  // h = apex height (1 − κ) cos α / (1 + sin α) (leg_height_from_apex_height).
  s.leg_height_rs = params.apex_height_rs * (T(1.0) - s.kappa) * s.cos_alpha / (T(1.0) + s.sin_alpha);
  const T h = s.leg_height_rs, k2 = s.kappa * s.kappa;
  s.b = h / s.cos_alpha;
  s.rho = h * s.sin_alpha / s.cos_alpha;
  s.sin_delta = s.kappa;
  s.cos_delta = sqrt(T(1.0) - k2);
  s.slant_length = h / s.cos_delta;
  // Thernisien (2011): X₀(β) = (ρ + b κ² sin β)/(1 − κ²), r² = (b²κ² − ρ²)/(1 − κ²) + X₀².
  s.x0_offset = s.rho / (T(1.0) - k2);
  s.x0_slope = s.b * k2 / (T(1.0) - k2);
  s.r2_offset = (s.b * s.b * k2 - s.rho * s.rho) / (T(1.0) - k2);
  return s;
}

namespace shell_detail {
// +∞ for pieces that do not own a point; never the value a caller differentiates.
inline constexpr double kFar = std::numeric_limits<double>::infinity();

// Signed distance to one leg: the cone of half-angle δ about the axis a = (±sin α, 0, cos α)
// from Sun centre, for points whose axial coordinate does not pass the leg top (p_a ≤ h;
// beyond that plane — the front's β = −α or π + α half-plane — the front owns the point).
// In the meridian half-plane (p_a, q), q the distance from the axis, the wall is the
// segment from (0, 0) to (h, h tan δ); its signed distance is q cos δ − p_a sin δ where
// the foot of the perpendicular falls on the segment, else the distance to its end.
template <typename T>
T leg_signed_distance(const BasicShellShape<T>& s, const Eigen::Matrix<T, 3, 1>& p, double side) {
  using std::sqrt;
  const T p_a = side * s.sin_alpha * p.x() + s.cos_alpha * p.z();
  if (p_a > s.leg_height_rs) return T(kFar);
  const T q2 = p.squaredNorm() - p_a * p_a;
  const T q = q2 > T(0.0) ? sqrt(q2) : T(0.0);
  const T normal = q * s.cos_delta - p_a * s.sin_delta;  // < 0 inside the cone
  const T along = p_a * s.cos_delta + q * s.sin_delta;   // foot position on the wall
  if (along <= T(0.0)) return p.norm();                  // nearest wall point: the foot at Sun centre
  if (along >= s.slant_length && normal > T(0.0)) {
    const T dq = q - s.leg_height_rs * s.sin_delta / s.cos_delta;
    const T dp = p_a - s.leg_height_rs;
    return sqrt(dq * dq + dp * dp);  // outside, nearest to the top rim
  }
  return normal;
}

// Signed distance to the front within the cross-section plane through p. The planes all
// hold the line {(0, y, b)}; p lies in the half-plane β with in-plane coordinates
// (s, y), s = |(p_x, p_z − b)| ≥ 0, and also — at signed coordinate −s — in the
// half-plane β + π. Either may carry a cross-section circle (β within [−α, π + α], i.e.
// sin β ≥ −sin α): when α < δ the circles reach across the line (r > X₀), so both count.
template <typename T>
T front_signed_distance(const BasicShellShape<T>& s, const Eigen::Matrix<T, 3, 1>& p) {
  using std::sqrt;
  const T qx = p.x(), qz = p.z() - s.b;
  const T radial2 = qx * qx + qz * qz;
  const T radial = radial2 > T(0.0) ? sqrt(radial2) : T(0.0);
  const T sin_beta = radial > T(0.0) ? qz / radial : T(1.0);
  T best = T(kFar);
  for (const double sign : {1.0, -1.0}) {
    const T sb = sign * sin_beta;
    if (sb < -s.sin_alpha) continue;
    const T x0 = s.x0_offset + s.x0_slope * sb;
    const T r = sqrt(s.r2_offset + x0 * x0);
    const T ds = sign * radial - x0;
    const T d = sqrt(ds * ds + p.y() * p.y()) - r;
    if (d < best) best = d;
  }
  return best;
}
}  // namespace shell_detail

// Signed distance-like measure from a point in the shell frame (R☉) to the surface:
// negative inside the shell's solid (legs and front tube), zero exactly on the surface,
// positive outside. Legs: exact distance to the cone wall (the top of a leg is no
// boundary: the front continues it). Front: distance, within the cross-section plane that
// holds the point, to that plane's circle — exact for a tube of constant radius, otherwise
// slightly more than the true distance (the planes fan out about the line through
// (0, 0, b) along y_shell). Where two pieces overlap the smaller value wins (union).
// Cheap: a few square roots, no trigonometry, no mesh search. Smooth within each piece,
// so Ceres can differentiate it where one piece owns the point (fit/shell_fit).
template <typename T>
T signed_distance_rs(const BasicShellShape<T>& shape, const Eigen::Matrix<T, 3, 1>& shell_p_rs) {
  T best = shell_detail::front_signed_distance(shape, shell_p_rs);
  for (const double side : {1.0, -1.0}) {
    const T leg = shell_detail::leg_signed_distance(shape, shell_p_rs, side);
    if (leg < best) best = leg;
  }
  return best;
}
// For doubles, so Eigen expressions (t * dir) convert without naming the vector type.
inline double signed_distance_rs(const ShellShape& shape, const Eigen::Vector3d& shell_p_rs) {
  return signed_distance_rs<double>(shape, shell_p_rs);
}
// The same from HEEQ (R☉): rotates into the shell frame first.
double shell_signed_distance_rs(const ShellParams& params, const Eigen::Vector3d& heeq_p_rs);

// Distance from Sun centre to the outermost crossing of the shell surface along a unit
// direction (HEEQ); nullopt when the direction misses the shell. This is how far the
// shell reaches toward a target in that direction. Bracketed on 512 samples along the
// direction and refined by bisection to 1e-9 R☉; a direction that only grazes the shell
// between two samples (within ~0.2 % of the apex height) can be reported as a miss.
std::optional<double> surface_distance_along(const ShellParams& params, const Eigen::Vector3d& heeq_dir);

// --- the outline a view sees -------------------------------------------------------------
// The mesh projected into one observer's helioprojective frame (radians), through
// imaging::hpc_from_heeq. Every surface point counts (the corona is optically thin; points
// behind the solar disc are not removed).
std::vector<Eigen::Vector2d> project_mesh(const ShellMesh& mesh, const imaging::Observer& observer);

struct SkyOutline {
  double apex_pa_deg = 0.0;  // position angle of the projected apex
  // Extreme position angles of the projected surface, unwrapped about apex_pa_deg
  // (pa_from_deg ≤ apex_pa_deg ≤ pa_to_deg; they may leave [0, 360)). A shell whose
  // projection surrounds Sun centre (a halo) gives a span of 360°.
  double pa_from_deg = 0.0, pa_to_deg = 0.0;
  double bin_deg = 1.0;
  // Leading edge per position-angle bin: the largest plane-of-sky height (R☉,
  // imaging::sky_height_rs) of a projected surface point with PA in
  // [i·bin_deg, (i+1)·bin_deg); NaN where no point falls.
  std::vector<double> max_height_rs;
};
SkyOutline sky_outline(const ShellMesh& mesh, const ShellParams& params, const imaging::Observer& observer,
                       double bin_deg = 1.0);

}  // namespace occulta::fit
