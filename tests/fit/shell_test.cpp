// tests/fit/shell_test.cpp — graduated cylindrical shell geometry against the closed forms
// and limits of Thernisien (2011, ApJS 194, 33) as shared/REFERENCES.md writes them
// (from memory there, hence every closed form here is held against the surface itself).
#include <doctest/doctest.h>

#include <ceres/jet.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "fit/shell.hpp"
#include "imaging/constants.hpp"

using namespace occulta;
using namespace occulta::fit;

namespace {

ShellParams make(double lon_deg, double lat_deg, double tilt_deg, double apex_rs, double alpha_deg, double kappa) {
  return ShellParams{lon_deg * kRadPerDeg, lat_deg * kRadPerDeg, tilt_deg * kRadPerDeg, apex_rs,
                     alpha_deg * kRadPerDeg, kappa};
}

const std::vector<ShellParams> kShells = {
    make(0, 0, 0, 10.0, 30, 0.4),    make(35, -12, 20, 6.5, 15, 0.2), make(-80, 25, -60, 15.0, 45, 0.3),
    make(120, 5, 90, 3.0, 5, 0.5),   make(10, 40, 130, 20.0, 60, 0.15),
};

// An observer far along a HEEQ direction: at 1000 au perspective changes angles from Sun
// centre by ~(shell depth)/(distance) ≈ 1e-4 relative, below the tolerances used.
imaging::Observer far_observer_along(const Eigen::Vector3d& heeq_dir) {
  const Eigen::Vector3d d = heeq_dir.normalized();
  return imaging::Observer{std::atan2(d.y(), d.x()), std::asin(d.z()), 1000.0 * kAuKm};
}

double span_rad(const SkyOutline& outline) { return (outline.pa_to_deg - outline.pa_from_deg) * kRadPerDeg; }

}  // namespace

TEST_CASE("shell: leg height and apex height closed forms invert each other and match the surface") {
  for (const ShellParams& p : kShells) {
    const double h = leg_height_from_apex_height(p.apex_height_rs, p.half_angle, p.aspect_ratio);
    CHECK(apex_height_from_leg_height(h, p.half_angle, p.aspect_ratio) == doctest::Approx(p.apex_height_rs).epsilon(1e-14).scale(0.0));
    // Thernisien (2011): at β = −α the front's cross-section is the top circle of the leg,
    // centred at distance h along the leg axis with radius h tan δ, δ = asin κ.
    Eigen::Vector3d centre = Eigen::Vector3d::Zero();
    std::vector<Eigen::Vector3d> ring;
    for (int j = 0; j < 64; ++j) ring.push_back(shell_point_in_shell_frame(p, 1.0 / 3.0, 2.0 * kPi * j / 64));
    for (const auto& q : ring) centre += q / 64.0;
    CHECK(centre.norm() == doctest::Approx(h).epsilon(1e-12).scale(0.0));
    CHECK(std::atan2(centre.x(), centre.z()) == doctest::Approx(p.half_angle).epsilon(1e-12).scale(0.0));
    for (const auto& q : ring) CHECK((q - centre).norm() == doctest::Approx(h * std::tan(std::asin(p.aspect_ratio))).epsilon(1e-12).scale(0.0));
  }
}

TEST_CASE("shell: the mesh apex equals the closed-form apex height") {
  // Thernisien (2011): apex height = h (1 + sin α) / ((1 − κ) cos α). The surface is built
  // from h (derived from the apex height by the inverse form) through X₀(β) and r(β), so
  // the farthest mesh point along the apex direction tests those formulas against it.
  for (const ShellParams& p : kShells) {
    const ShellMesh mesh = make_mesh(p, MeshResolution{12, 96, 72});
    const Eigen::Vector3d apex_dir = heeq_R_shell(p).col(2);
    double max_along = 0.0, max_dist = 0.0;
    for (const auto& q : mesh.heeq_p_rs) max_along = std::max(max_along, q.dot(apex_dir)), max_dist = std::max(max_dist, q.norm());
    CHECK(max_along == doctest::Approx(p.apex_height_rs).epsilon(1e-12).scale(0.0));
    // No surface point is farther from Sun centre than the apex (surface_distance_along relies on it).
    CHECK(max_dist == doctest::Approx(p.apex_height_rs).epsilon(1e-12).scale(0.0));
    CHECK(apex_cross_section_radius_rs(p) ==
          doctest::Approx((shell_point_in_shell_frame(p, 0.5, 0.0) - shell_point_in_shell_frame(p, 0.5, kPi)).norm() / 2).epsilon(1e-12).scale(0.0));
    const auto along = surface_distance_along(p, apex_dir);
    REQUIRE(along.has_value());
    CHECK(*along == doctest::Approx(p.apex_height_rs).epsilon(1e-9).scale(0.0));
  }
}

TEST_CASE("shell: widths seen from Sun centre are 2(α + δ) face-on and 2δ edge-on") {
  // Thernisien (2011): face-on width 2(α + δ) in the legs' plane, edge-on width 2δ in the
  // plane through the apex axis normal to it. Rays from Sun centre in each plane reach
  // the shell up to that angle from the apex direction and miss it beyond.
  for (const ShellParams& p : kShells) {
    const Eigen::Matrix3d R = heeq_R_shell(p);
    const double face = 0.5 * face_on_width(p.half_angle, p.aspect_ratio);
    const double edge = 0.5 * edge_on_width(p.aspect_ratio);
    for (const double side : {1.0, -1.0}) {
      const auto in_legs_plane = [&](double a) -> Eigen::Vector3d { return R * Eigen::Vector3d(side * std::sin(a), 0.0, std::cos(a)); };
      const auto across = [&](double a) -> Eigen::Vector3d { return R * Eigen::Vector3d(0.0, side * std::sin(a), std::cos(a)); };
      CHECK(surface_distance_along(p, in_legs_plane(face - 2e-3)).has_value());
      CHECK_FALSE(surface_distance_along(p, in_legs_plane(face + 2e-3)).has_value());
      CHECK(surface_distance_along(p, across(edge - 2e-3)).has_value());
      CHECK_FALSE(surface_distance_along(p, across(edge + 2e-3)).has_value());
    }
  }
}

TEST_CASE("shell: the projected mesh spans 2(α + δ) face-on and 2 asin(κ/cos α) edge-on") {
  // Face-on (observer along y_shell) the sky is the legs' plane: span 2(α + δ)
  // (Thernisien 2011). Edge-on (observer along x_shell) the tilted leg cones project
  // wider than 2δ: 2 asin(κ / cos α), derived in shell.cpp; for α = 0 it is 2δ.
  std::vector<ShellParams> shells = kShells;
  shells.push_back(make(-30, 10, 45, 8.0, 0.0, 0.35));
  for (const ShellParams& p : shells) {
    const Eigen::Matrix3d R = heeq_R_shell(p);
    const ShellMesh mesh = make_mesh(p, MeshResolution{24, 96, 720});
    const SkyOutline face = sky_outline(mesh, p, far_observer_along(R.col(1)), 0.5);
    const SkyOutline edge = sky_outline(mesh, p, far_observer_along(R.col(0)), 0.5);
    CHECK(span_rad(face) == doctest::Approx(face_on_width(p.half_angle, p.aspect_ratio)).epsilon(2e-4).scale(0.0));
    CHECK(span_rad(edge) == doctest::Approx(projected_edge_on_width(p.half_angle, p.aspect_ratio)).epsilon(2e-4).scale(0.0));
    if (p.half_angle == 0.0) CHECK(span_rad(edge) == doctest::Approx(edge_on_width(p.aspect_ratio)).epsilon(2e-4).scale(0.0));
    // The apex sits mid-span in both views (the shell is symmetric about its apex axis).
    CHECK(face.apex_pa_deg - face.pa_from_deg == doctest::Approx(face.pa_to_deg - face.apex_pa_deg).epsilon(1e-3).scale(0.0));
  }
}

TEST_CASE("shell: a limb CME seen from Earth has its apex at the limb's position angle and height") {
  // Apex at Stonyhurst longitude 90° (the west limb from Earth), on the equator: in the
  // plane of the sky at PA 270° (west; PA counts from north through east, common practice).
  // Tilt 90° stands the legs north–south, across the line of sight: face-on.
  const ShellParams p = make(90, 0, 90, 12.0, 25, 0.3);
  const imaging::Observer earth{0.0, 0.0, 1000.0 * kAuKm};
  const SkyOutline out = sky_outline(make_mesh(p, MeshResolution{12, 96, 180}), p, earth, 1.0);
  CHECK(out.apex_pa_deg == doctest::Approx(270.0).epsilon(1e-9).scale(0.0));
  const int apex_bin = static_cast<int>(out.apex_pa_deg);  // 269 or 270, by rounding
  CHECK(std::max(out.max_height_rs[apex_bin], out.max_height_rs[(apex_bin + 1) % 360]) == doctest::Approx(p.apex_height_rs).epsilon(1e-4).scale(0.0));
  CHECK((out.pa_to_deg - out.pa_from_deg) * kRadPerDeg == doctest::Approx(face_on_width(p.half_angle, p.aspect_ratio)).epsilon(2e-4).scale(0.0));
  CHECK(std::isnan(out.max_height_rs[90]));  // nothing on the east side
}

TEST_CASE("shell: the projected mesh is imaging::hpc_from_heeq of each point, to the last bit") {
  // project_mesh makes the rotation once; the outlines the window and measure draw must
  // not move by it.
  const imaging::Observer observer = imaging::observer_from_degrees(-60.0, 4.0, 0.97 * kAuKm);
  for (const ShellParams& shell : kShells) {
    const ShellMesh mesh = make_mesh(shell, {8, 32, 24});
    const std::vector<Eigen::Vector2d> hpc = project_mesh(mesh, observer);
    REQUIRE(hpc.size() == mesh.heeq_p_rs.size());
    int differ = 0;
    for (std::size_t i = 0; i < hpc.size(); ++i)
      differ += hpc[i] != imaging::hpc_from_heeq(observer, mesh.heeq_p_rs[i] * kSolarRadiusKm);
    CHECK(differ == 0);
  }
}

TEST_CASE("shell: limits κ → 0 and α = 0") {
  // κ → 0: the cross-sections shrink to points, the shell to its axis (two leg lines and
  // the circle of centre (0, 0, b) and radius ρ) — Thernisien (2011).
  {
    const ShellParams p = make(0, 0, 0, 10.0, 30, 1e-7);
    const double h = leg_height_from_apex_height(p.apex_height_rs, p.half_angle, p.aspect_ratio);
    const double b = h / std::cos(p.half_angle), rho = h * std::tan(p.half_angle);
    for (int i = 0; i <= 30; ++i) {
      const double u = 1.0 / 3.0 + i / 90.0;
      const Eigen::Vector3d q = shell_point_in_shell_frame(p, u, 1.0);
      CHECK(std::abs(std::hypot(q.x(), q.z() - b) - rho) < 1e-5);
      CHECK(std::abs(q.y()) < 1e-5);
    }
    CHECK(p.apex_height_rs == doctest::Approx(b + rho).epsilon(1e-6).scale(0.0));
  }
  // α = 0 ("ice-cream cone", Thernisien 2011): apex at h/(1 − κ); the front is a sphere of
  // radius κD about the point at D = h/(1 − κ²) on the axis, which the leg cone of
  // half-angle δ = asin κ touches (sin δ = κD/D).
  {
    const ShellParams p = make(20, -10, 30, 9.0, 0.0, 0.4);
    const double h = leg_height_from_apex_height(p.apex_height_rs, 0.0, p.aspect_ratio);
    CHECK(p.apex_height_rs == doctest::Approx(h / (1.0 - p.aspect_ratio)).epsilon(1e-14).scale(0.0));
    const double D = h / (1.0 - p.aspect_ratio * p.aspect_ratio);
    for (int i = 0; i <= 40; ++i)
      for (int j = 0; j < 12; ++j) {
        const Eigen::Vector3d q = shell_point_in_shell_frame(p, 1.0 / 3.0 + i / 120.0, 2.0 * kPi * j / 12);
        CHECK((q - Eigen::Vector3d(0, 0, D)).norm() == doctest::Approx(p.aspect_ratio * D).epsilon(1e-12).scale(0.0));
      }
    // The outermost crossing along a direction θ < δ off the axis, from the sphere:
    //   t = D cos θ + √(κ²D² − D² sin²θ).
    const Eigen::Matrix3d R = heeq_R_shell(p);
    for (const double theta : {0.0, 0.1, 0.3, 0.4}) {
      const auto t = surface_distance_along(p, R * Eigen::Vector3d(0.0, std::sin(theta), std::cos(theta)));
      REQUIRE(t.has_value());
      const double expect = D * std::cos(theta) + std::sqrt(std::pow(p.aspect_ratio * D, 2) - std::pow(D * std::sin(theta), 2));
      CHECK(*t == doctest::Approx(expect).epsilon(1e-8).scale(0.0));
    }
  }
}

TEST_CASE("shell: the surface is continuous where the front meets the legs") {
  // Thernisien (2011): the leg tops are where the conical legs hand over to the front.
  for (const ShellParams& p : kShells) {
    for (const double u : {1.0 / 3.0, 2.0 / 3.0}) {
      for (int j = 0; j < 24; ++j) {
        const double v = 2.0 * kPi * j / 24;
        const Eigen::Vector3d below = shell_point_in_shell_frame(p, u - 1e-12, v);  // leg side
        const Eigen::Vector3d above = shell_point_in_shell_frame(p, u + 1e-12, v);  // front side
        CHECK((below - above).norm() < 1e-9 * p.apex_height_rs);
      }
    }
  }
}

TEST_CASE("shell: the signed distance is zero on the surface and measures steps off it") {
  for (const ShellParams& p : kShells) {
    const ShellShape shape = shell_shape(p);
    const double eps = 1e-3 * p.apex_height_rs;
    // With α < δ the legs overlap and the front's circles cross the line through
    // (0, 0, b): parts of the parametric surface then lie inside the shell's solid, where
    // the union's measure is negative. Only "never outside" holds for every point there.
    const bool self_overlapping = p.half_angle < std::asin(p.aspect_ratio);
    for (int i = 1; i < 60; ++i) {
      if (i == 20 || i == 40) continue;  // the leg tops, checked below
      const double u = i / 60.0;
      for (int j = 0; j < 12; ++j) {
        const double v = 2.0 * kPi * (j + 0.5) / 12;
        const Eigen::Vector3d q = shell_point_in_shell_frame(p, u, v);
        const double d = signed_distance_rs(shape, q);
        if (self_overlapping) {
          CHECK(d < 1e-9 * p.apex_height_rs);
          continue;
        }
        CHECK(std::abs(d) < 1e-9 * p.apex_height_rs);
        // Off the surface along the cross-section's own radius: in the front this stays in
        // the point's cross-section plane, where the measure is that plane's circle distance,
        // so exactly ±ε; on a leg the wall leans by δ, so ±ε cos δ.
        const Eigen::Vector3d centre = 0.5 * (shell_point_in_shell_frame(p, u, 0.0) + shell_point_in_shell_frame(p, u, kPi));
        const Eigen::Vector3d out = (q - centre).normalized();
        const bool front = u > 1.0 / 3.0 && u < 2.0 / 3.0;
        const double expect = front ? eps : eps * std::cos(std::asin(p.aspect_ratio));
        CHECK(signed_distance_rs(shape, q + eps * out) == doctest::Approx(expect).epsilon(1e-6).scale(0.0));
        CHECK(signed_distance_rs(shape, q - eps * out) == doctest::Approx(-expect).epsilon(1e-6).scale(0.0));
      }
    }
    // At the leg tops the measure is continuous: within the cos δ by which the front's
    // in-plane distance there exceeds the wall's true distance.
    for (const double u : {1.0 / 3.0, 2.0 / 3.0}) {
      const Eigen::Vector3d q = shell_point_in_shell_frame(p, u, 0.3);
      CHECK(std::abs(signed_distance_rs(shape, q)) < 1e-9 * p.apex_height_rs);
    }
    CHECK(signed_distance_rs(shape, Eigen::Vector3d(0, 0, 2.0 * p.apex_height_rs)) > 0.0);
    CHECK(shell_signed_distance_rs(p, 0.99 * p.apex_height_rs * heeq_R_shell(p).col(2)) < 0.0);
  }
}

TEST_CASE("shell: the surface point differentiates with ceres::Jet like a finite difference") {
  // Forward-mode derivatives (ceres::Jet) against central differences, step 1e-6:
  // truncation ~1e-12 × third derivative, rounding ~1e-10 — agreement to 1e-6 relative.
  using J = ceres::Jet<double, 6>;
  const ShellParams p = make(35, -12, 20, 6.5, 15, 0.2);
  BasicShellParams<J> pj{J(p.lon, 0), J(p.lat, 1), J(p.tilt, 2), J(p.apex_height_rs, 3), J(p.half_angle, 4), J(p.aspect_ratio, 5)};
  for (const double u : {0.2, 0.45, 0.5, 0.8}) {
    const double v = 0.7;
    const Eigen::Matrix<J, 3, 1> q = shell_point(pj, u, v);
    for (int k = 0; k < 6; ++k) {
      ShellParams plus = p, minus = p;
      double* fp[] = {&plus.lon, &plus.lat, &plus.tilt, &plus.apex_height_rs, &plus.half_angle, &plus.aspect_ratio};
      double* fm[] = {&minus.lon, &minus.lat, &minus.tilt, &minus.apex_height_rs, &minus.half_angle, &minus.aspect_ratio};
      const double step = 1e-6;
      *fp[k] += step, *fm[k] -= step;
      const Eigen::Vector3d fd = (shell_point(plus, u, v) - shell_point(minus, u, v)) / (2.0 * step);
      for (int c = 0; c < 3; ++c) CHECK(q[c].v[k] == doctest::Approx(fd[c]).epsilon(1e-6).scale(1.0));
      CHECK(q[0].a == doctest::Approx(shell_point(p, u, v).x()).epsilon(1e-15).scale(0.0));
    }
  }
}

TEST_CASE("shell: tilt turns the legs from local west toward local north") {
  // Our convention (shell.hpp): x_shell = cos τ ê + sin τ n̂ at the apex direction.
  const ShellParams p0 = make(0, 0, 0, 5.0, 20, 0.3), p90 = make(0, 0, 90, 5.0, 20, 0.3);
  CHECK((heeq_R_shell(p0).col(0) - Eigen::Vector3d(0, 1, 0)).norm() < 1e-15);   // ê at lon 0 = HEEQ +y (west)
  CHECK((heeq_R_shell(p90).col(0) - Eigen::Vector3d(0, 0, 1)).norm() < 1e-15);  // n̂ = solar north
  const Eigen::Matrix3d R = heeq_R_shell(make(40, -25, 33, 5.0, 20, 0.3));
  CHECK((R.transpose() * R - Eigen::Matrix3d::Identity()).norm() < 1e-14);
  CHECK(R.determinant() == doctest::Approx(1.0).epsilon(1e-14).scale(0.0));
}
