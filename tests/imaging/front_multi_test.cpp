// imaging/front find_fronts on synthetic windows holding more than one CME, or one CME
// and a bright point drifting across the field (`occulta synth` scenarios of our own; the
// truth is synth's projected shell mesh, fit/truth.hpp — our own forward model). The
// tolerances are front_test.cpp's (central PA 5°, onset one cadence, track 0.3 R☉).
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/event.hpp"
#include "fit/truth.hpp"
#include "imaging/chain.hpp"
#include "imaging/front.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
namespace oi = occulta::imaging;

constexpr double kInnerRs = 2.5, kOuterRs = 14.5, kCadenceS = 600.0;

// One CME: direction, speed, and when its apex is at 1.2 R☉ (minutes after the start).
struct Cme {
  double lon = 0, lat = 0, speed = 900, tilt = 0, at_min = 0;
};

std::string shell_json(const Cme& c) {
  char text[512];
  const int minutes = int(c.at_min);
  std::snprintf(text, sizeof text, R"({"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": 25, "aspect_ratio": 0.3,
      "apex": {"time": "2031-06-01T%02d:%02d:00", "height_rs": 1.2, "speed_km_s": %g}, "density_cm3": 5e5})",
                c.lon, c.lat, c.tilt, 12 + minutes / 60, minutes % 60, c.speed);
  return text;
}

constexpr const char* kOneView = R"({"name": "one", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.98, "roll_deg": 4})";

// Views `observers` (by default one at Stonyhurst lon −60°), 150 px, `frames` frames at
// 10 min; `extra` adds top-level members (each with a leading comma).
std::string scenario(const std::vector<Cme>& cmes, int frames, const std::string& extra = "", int seed = 7,
                     const std::string& observers = kOneView) {
  std::string shells;
  for (const Cme& c : cmes) shells += (shells.empty() ? "" : ", ") + shell_json(c);
  char text[4096];
  std::snprintf(text, sizeof text, R"({
    "id": "multi", "start": "2031-06-01T12:00:00", "cadence_s": %g, "frames": %d, "exposure_s": 6,
    "image": {"size_px": 150, "half_width_rs": 15, "occulter_rs": [%g, %g]},
    "observers": [%s],
    "shells": [%s],
    "detector": {"dn_per_s_per_bsun": 2e12}, "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": %d%s
  })", kCadenceS, frames, kInnerRs, kOuterRs, observers.c_str(), shells.c_str(), seed, extra.c_str());
  return text;
}

struct Window {
  json truth;
  oi::PolarSequence running;
  std::string view = "one";
};

// View `view` of a synthesized window (`dir` from synthesize_event): its truth and
// polar running differences.
Window difference_view(const fs::path& dir, const std::string& view) {
  Window out;
  out.view = view;
  std::ifstream in(dir / "frames/multi.truth.json");
  out.truth = json::parse(in);
  const auto event = occulta::fit::read_event(dir / "frames/multi.event.json");
  oi::ChainOptions options;
  options.median_filter = 5;  // against the scenario's cosmic-ray tracks (up to 4 px long)
  for (const auto& v : event.views)
    if (v.name == view) out.running = oi::polar_running_differences(view, v.files, options).running;
  return out;
}

Window synth_and_difference(const std::string& name, const std::string& scenario_text) {
  return difference_view(occulta::test::synthesize_event(name, scenario_text), "one");
}

double pa_distance(double a, double b) {
  const double d = std::fmod(std::abs(a - b), 360.0);
  return std::min(d, 360.0 - d);
}

// Front `front` against CME `cme` of the truth: central PA within 5°, onset within one
// cadence of the first difference whose truth edge clears the occulter by 0.5 R☉, track
// within `track_tolerance_rs` (0.3 R☉ by default) of the truth's edge at the track's PA.
// Returns the worst track error.
double check_against(const Window& w, const oi::Front& front, int cme, double track_tolerance_rs = 0.3) {
  CAPTURE(cme);
  CAPTURE(w.view);
  const oi::FrontOptions finder;
  const auto truth = occulta::fit::view_truth(w.truth, w.view, kInnerRs + finder.inner_margin_rs,
                                              kOuterRs - finder.outer_margin_rs, cme);
  const double truth_pa = truth.central_pa_deg, found_pa = front.central_pa_deg;
  CAPTURE(truth_pa);
  CAPTURE(found_pa);
  CHECK(pa_distance(found_pa, truth_pa) <= 5.0);
  int truth_onset = -1;
  for (size_t i = 0; i < w.running.utc_s.size() && truth_onset < 0; ++i) {
    const double edge = occulta::fit::sky_front_rs(w.truth, w.view, w.running.utc_s[i], truth.apex_pa_deg, cme);
    if (std::isfinite(edge) && edge > kInnerRs + 0.5) truth_onset = int(i);
  }
  // The truth's edge at the apex PA (above) or the largest sky height (view_truth):
  // the earlier of the two frames.
  for (size_t i = 0; i < w.running.utc_s.size(); ++i)
    if (w.running.utc_s[i] >= truth.first_visible_utc_s) {
      if (truth_onset < 0 || int(i) < truth_onset) truth_onset = int(i);
      break;
    }
  REQUIRE(truth_onset >= 0);
  const int found_onset = front.onset_frame;
  CAPTURE(truth_onset);
  CAPTURE(found_onset);
  CHECK(std::abs(front.onset_utc_s - w.running.utc_s[size_t(truth_onset)]) <= kCadenceS + 1.0);
  int compared = 0;
  double worst = 0.0;
  for (const auto& p : front.track) {
    const double edge = occulta::fit::sky_front_rs(w.truth, w.view, p.utc_s, p.pa_deg, cme);
    if (!std::isfinite(edge) || edge < kInnerRs + 0.8 || edge > kOuterRs - 0.8) continue;
    const double height = p.height_rs;
    CAPTURE(height);
    CAPTURE(edge);
    CHECK(std::abs(height - edge) < track_tolerance_rs);
    worst = std::max(worst, std::abs(height - edge));
    ++compared;
  }
  CHECK(compared >= 3);
  MESSAGE("CME " << cme << ": central PA " << found_pa << " (truth " << truth_pa << "), onset frame " << found_onset
                 << " (truth " << truth_onset << "), track worst " << worst << " R☉ over " << compared);
  return worst;
}

std::string describe(const oi::FrontSet& set, double set_start_s) {
  std::string out = std::to_string(set.fronts.size()) + " fronts (" + std::to_string(set.refused_chains) + " chains refused)";
  for (const auto& f : set.fronts) {
    char text[200];
    std::snprintf(text, sizeof text, "; frames %d–%d, origin %+.0f min, central PA %.1f, span %.0f→%.0f, %zu track points",
                  f.onset_frame, f.last_frame, (f.origin_utc_s - set_start_s) / 60.0, f.central_pa_deg, f.pa_from_deg,
                  f.pa_to_deg, f.track.size());
    out += text;
  }
  return out;
}

}  // namespace

TEST_CASE("front: two CMEs in different PA ranges at overlapping times are found apart") {
  // West-north at 900 km/s from the start; east-south at 1300 km/s, its apex at 1.2 R☉
  // 40 min later (launched ~33 min in): both in the field together from ~50 min on.
  const Window w = synth_and_difference("multi_apart", scenario({{20, 15, 900, 20, 0}, {-140, -20, 1300, -30, 40}}, 12));
  const auto set = oi::find_fronts(w.running);
  INFO(set.why_none);
  MESSAGE(describe(set, w.running.utc_s[0]));
  REQUIRE(set.fronts.size() == 2);
  // By onset: the first CME first.
  check_against(w, set.fronts[0], 0);
  check_against(w, set.fronts[1], 1);
  // None fused: the spans do not overlap.
  const auto inside = [](double pa, const oi::Front& f) {
    return std::fmod(pa - f.pa_from_deg + 720.0, 360.0) <= std::fmod(f.pa_to_deg - f.pa_from_deg + 720.0, 360.0);
  };
  CHECK_FALSE(inside(set.fronts[1].central_pa_deg, set.fronts[0]));
  CHECK_FALSE(inside(set.fronts[0].central_pa_deg, set.fronts[1]));
}

TEST_CASE("front: a faster CME after a slower one in the same PA range is found with its own onset") {
  // Both toward lon 20° (80° from the view, near its west limb): 1200 km/s from the start,
  // then 1800 km/s with its apex at 1.2 R☉ 60 min in (launched ~53 min in). It would catch
  // the first only at ~3 h, after both have left the 14.5 R☉ field.
  const Window w = synth_and_difference("multi_same_pa", scenario({{20, 5, 1200, 10, 0}, {20, 5, 1800, 10, 60}}, 14));
  const auto set = oi::find_fronts(w.running);
  INFO(set.why_none);
  MESSAGE(describe(set, w.running.utc_s[0]));
  REQUIRE(set.fronts.size() == 2);
  check_against(w, set.fronts[0], 0);
  // The second front runs through the first's wake: its edge is held to two pixels of
  // this 150-pixel frame (0.4 R☉). Measured worst: 0.17 R☉ with GCC, 0.32 R☉ with clang,
  // whose synthetic frames differ in their last bits (and whose onsets come one frame
  // earlier for both CMEs, still within the cadence the issue allows).
  check_against(w, set.fronts[1], 1, 0.4);
  CHECK(set.fronts[1].onset_frame > set.fronts[0].onset_frame + 3);
}

TEST_CASE("front: a faster CME after a slower one toward the same direction, 45° from both views, each found") {
  // The "same PA range" window above turned 45° from both views: both toward Stonyhurst
  // (−15°, +5°), seen from lon −60° and +30°; 1200 km/s from the start, then 1800 km/s
  // with its apex at 1.2 R☉ 60 min in. In each view the second rises through the first's
  // wake, where its chain begins on the first's slow rear (a frame before the second
  // clears the occulter); the first is still above it in the same PA range when the window
  // ends. Truth onsets: synth's projected shells (fit/truth.hpp), as check_against says.
  const std::string views = R"({"name": "left", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.98, "roll_deg": 4},
                                {"name": "right", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01})";
  const fs::path dir = occulta::test::synthesize_event(
      "multi_follow", scenario({{-15, 5, 1200, 10, 0}, {-15, 5, 1800, 10, 60}}, 14, "", 7, views));
  for (const std::string view : {"left", "right"}) {
    CAPTURE(view);
    const Window w = difference_view(dir, view);
    const auto set = oi::find_fronts(w.running);
    INFO(set.why_none);
    MESSAGE(view << ": " << describe(set, w.running.utc_s[0]));
    REQUIRE(set.fronts.size() == 2);
    check_against(w, set.fronts[0], 0);
    // Through the first's wake: the same 0.4 R☉ as the window above.
    check_against(w, set.fronts[1], 1, 0.4);
  }
}

TEST_CASE("front: a bright point drifting across the field is not a CME, and the CME is measured as without it") {
  const std::vector<Cme> one{{20, 15, 900, 20, 0}};
  // A point of 2e-9 B☉ (as bright as the sheath's brightest pixels, our choice) drifting
  // from PA 150° at 6 R☉ to PA 200° at 9 R☉ over the window: across the southern sky,
  // away from the CME's north-western one.
  const std::string point =
      R"(, "point_sources": [{"view": "one", "from": {"pa_deg": 150, "height_rs": 6}, "to": {"pa_deg": 200, "height_rs": 9}, "brightness_bsun": 2e-9}])";
  const Window with = synth_and_difference("multi_point", scenario(one, 10, point));
  const Window without = synth_and_difference("multi_no_point", scenario(one, 10));
  const auto found_with = oi::find_fronts(with.running);
  const auto found_without = oi::find_fronts(without.running);
  MESSAGE(describe(found_with, with.running.utc_s[0]));
  REQUIRE(found_with.fronts.size() == 1);
  REQUIRE(found_without.fronts.size() == 1);
  const double worst_with = check_against(with, found_with.fronts[0], 0);
  const double worst_without = check_against(without, found_without.fronts[0], 0);
  // As accurate: the same central PA within 1° and onset, the track's worst error within
  // 0.05 R☉ of the run without the point (our tolerances: a pixel is 0.2 R☉).
  CHECK(pa_distance(found_with.fronts[0].central_pa_deg, found_without.fronts[0].central_pa_deg) <= 1.0);
  CHECK(found_with.fronts[0].onset_frame == found_without.fronts[0].onset_frame);
  CHECK(worst_with <= worst_without + 0.05);
  // The point is there: the frames with it differ from those without where it passes.
  double most = 0.0;
  for (size_t k = 0; k < with.running.frames.size(); ++k) {
    cv::Mat diff = cv::abs(with.running.frames[k] - without.running.frames[k]);
    cv::patchNaNs(diff, 0.0);
    double lo = 0.0, hi = 0.0;
    cv::minMaxLoc(diff, &lo, &hi);
    most = std::max(most, hi);
  }
  MESSAGE("the point changes the running difference by up to " << most << " σ");
  CHECK(most > 10.0);
}

TEST_CASE("front: one narrow, tilted CME is one front in each view, not the front and its inner rim") {
  // tests/app/measure_test.cpp's third event (600 km/s, half-angle 15°, tilt 60°, toward
  // Stonyhurst (−40°, +25°)), from its two views. In the right view a second chain rises
  // under the front, inside its span (PA 55–71° of 24–109°), from frame 6 on: the shell's
  // inner rim, at ~0.63 of the front's height in each frame (self-similar), whose faint
  // three-point track rises at ~150 km/s and so points to an origin ~170 min before the
  // front's. It trails the front (imaging/front.hpp step 6) and is not a CME of its own.
  // Each view's one front is find_front's: same onset, central PA and track.
  const std::string text = R"({
    "id": "multi", "start": "2031-07-09T03:00:00", "cadence_s": 600, "frames": 10, "exposure_s": 6,
    "image": {"size_px": 160, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [{"name": "left", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.97, "roll_deg": 3},
                  {"name": "right", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01}],
    "shell": {"lon_deg": -40, "lat_deg": 25, "tilt_deg": 60, "half_angle_deg": 15, "aspect_ratio": 0.25,
              "apex": {"time": "2031-07-09T03:00:00", "height_rs": 2.0, "speed_km_s": 600, "accel_m_s2": 0},
              "density_cm3": 8e5},
    "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": 3},
    "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": 3
  })";
  const fs::path dir = occulta::test::synthesize_event("multi_one_tilted", text);
  const auto event = occulta::fit::read_event(dir / "frames/multi.event.json");
  int refused = 0;
  for (const auto& view : event.views) {
    CAPTURE(view.name);
    oi::ChainOptions options;
    options.median_filter = 5;
    const oi::PolarSequence running = oi::polar_running_differences(view.name, view.files, options).running;
    const auto set = oi::find_fronts(running);
    const auto one = oi::find_front(running);
    MESSAGE(view.name << ": " << describe(set, running.utc_s[0]));
    REQUIRE(one.found);
    REQUIRE(set.fronts.size() == 1);
    refused += set.refused_chains;
    const oi::Front& f = set.fronts[0];
    CHECK(f.onset_frame == one.onset_frame);
    CHECK(f.central_pa_deg == one.central_pa_deg);
    REQUIRE(f.track.size() == one.track.size());
    for (size_t i = 0; i < f.track.size(); ++i) CHECK(f.track[i].height_rs == one.track[i].height_rs);
  }
  CHECK(refused >= 1);  // the inner rim was there, and refused
}
