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

TEST_CASE("associate: a central PA some degrees off still pairs when the two planes nearly coincide") {
  // measure_test's 900 km/s event seen under clang: views at −60° and +30°, a CME toward
  // (−15°, +5°) between them, so that both central-PA planes hold nearly the same great
  // circle; the threshold put one view's central PA 12° off. The planes' exact line then
  // swings to the far side of the Sun; a direction within 20° of both PAs still exists.
  const std::vector<oi::Observer> views{observer(-60, 2), observer(30, -3)};
  of::Sighting a = sighting(views[0], 0, direction(-15, 5), 0.0, 900.0);
  const of::Sighting b = sighting(views[1], 1, direction(-15, 5), 0.0, 900.0);
  a.central_pa_deg = std::fmod(a.central_pa_deg - 12.0 + 360.0, 360.0);
  const of::PairCheck c = of::check_pair(views, {a, b}, 0, 1);
  CAPTURE(c.planes_angle_deg);
  CAPTURE(c.why);
  CHECK(c.geometry_informs);
  CHECK(c.compatible());
  // (Planes this close constrain little: directions far from both, toward the far side,
  // also fit a PA 40° off. The timing and the residual carry such pairs.)
}

TEST_CASE("associate: a doubtful chain stands alone only when another view's CME explains it") {
  const std::vector<oi::Observer> views{observer(-60, 2), observer(40, -3)};
  const Eigen::Vector3d first = direction(-10, 20), second = direction(5, 10);
  // View 0 sees the first CME; under it, later and slower, a chain its view cannot tell
  // from a second CME toward a nearby direction.
  const of::Sighting doubtful = sighting(views[0], 0, second, 2400.0, 700.0);
  // View 1 sees only the first: its CME pairs with view 0's front, and nothing explains
  // the chain — the front's wake.
  const std::vector<of::Sighting> one{sighting(views[0], 0, first, 0.0, 900.0), sighting(views[1], 1, first, 0.0, 900.0)};
  CHECK_FALSE(of::doubtful_stands_alone(views, one, doubtful));
  // View 1 sees both: its second CME has no partner in view 0 and pairs with the chain.
  std::vector<of::Sighting> two = one;
  two.push_back(sighting(views[1], 1, second, 2400.0, 700.0));
  CHECK(of::doubtful_stands_alone(views, two, doubtful));
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

namespace {

// End to end: `occulta synth` → the imaging chain → find_fronts per view → sightings →
// associate (with the shell residual of each group from measure_shell, the measurement's
// own shell path) → one shell per CME.
struct ViewSpec {
  std::string name;
  double lon = 0, lat = 0;
  double cadence_s = 600, offset_s = 0;
  int frames = 14;
};
struct CmeSpec {
  double lon = 0, lat = 0, tilt = 0, speed = 900, at_min = 0;  // apex at 1.2 R☉ at_min after the start
};

std::string scenario(const std::vector<ViewSpec>& views, const std::vector<CmeSpec>& cmes, int seed) {
  std::string observers, shells;
  for (const auto& v : views) {
    char one[300];
    std::snprintf(one, sizeof one,
                  R"(%s{"name": "%s", "lon_deg": %g, "lat_deg": %g, "dist_au": 0.98, "cadence_s": %g, "start_offset_s": %g, "frames": %d})",
                  observers.empty() ? "" : ", ", v.name.c_str(), v.lon, v.lat, v.cadence_s, v.offset_s, v.frames);
    observers += one;
  }
  for (const auto& c : cmes) {
    char one[400];
    const int minutes = int(c.at_min);
    std::snprintf(one, sizeof one,
                  R"(%s{"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": 25, "aspect_ratio": 0.3,
                  "apex": {"time": "2031-09-21T%02d:%02d:00", "height_rs": 1.2, "speed_km_s": %g}, "density_cm3": 5e5})",
                  shells.empty() ? "" : ", ", c.lon, c.lat, c.tilt, 12 + minutes / 60, minutes % 60, c.speed);
    shells += one;
  }
  char text[4000];
  std::snprintf(text, sizeof text, R"({
    "id": "pair", "start": "2031-09-21T12:00:00", "cadence_s": 600, "frames": 14, "exposure_s": 6,
    "image": {"size_px": 192, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [%s], "shells": [%s],
    "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": 3},
    "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": %d
  })", observers.c_str(), shells.c_str(), seed);
  return text;
}

struct Run {
  fs::path dir;                                // the synth scratch folder
  std::vector<oi::Observer> observers;
  std::vector<of::ViewMeasurement> views;      // one per (view, front): the front's own record
  std::vector<of::Sighting> sightings;         // same order
  of::Association association;
  std::vector<of::ShellMeasurement> shells;    // per association CME
  int doubtful_kept = 0;                       // doubtful chains another view's CME explained
};

of::ShellMeasurement shell_over(const Run& run, const std::vector<int>& group) {
  std::vector<of::ViewMeasurement> views;
  for (int s : group) views.push_back(run.views[std::size_t(s)]);
  std::vector<std::string> problems;
  return of::measure_shell(views, std::nullopt, "auto", problems);
}

Run run_window(const std::string& name, const std::vector<ViewSpec>& specs, const std::vector<CmeSpec>& cmes, int seed) {
  const fs::path dir = occulta::test::synthesize_event(name, scenario(specs, cmes, seed));
  const of::Event event = of::read_event(dir / "frames/pair.event.json");
  Run run;
  run.dir = dir;
  std::vector<oi::PolarSequence> polars;
  std::vector<oi::FrontSet> sets;
  for (std::size_t v = 0; v < specs.size(); ++v) {
    run.observers.push_back(oi::observer_from_degrees(specs[v].lon, specs[v].lat, 0.98 * 1.495978707e8));
    oi::ChainOptions options;
    options.median_filter = 5;  // against the cosmic-ray tracks (up to 4 px long)
    polars.push_back(oi::polar_running_differences(specs[v].name, event.views.at(v).files, options).running);
    sets.push_back(oi::find_fronts(polars.back()));
  }
  // A front's record and its sighting, as the measurement makes them (fit/measurement.cpp):
  // robust, AICc's choice, the height grid's rounding as the scale's floor.
  const auto sighting_of = [&](std::size_t v, const oi::Front& front, of::ViewMeasurement& m) {
    m.name = specs[v].name;
    m.observer = run.observers[v];
    m.polar = polars[v];
    m.front = front;
    std::vector<of::HeightTimePoint> ht;
    for (const auto& p : m.front.track) ht.push_back({p.utc_s, p.height_rs, 0.0});
    m.kinematics =
        of::choose_height_time_model(ht, true, 2.0, polars[v].polar.height_step_rs / std::sqrt(12.0)).chosen;
    of::Sighting s;
    s.view = int(v);
    s.central_pa_deg = m.front.central_pa_deg;
    s.width_deg = m.front.encircles ? 360.0 : m.front.width_deg;
    s.law = *m.kinematics;
    s.cadence_s = specs[v].cadence_s;
    return s;
  };
  // A doubtful chain (one view cannot tell it from the front's wake) is a CME of its own
  // when another view's CME explains it, as the measurement decides (fit/associate.hpp).
  std::vector<of::Sighting> firm;
  for (std::size_t v = 0; v < specs.size(); ++v)
    for (const oi::Front& f : sets[v].fronts) {
      of::ViewMeasurement m;
      firm.push_back(sighting_of(v, f, m));
    }
  for (std::size_t v = 0; v < specs.size(); ++v) {
    std::vector<int> keep;
    for (std::size_t d = 0; d < sets[v].doubtful.size(); ++d) {
      of::ViewMeasurement m;
      if (of::doubtful_stands_alone(run.observers, firm, sighting_of(v, sets[v].doubtful[d], m))) keep.push_back(int(d));
    }
    run.doubtful_kept += int(keep.size());
    if (!keep.empty()) sets[v] = oi::find_fronts(polars[v], {}, keep);
  }
  for (std::size_t v = 0; v < specs.size(); ++v)
    for (std::size_t f = 0; f < sets[v].fronts.size(); ++f) {
      of::ViewMeasurement m;
      of::Sighting s = sighting_of(v, sets[v].fronts[f], m);
      s.front = int(f);
      run.views.push_back(std::move(m));
      run.sightings.push_back(s);
    }
  run.association = of::associate(run.observers, run.sightings, {}, [&](const std::vector<int>& group) {
    const of::ShellMeasurement shell = shell_over(run, group);
    return shell.fit ? shell.fit->residual_rms_rs : std::numeric_limits<double>::quiet_NaN();
  });
  for (const auto& cme : run.association.cmes) run.shells.push_back(shell_over(run, cme.sightings));
  return run;
}

double angle_deg(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return std::acos(std::clamp(a.normalized().dot(b.normalized()), -1.0, 1.0)) * 180.0 / M_PI;
}

// The truth CME a fitted shell points at: the nearest direction. Its direction error (°)
// and speed error (fraction) come back through the references.
int nearest_cme(const of::ShellFit& fit, const std::vector<CmeSpec>& cmes, double& angle, double& speed_error) {
  const Eigen::Vector3d fitted(std::cos(fit.shell.lat) * std::cos(fit.shell.lon), std::cos(fit.shell.lat) * std::sin(fit.shell.lon),
                               std::sin(fit.shell.lat));
  int best = -1;
  angle = 360.0;
  for (std::size_t c = 0; c < cmes.size(); ++c) {
    const double a = angle_deg(fitted, direction(cmes[c].lon, cmes[c].lat));
    if (a < angle) angle = a, best = int(c);
  }
  speed_error = std::abs(fit.law.speed_km_s / cmes[std::size_t(best)].speed - 1.0);
  return best;
}

}  // namespace

TEST_CASE("associate: two CMEs in different directions at overlapping times, two views — each its own shell") {
  // Views 90° apart. The first CME north-west of one view at 900 km/s from the start;
  // the second, 1300 km/s, its apex at 1.2 R☉ 40 min in, toward the south-east of both.
  const std::vector<ViewSpec> views{{"a", -45, 2}, {"b", 45, -3}};
  const std::vector<CmeSpec> cmes{{0, 20, 20, 900, 0}, {-100, -20, -30, 1300, 40}};
  const Run run = run_window("associate_two", views, cmes, 11);
  for (std::size_t i = 0; i < run.sightings.size(); ++i)
    MESSAGE("sighting " << i << ": view " << run.sightings[i].view << ", central PA " << run.sightings[i].central_pa_deg
                        << ", span " << run.views[i].front.pa_from_deg << "→" << run.views[i].front.pa_to_deg
                        << ", frames " << run.views[i].front.onset_frame << "–" << run.views[i].front.last_frame);
  for (const auto& c : run.association.checks)
    MESSAGE("pair " << c.a << "–" << c.b << ": " << (c.compatible() ? "compatible" : c.why) << " (onsets "
                    << c.onset_gap_s / 60.0 << " min apart, allowed " << c.onset_allowed_s / 60.0 << ")");
  for (const auto& n : run.association.notes) MESSAGE(n);
  {
    std::ifstream in(run.dir / "frames/pair.truth.json");
    const json truth = json::parse(in);
    for (const std::string view : {"a", "b"})
      for (int c = 0; c < 2; ++c) {
        const auto t = of::view_truth(truth, view, 2.8, 14.3, c);
        MESSAGE("truth: view " << view << ", CME " << c << ": central PA " << t.central_pa_deg << ", span " << t.pa_from_deg
                               << "→" << t.pa_to_deg);
      }
  }
  MESSAGE(run.doubtful_kept << " doubtful chain(s) kept as CMEs of their own");
  REQUIRE(run.sightings.size() == 4);  // two fronts per view
  CHECK(run.association.decided);
  REQUIRE(run.association.cmes.size() == 2);
  std::vector<int> matched;
  for (std::size_t k = 0; k < run.association.cmes.size(); ++k) {
    const auto& cme = run.association.cmes[k];
    CAPTURE(k);
    CHECK(cme.sightings.size() == 2);  // both views, one front each
    REQUIRE(run.shells[k].fit);
    double angle = 0, speed_error = 0;
    const int which = nearest_cme(*run.shells[k].fit, cmes, angle, speed_error);
    matched.push_back(which);
    MESSAGE("CME " << k << " → truth " << which << ": direction off by " << angle << "°, speed "
                   << run.shells[k].fit->law.speed_km_s << " km/s (" << 100.0 * speed_error << " %), residual "
                   << cme.residual_rs << " R☉");
    CHECK(angle <= 4.0);
    CHECK(speed_error <= 0.07);
  }
  // None fused: the two shells are the two CMEs.
  CHECK(matched.size() == 2);
  if (matched.size() == 2) CHECK(matched[0] != matched[1]);
  // A fused pairing (each view's first-found with the other's other) fits far worse than
  // either true one: what the residual check stands on.
  for (const auto& c : run.association.checks)
    if (!c.compatible() || std::find_if(run.association.cmes.begin(), run.association.cmes.end(), [&](const of::CmeGroup& g) {
                             return g.sightings == std::vector<int>{c.a, c.b};
                           }) == run.association.cmes.end()) {
      const of::ShellMeasurement fused = shell_over(run, {c.a, c.b});
      const double rms = fused.fit ? fused.fit->residual_rms_rs : std::numeric_limits<double>::quiet_NaN();
      MESSAGE("wrong pair " << c.a << "–" << c.b << ": residual " << rms << " R☉");
    }
}

TEST_CASE("associate: views on different cadences and offset clocks measure as well as matched ones") {
  const std::vector<CmeSpec> cme{{0, 20, 20, 900, 0}};
  const Run matched = run_window("associate_matched", {{"a", -45, 2, 600, 0, 14}, {"b", 45, -3, 600, 0, 14}}, cme, 12);
  const Run offset = run_window("associate_offset", {{"a", -45, 2, 720, 0, 12}, {"b", 45, -3, 480, 300, 18}}, cme, 12);
  double angle[2] = {}, speed[2] = {};
  const Run* runs[2] = {&matched, &offset};
  for (int r = 0; r < 2; ++r) {
    CAPTURE(r);
    REQUIRE(runs[r]->sightings.size() == 2);
    REQUIRE(runs[r]->association.cmes.size() == 1);
    CHECK(runs[r]->association.cmes[0].sightings.size() == 2);
    REQUIRE(runs[r]->shells[0].fit);
    nearest_cme(*runs[r]->shells[0].fit, cme, angle[r], speed[r]);
    MESSAGE(std::string(r ? "offset clocks" : "matched") << ": direction off by " << angle[r] << "°, speed off by "
                                              << 100.0 * speed[r] << " %");
  }
  // Within the single-CME tolerances, and no worse than matched by more than 1° and 2 %.
  CHECK(angle[1] <= 4.0);
  CHECK(speed[1] <= 0.07);
  CHECK(angle[1] <= angle[0] + 1.0);
  CHECK(speed[1] <= speed[0] + 0.02);
}
