// imaging/front on synthetic events of known truth (`occulta synth`): the CME's central PA,
// PA span, onset and track against the truth file, and no detection on quiet sequences.
// The truth is the synth's projected shell mesh (fit/synth.hpp sky_truth, fit/truth.hpp
// view_truth) — our own forward model, not an outside source; the tolerances are the
// issue's (central PA 5°, onset one cadence) or ours where marked.
#include <cmath>
#include <cstdio>
#include <fstream>
#include <limits>
#include <string>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/event.hpp"
#include "fit/truth.hpp"
#include "imaging/chain.hpp"
#include "imaging/front.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

constexpr double kInnerRs = 2.5, kOuterRs = 14.5, kCadenceS = 600.0;

struct Shell {
  double lon = 0, lat = 0, speed = 900, tilt = 0, half_angle = 25, height = 1.2, density = 5e5;
  int seed = 5;
  double cosmic_rays = 6;
  std::string extra;  // more top-level JSON members, each with a leading comma
};

Shell make_shell(double lon, double lat, double speed, double tilt) {
  Shell s;
  s.lon = lon;
  s.lat = lat;
  s.speed = speed;
  s.tilt = tilt;
  return s;
}

// One view, 150 px, 10 frames at 10 min; the apex starts below the occulter so that the
// onset falls inside the sequence.
std::string scenario(const Shell& s) {
  char text[2048];
  std::snprintf(text, sizeof text, R"({
    "id": "front-event", "start": "2031-06-01T12:00:00", "cadence_s": %g, "frames": 10, "exposure_s": 6,
    "image": {"size_px": 150, "half_width_rs": 15, "occulter_rs": [%g, %g]},
    "observers": [{"name": "one", "lon_deg": -55, "lat_deg": 2, "dist_au": 0.98, "roll_deg": 4}],
    "shell": {"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": %g, "aspect_ratio": 0.3,
              "apex": {"time": "2031-06-01T12:00:00", "height_rs": %g, "speed_km_s": %g},
              "density_cm3": %g},
    "detector": {"dn_per_s_per_bsun": 2e12}, "jitter_px": 0.3, "cosmic_rays_per_frame": %g, "seed": %d%s
  })", kCadenceS, kInnerRs, kOuterRs, s.lon, s.lat, s.tilt, s.half_angle, s.height, s.speed, s.density,
                s.cosmic_rays, s.seed, s.extra.c_str());
  return text;
}

struct Synth {
  json truth;
  occulta::imaging::PolarSequence running;
};

Synth synth_and_difference(const std::string& name, const Shell& shell) {
  const fs::path dir = occulta::test::synthesize_event(name, scenario(shell));
  Synth out;
  std::ifstream in(dir / "frames/front-event.truth.json");
  out.truth = json::parse(in);
  const auto event = occulta::fit::read_event(dir / "frames/front-event.event.json");
  occulta::imaging::ChainOptions options;
  options.median_filter = 5;  // against the scenario's cosmic-ray tracks (up to 4 px long)
  out.running = occulta::imaging::polar_running_differences("one", event.views.at(0).files, options).running;
  return out;
}

double pa_distance(double a, double b) {
  const double d = std::fmod(std::abs(a - b), 360.0);
  return std::min(d, 360.0 - d);
}

// Truth of the frame that difference i ends at (difference i is frames i → i + 1).
const json& seen(const Synth& s, int difference) { return s.truth["frames"][difference + 1]["views"]["one"]; }

void check_event(const std::string& name, const Shell& shell, double track_tolerance_rs = 0.3) {
  const Synth s = synth_and_difference(name, shell);
  const auto front = occulta::imaging::find_front(s.running);
  INFO(front.why_not);
  REQUIRE(front.found);
  const int n = int(s.running.frames.size());

  // Central PA within 5° (issue 5) of the truth's: the PA of the centroid of the sky the
  // shell's front swept through between the heights the finder examines (fit/truth.hpp view_truth,
  // from the truth file of `occulta synth` — our own forward model, the reference here).
  const occulta::imaging::FrontOptions finder;
  const occulta::fit::ViewTruth truth =
      occulta::fit::view_truth(s.truth, "one", kInnerRs + finder.inner_margin_rs, kOuterRs - finder.outer_margin_rs);
  const double apex_pa = seen(s, n - 1)["apex_pa_deg"].get<double>();
  CAPTURE(apex_pa);
  CAPTURE(truth.central_pa_deg);
  CAPTURE(front.central_pa_deg);
  CAPTURE(front.outermost_pa_deg);
  // Not for a near-halo (the swept span ≥ 180°, the projection round the occulter): its
  // far side is faint in Thomson-scattered light far from the plane of the sky, so no view
  // sees the geometric span's whole sky, and its centroid is not what a view can measure
  // (the wide event below: 14° off, measured). That case is left unchecked here, and said so.
  CAPTURE(truth.width_deg);
  if (truth.width_deg < 180.0) CHECK(pa_distance(front.central_pa_deg, truth.central_pa_deg) <= 5.0);
  else MESSAGE(name << ": a near-halo, central PA not held to the geometric truth");

  // Onset within one cadence of the first frame whose truth edge clears the occulter by
  // 0.5 R☉ (our margin: the front must be a few rows into the field to be seen).
  int truth_onset = -1;
  for (int i = 0; i < n && truth_onset < 0; ++i)
    if (seen(s, i)["sky_leading_edge_rs"].get<double>() > kInnerRs + 0.5) truth_onset = i;
  REQUIRE(truth_onset >= 0);
  CAPTURE(truth_onset);
  CAPTURE(front.onset_frame);
  CHECK(std::abs(front.onset_utc_s - s.running.utc_s[truth_onset]) <= kCadenceS + 1.0);

  // PA span roughly the truth's, taken at the last frame of the chain, where the truth's
  // projection does not wrap round the occulter (a span ≥ 180° is mostly hidden behind
  // it): each end within 30° and the width within 35° (our tolerances: the faint flanks
  // near the occulter fall below the threshold first).
  const json& span = seen(s, front.last_frame)["pa_span_deg"];
  const double from = span[0].get<double>(), to = span[1].get<double>();
  CAPTURE(from);
  CAPTURE(to);
  CAPTURE(front.pa_from_deg);
  CAPTURE(front.pa_to_deg);
  if (to - from < 180.0) {
    CHECK(pa_distance(front.pa_from_deg, from) <= 30.0);
    CHECK(pa_distance(front.pa_to_deg, to) <= 30.0);
    CHECK(std::abs(front.width_deg - (to - from)) <= 35.0);
  }

  // Track heights within 0.3 R☉ of the truth's edge at the track's PA (the central PA)
  // while it is in the field.
  int compared = 0;
  double worst = 0.0;
  for (const auto& p : front.track) {
    const double edge = occulta::fit::sky_front_rs(s.truth, "one", p.utc_s, p.pa_deg);
    if (edge < kInnerRs + 0.8 || edge > kOuterRs - 0.8) continue;
    CAPTURE(p.frame);
    CAPTURE(edge);
    CAPTURE(p.height_rs);
    CHECK(std::abs(p.height_rs - edge) < track_tolerance_rs);
    worst = std::max(worst, std::abs(p.height_rs - edge));
    ++compared;
  }
  CHECK(compared >= 3);
  for (size_t k = 1; k < front.track.size(); ++k) CHECK(front.track[k].height_rs >= front.track[k - 1].height_rs);

  // One CME: find_fronts finds it alone, as find_front does (front.hpp step 6).
  const auto set = occulta::imaging::find_fronts(s.running);
  for (const auto& f : set.fronts)
    MESSAGE(name << ": front frames " << f.onset_frame << "–" << f.last_frame << ", origin "
                 << (f.origin_utc_s - s.running.utc_s[0]) / 60.0 << " min, central PA " << f.central_pa_deg << ", span "
                 << f.pa_from_deg << "→" << f.pa_to_deg << ", " << f.track.size() << " track points");
  CHECK(set.fronts.size() == 1);
  if (set.fronts.size() == 1) {
    CHECK(set.fronts[0].central_pa_deg == front.central_pa_deg);
    CHECK(set.fronts[0].onset_frame == front.onset_frame);
    CHECK(set.fronts[0].track.size() == front.track.size());
  }
  MESSAGE(name << ": central PA " << front.central_pa_deg << " (truth " << truth.central_pa_deg << " over "
               << truth.width_deg << "°, apex " << apex_pa << ", outermost "
               << front.outermost_pa_deg << "), span " << front.pa_from_deg << "→" << front.pa_to_deg << " (truth "
               << from << "→" << to << "), onset " << front.onset_frame << " (truth " << truth_onset
               << "), track worst " << worst << " R☉ over " << compared);
}

}  // namespace

TEST_CASE("front: finds the CME, its span, onset and track on synthetic events") {
  SUBCASE("toward the limb") { check_event("front_limb", make_shell(-10, 5, 900, 20)); }
  SUBCASE("faster, tilted, southward") { check_event("front_fast", make_shell(20, -15, 1400, -45)); }
  SUBCASE("slow, off the ecliptic") {
    Shell shell = make_shell(-30, 25, 600, 60);
    shell.height = 1.5;
    check_event("front_slow", shell);
  }
  SUBCASE("wide and fast") {
    Shell shell = make_shell(-40, -5, 2000, 0);
    shell.half_angle = 40;
    shell.height = 1.0;
    // Compared at the track's own PA, the 2000 km/s track holds the 0.3 R☉ of the others
    // (0.12 R☉ measured with GCC); against the edge at the apex PA, 10° away, it did not.
    check_event("front_wide", shell);
  }
}

TEST_CASE("front: a CME heading north spans the 0/360 seam") {
  const Shell north = make_shell(-55, 70, 1000, 90);
  check_event("front_north", north);
  // The span itself runs through north: it starts west of 360 and ends east of 0.
  const Synth s = synth_and_difference("front_north_span", north);
  const auto front = occulta::imaging::find_front(s.running);
  REQUIRE(front.found);
  CHECK(front.pa_from_deg > 300.0);
  CHECK(front.pa_to_deg < 60.0);
}

TEST_CASE("front: a missing block in one frame does not break the detection") {
  Shell shell = make_shell(-10, 5, 900, 20);
  shell.extra = R"(, "missing_blocks": [{"view": "one", "frame": 5, "x": 100, "y": 55, "width": 40, "height": 40}])";
  check_event("front_missing", shell);
}

TEST_CASE("front: a planted front in 16 frames of 720 PA × 400 heights of pure noise is found at its PA") {
  // Gaussian noise in σ with a front 30° wide moving out 0.6 R☉ per frame (planted, so the
  // whole analysis runs, tracking included).
  occulta::imaging::PolarSequence s;
  s.polar.pa_step_deg = 0.5;
  s.polar.pa_count = 720;
  s.polar.height_min_rs = 2.5;
  s.polar.height_step_rs = 0.03;
  s.polar.height_count = 400;
  cv::RNG rng(7);
  for (int k = 0; k < 16; ++k) {
    cv::Mat f(400, 720, CV_32FC1);
    rng.fill(f, cv::RNG::NORMAL, 0.0, 1.0);
    const int front_row = 20 + k * 20;
    if (front_row < 390) f(cv::Rect(100, std::max(0, front_row - 15), 60, 15)) += 8.0f;
    s.frames.push_back(f);
    s.utc_s.push_back(1.0e9 + 600.0 * k);
  }
  // Its cost is measured by tests/bench/measure_bench, not here (no timed tests).
  const auto front = occulta::imaging::find_front(s);
  REQUIRE(front.found);
  CHECK(pa_distance(front.central_pa_deg, 65.0) <= 1.0);  // columns 100–159 → PA 50–79.5
}

TEST_CASE("front: no detection on quiet sequences") {
  // Noise, K and F corona, cosmic rays and jitter only: the shell is empty (density 0).
  // (A shell parked below the occulter can no longer be written: the scenario reader keeps
  // apex heights within 1–300 R☉ and speeds within 50–5000 km/s.)
  for (int seed = 1; seed <= 10; ++seed) {
    CAPTURE(seed);
    Shell quiet = make_shell(-10, 5, 300, 20);
    quiet.seed = 100 + seed;
    quiet.cosmic_rays = 12;
    quiet.density = 0.0;
    const Synth s = synth_and_difference("front_quiet", quiet);
    const auto front = occulta::imaging::find_front(s.running);
    if (front.found)
      MESSAGE("quiet " << seed << ": found PA " << front.central_pa_deg << " width " << front.width_deg << " frames "
                       << front.onset_frame << "–" << front.last_frame);
    CHECK_FALSE(front.found);
    CHECK(front.why_not.rfind("no CME found", 0) == 0);
    CHECK(front.track.empty());
    // Nor among the weaker chains find_fronts goes on to.
    const auto set = occulta::imaging::find_fronts(s.running);
    CHECK(set.fronts.empty());
    CHECK(set.why_none.rfind("no CME found", 0) == 0);
  }
}

TEST_CASE("front: edges at the field stop, at a data gap or behind the occulter are censored, not measured") {
  // Issue 11: a front that runs out of the field must add no heights pinned at the stop.
  // Planted: a band 15 rows thick, 8σ, moving out 26 rows a frame through a field of 200
  // rows with no data above row 179 (the field stop; the finder examines rows up to 175,
  // 0.2 R☉ below it), and a missing block over rows 118–140 in frame 4 (a data gap). Frames where the band's outer side lies beyond the
  // last row with data, or runs into the gap, must be counted, and no point may come
  // from them; every other frame gives its edge within a row of the planted one.
  occulta::imaging::PolarSequence s;
  s.polar.pa_step_deg = 1.0;
  s.polar.pa_count = 360;
  s.polar.height_min_rs = 2.5;
  s.polar.height_step_rs = 0.06;
  s.polar.height_count = 200;
  constexpr int kStopRow = 180;
  for (int k = 0; k < 10; ++k) {
    cv::Mat f(200, 360, CV_32FC1, cv::Scalar(0.0f));
    const int top = 20 + 26 * k;  // the band covers rows top − 15 … top − 1
    if (top - 15 < 200) f(cv::Rect(40, std::max(0, top - 15), 40, std::min(top, 200) - std::max(0, top - 15))) = 8.0f;
    f.rowRange(kStopRow, 200).setTo(std::numeric_limits<float>::quiet_NaN());
    if (k == 4) f(cv::Rect(0, 118, 360, 23)).setTo(std::numeric_limits<float>::quiet_NaN());
    s.frames.push_back(f);
    s.utc_s.push_back(1.0e9 + 600.0 * k);
  }
  occulta::imaging::TrackCensoring censored;
  const auto track = occulta::imaging::follow_track(s, 60.0, 0, {}, &censored);
  CAPTURE(censored.at_field_stop);
  CAPTURE(censored.at_data_gap);
  // Frames 0–5 have their band's top (row 20 + 26k) inside the field, except frame 4's
  // (row 124, in the gap); frame 6's band (rows 161–175) runs up to the last examined row
  // without falling, and from frame 7 on the band lies beyond it: 4 frames at the stop.
  CHECK(censored.at_data_gap == 1);
  CHECK(censored.at_field_stop == 4);
  CHECK(track.size() == 5);
  for (const auto& p : track) {
    CAPTURE(p.frame);
    CHECK(p.frame != 4);
    CHECK(p.frame <= 5);
    const double planted_rs = s.polar.height_rs(20 + 26 * p.frame);
    CHECK(std::abs(p.height_rs - planted_rs) <= 1.0 * s.polar.height_step_rs);
  }
  // The analyst's points obey the same rule.
  std::string why;
  CHECK(occulta::imaging::height_measurable(s, 2, 60.0, s.polar.height_rs(70), 0.1, why));
  CHECK_FALSE(occulta::imaging::height_measurable(s, 2, 60.0, s.polar.height_rs(179), 0.1, why));
  CHECK(why == "at the field stop");
  CHECK_FALSE(occulta::imaging::height_measurable(s, 4, 60.0, s.polar.height_rs(117), 0.1, why));
  CHECK(why == "at a data gap");
  CHECK_FALSE(occulta::imaging::height_measurable(s, 2, 60.0, 2.0, 0.1, why));
  CHECK(why == "behind the occulter");
}
