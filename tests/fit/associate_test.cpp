// fit/associate: which view's CME is which. Unit cases on constructed sightings (the
// sky PAs of invented directions, seen through imaging/geometry — Thompson 2006 frames),
// then end to end on `occulta synth` windows of our own: two CMEs in different directions
// at overlapping times seen from two views, and one CME from two views on different
// clocks. Tolerances are the single-CME ones of tests/app/shell_measure_test.cpp
// (direction 4°, apex speed 7 %).
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/associate.hpp"
#include "fit/event.hpp"
#include "fit/measurement_shell.hpp"
#include "fit/truth.hpp"
#include "imaging/chain.hpp"
#include "imaging/constants.hpp"
#include "imaging/front.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
namespace of = occulta::fit;
namespace oi = occulta::imaging;
using nlohmann::json;

constexpr double kRs = 695700.0;  // km, IAU 2015 B3

oi::Observer observer(double lon_deg, double lat_deg) {
  return oi::observer_from_degrees(lon_deg, lat_deg, 1.496e8);
}

Eigen::Vector3d direction(double lon_deg, double lat_deg) {
  const double lon = lon_deg * M_PI / 180.0, lat = lat_deg * M_PI / 180.0;
  return {std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat)};
}

// A sighting of a CME along `dir`, launched (h = 1 R☉) at t0_s at speed v: the PA where the
// view sees the direction, and a straight-line law fitted to its sky heights h cos ε every
// 10 minutes from 3 R☉ on (a radial motion's sky heights — common practice).
of::Sighting sighting(const oi::Observer& obs, int view, const Eigen::Vector3d& dir, double t0_s, double speed_km_s) {
  of::Sighting s;
  s.view = view;
  s.central_pa_deg = oi::position_angle_deg(oi::hpc_from_heeq(obs, 5.0 * kRs * dir));
  s.width_deg = 60.0;
  s.cadence_s = 600.0;
  const double along = dir.dot(obs.heeq_p_obs_km().normalized());
  const double cos_eps = std::sqrt(1.0 - along * along);
  std::vector<of::HeightTimePoint> points;
  for (int k = 0; k < 8; ++k) {
    const double t = t0_s + 600.0 * (k + 1);
    const double h = 1.0 + speed_km_s * (t - t0_s) / kRs;
    // ± 0.05 R☉ of alternating scatter, so that the fit has a scale.
    points.push_back({t, h * cos_eps + (k % 2 ? 0.05 : -0.05), 0.0});
  }
  s.law = of::fit_height_time(points);
  return s;
}

}  // namespace

TEST_CASE("associate: two CMEs from two views pair by geometry and timing") {
  const std::vector<oi::Observer> views{observer(-60, 2), observer(40, -3)};
  const Eigen::Vector3d first = direction(-10, 20), second = direction(30, -25);
  std::vector<of::Sighting> s{sighting(views[0], 0, first, 0.0, 900.0), sighting(views[0], 0, second, 2400.0, 1300.0),
                              sighting(views[1], 1, second, 2400.0, 1300.0), sighting(views[1], 1, first, 0.0, 900.0)};
  const of::Association a = of::associate(views, s);
  CHECK(a.decided);
  REQUIRE(a.cmes.size() == 2);
  CHECK(a.cmes[0].sightings == std::vector<int>{0, 3});
  CHECK(a.cmes[1].sightings == std::vector<int>{1, 2});
  // The right pairs pass both checks; each wrong pair fails one of them.
  for (const of::PairCheck& c : a.checks) {
    const bool right = (c.a == 0 && c.b == 3) || (c.a == 1 && c.b == 2);
    CAPTURE(c.a);
    CAPTURE(c.b);
    CAPTURE(c.why);
    CHECK(c.compatible() == right);
    if (right) CHECK(c.onset_gap_s < 120.0);  // both laws put 1 R☉ (deprojected) within 2 min
  }
}

TEST_CASE("associate: the planes' line on the far side of the Sun in one view is no direction") {
  const std::vector<oi::Observer> views{observer(-60, 0), observer(40, 0)};
  of::Sighting a = sighting(views[0], 0, direction(-10, 20), 0.0, 900.0);
  of::Sighting b = sighting(views[1], 1, direction(-10, 20), 0.0, 900.0);
  CHECK(of::check_pair(views, {a, b}, 0, 1).compatible());
  b.central_pa_deg = std::fmod(b.central_pa_deg + 180.0, 360.0);  // the same plane, the other side
  const of::PairCheck c = of::check_pair(views, {a, b}, 0, 1);
  CHECK(c.geometry_informs);
  CHECK_FALSE(c.geometry_ok);
  CHECK(c.why.find("side of the Sun") != std::string::npos);
}

TEST_CASE("associate: undecided pairings are reported with their candidates; a residual decides them") {
  // Two views 4° apart see two CMEs launched together: the planes nearly coincide and the
  // onsets agree, so either pairing fits.
  const std::vector<oi::Observer> views{observer(-60, 0), observer(-56, 0)};
  const Eigen::Vector3d first = direction(-10, 20), second = direction(-5, -25);
  const std::vector<of::Sighting> s{sighting(views[0], 0, first, 0.0, 900.0), sighting(views[0], 0, second, 0.0, 900.0),
                                    sighting(views[1], 1, first, 0.0, 900.0), sighting(views[1], 1, second, 0.0, 900.0)};
  // Make the cross pairs pass the geometry too: both views report both CMEs at one PA.
  std::vector<of::Sighting> same = s;
  for (auto& x : same) x.central_pa_deg = 300.0;
  const of::Association a = of::associate(views, same);
  CHECK_FALSE(a.decided);
  CHECK(a.cmes.empty());
  CHECK(a.undecided == std::vector<int>{0, 1, 2, 3});
  CHECK(a.candidates.size() == 2);
  CHECK_FALSE(a.notes.empty());
  // The shell fit over a pair: 0.2 R☉ rms for the true pairs, 1.5 R☉ for the others.
  const of::GroupResidual residual = [](const std::vector<int>& g) {
    return (g == std::vector<int>{0, 2} || g == std::vector<int>{1, 3}) ? 0.2 : 1.5;
  };
  const of::Association b = of::associate(views, same, {}, residual);
  CHECK(b.decided);
  REQUIRE(b.cmes.size() == 2);
  CHECK(b.cmes[0].sightings == std::vector<int>{0, 2});
  CHECK(b.cmes[1].sightings == std::vector<int>{1, 3});
  CHECK(b.cmes[0].residual_rs == 0.2);
  // A residual that refuses every pair leaves four one-view CMEs, never a fused one.
  const of::Association c = of::associate(views, same, {}, [](const std::vector<int>&) { return 2.0; });
  CHECK(c.decided);
  CHECK(c.cmes.size() == 4);
  for (const auto& g : c.cmes) CHECK(g.one_view());
}

TEST_CASE("associate: a CME seen by one view stays one-view") {
  const std::vector<oi::Observer> views{observer(-60, 2), observer(40, -3)};
  const Eigen::Vector3d first = direction(-10, 20), hidden = direction(170, 5);
  const std::vector<of::Sighting> s{sighting(views[0], 0, first, 0.0, 900.0), sighting(views[0], 0, hidden, 3600.0, 700.0),
                                    sighting(views[1], 1, first, 0.0, 900.0)};
  const of::Association a = of::associate(views, s);
  CHECK(a.decided);
  REQUIRE(a.cmes.size() == 2);
  CHECK(a.cmes[0].sightings == std::vector<int>{0, 2});
  CHECK(a.cmes[1].one_view());
  CHECK(a.cmes[1].sightings == std::vector<int>{1});
}
