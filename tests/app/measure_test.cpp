// `occulta measure` end to end on synthetic events of known truth (occulta synth): where
// the CME is, how fast its leading edge moves on the sky, when it started; quiet
// sequences; unreadable views; the analyst's track; every result against the schema.
#include <cmath>
#include <fstream>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "fit/truth.hpp"
#include "imaging/front.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

struct Event {
  double lon, lat, tilt, half_angle, kappa, speed, accel, density, read_noise;
  std::uint64_t seed;
};

std::string scenario(const Event& e) {
  char text[2048];
  std::snprintf(text, sizeof text, R"({
    "id": "measure-event", "start": "2031-07-09T03:00:00", "cadence_s": 600, "frames": 10, "exposure_s": 6,
    "image": {"size_px": 160, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [{"name": "left", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.97, "roll_deg": 3},
                  {"name": "right", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01}],
    "shell": {"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": %g, "aspect_ratio": %g,
              "apex": {"time": "2031-07-09T03:00:00", "height_rs": 2.0, "speed_km_s": %g, "accel_m_s2": %g},
              "density_cm3": %g},
    "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": %g},
    "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": %llu
  })", e.lon, e.lat, e.tilt, e.half_angle, e.kappa, e.speed, e.accel, e.density, e.read_noise,
                static_cast<unsigned long long>(e.seed));
  return text;
}

struct Run {
  fs::path frames, out;
  json result, truth;
  int exit_code;
};

Run synth_and_measure(const std::string& name, const std::string& text, const std::string& extra = "") {
  Run r;
  const fs::path dir = occulta::test::synthesize_event(name, text);
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  r.frames = dir / "frames";
  r.out = dir / "result";
  const auto measured = run_command(bin + " measure --quiet " + shell_quote((r.frames / "measure-event.event.json").string()) +
                                    " --out " + shell_quote(r.out.string()) + extra);
  INFO(measured.output);
  r.exit_code = measured.exit_code;
  r.result = occulta::fit::read_json_file(r.out / "result.json");
  r.truth = occulta::fit::read_json_file(r.frames / "measure-event.truth.json");
  // Every result against the project's schema, by the reference validator (Debian's
  // python3-jsonschema, JSON Schema 2020-12).
  const auto valid = occulta::test::run_python(
      "tests/external/validate_schema.py",
      shell_quote(occulta::test::source_path("schemas/result.schema.json").string()) + " " +
          shell_quote((r.out / "result.json").string()));
  CHECK_MESSAGE(valid.exit_code == 0, valid.output);
  return r;
}

}  // namespace

TEST_CASE("measure: central PA, sky speed and onset of synthetic events against their truth") {
  // The reference is the truth file of `occulta synth` — our own forward model (the shell
  // it renders, re-projected by fit/truth.hpp view_truth), not an outside source; the
  // tolerances are issue 5's: central PA within 5°, sky speed within 7 %, onset within one
  // cadence (600 s). The truth counts the heights the front finder examines: the occulter
  // edge + its inner margin to the field stop − its outer margin (imaging::FrontOptions).
  // Directions across the disc of both views, 300–2000 km/s, narrow and wide shells, two
  // noise levels, one accelerating event (the 7th).
  const std::vector<Event> events = {
      {-15, 5, 20, 25, 0.30, 900, 0, 5e5, 3, 1},     {20, -20, -40, 30, 0.35, 1400, 0, 5e5, 3, 2},
      {-40, 25, 60, 15, 0.25, 600, 0, 8e5, 3, 3},    {0, -30, 10, 45, 0.40, 1100, 0, 5e5, 10, 4},
      {-25, 10, -60, 20, 0.30, 2000, 0, 4e5, 3, 5},  {10, 15, 35, 35, 0.30, 400, 0, 1.2e6, 3, 6},
      {-10, -10, 0, 25, 0.20, 700, 60, 6e5, 3, 7},   {15, 30, -20, 30, 0.35, 1700, 0, 5e5, 10, 8},
  };
  const occulta::imaging::FrontOptions finder;
  const double lo = 2.5 + finder.inner_margin_rs, hi = 14.5 - finder.outer_margin_rs;  // the scenario's occulter_rs
  constexpr double kCadenceS = 600.0;
  int case_index = 0, compared = 0, accelerating_compared = 0;
  for (const Event& e : events) {
    ++case_index;
    CAPTURE(case_index);
    const Run r = synth_and_measure("measure_truth", scenario(e));
    // Issue 11: a view that sees no CME while another does makes the result partial, and
    // is named among the problems; otherwise the result is ok. Exit 0 only when nothing is
    // reported (README "Exit codes").
    bool all_found = true;
    for (const auto& v : r.result["views"]) all_found = all_found && v["found"] == true;
    CHECK(r.exit_code == (r.result["problems"].empty() ? 0 : 1));
    CHECK(r.result["status"] == (all_found ? "ok" : "partial"));
    if (!all_found) CHECK(r.result["problems"].dump().find("sees no CME while another view does") != std::string::npos);
    for (const auto& v : r.result["views"]) {
      const std::string name = v["name"].get<std::string>();
      CAPTURE(name);
      const occulta::fit::ViewTruth t = occulta::fit::view_truth(r.truth, name, lo, hi);
      if (t.frames_in_field < 4) continue;  // the edge crosses the field too briefly to measure
      REQUIRE(v["found"] == true);
      ++compared;
      accelerating_compared += t.accelerating ? 1 : 0;

      // Central PA within 5° of the truth's: the PA of the centroid of the sky the front
      // swept through in the field, measured on the detected front, true on the shell's outline.
      const double pa = v["central_pa_deg"].get<double>();
      const double pa_error = std::remainder(pa - t.central_pa_deg, 360.0);
      CAPTURE(pa);
      CAPTURE(t.central_pa_deg);
      CHECK(std::abs(pa_error) <= 5.0);

      // Sky-plane speed of the leading edge within 7 % of the truth's (a straight line
      // through the true sky-plane leading edge over the same heights).
      CHECK(v["sky_speed_km_s"].get<double>() == doctest::Approx(t.sky_speed_km_s).epsilon(0.07));

      // Onset, 1: the kinematic fit's time at 1 R☉ (the model AICc chooses) within one
      // cadence of the truth's time at 1 R☉ by the truth's own law (fit/truth.hpp: a
      // quadratic for the accelerating event). For the accelerating event the track's
      // 70 min cannot resolve 60 m/s² (0.87 of it on the sky) against its scatter, so AICc
      // keeps the straight line, whose extrapolation is late by most of a cadence
      // (measured +470 to +520 s with GCC, +450 to +545 s with clang; the straight lines
      // of the other events are early by 25–450 s): one cadence holds here, at this cadence
      // and acceleration, with little margin; a
      // stronger or longer-extrapolated acceleration would miss it — the sigma
      // (onset_sigma_s) of the straight line does not cover that model error.
      REQUIRE(v["onset_time"].is_string());
      const double onset = occulta::imaging::utc_seconds_from_iso(v["onset_time"].get<std::string>());
      CAPTURE(t.sky_onset_utc_s);
      CHECK(std::abs(onset - t.sky_onset_utc_s) <= kCadenceS);

      // Onset, 2: the first frame where the CME is seen, within one cadence of the first
      // frame whose true leading edge is above `lo`.
      REQUIRE(v["first_seen_time"].is_string());
      const double seen = occulta::imaging::utc_seconds_from_iso(v["first_seen_time"].get<std::string>());
      CHECK(std::abs(seen - t.first_visible_utc_s) <= kCadenceS);
      MESSAGE("event " << case_index << " " << name << ": central PA error " << pa_error << "°, speed error "
                       << 100.0 * (v["sky_speed_km_s"].get<double>() / t.sky_speed_km_s - 1.0) << " %, 1 R☉ onset error "
                       << onset - t.sky_onset_utc_s << " s (" << v["kinematic_model"].get<std::string>()
                       << "), first seen error " << seen - t.first_visible_utc_s << " s");
    }
  }
  // The issue asks for ≥ 8 events; each has at least one view that measures it.
  CHECK(compared >= 8);
  CHECK(accelerating_compared >= 1);
}

TEST_CASE("measure: quiet sequences find no CME and say so") {
  for (std::uint64_t seed = 101; seed <= 110; ++seed) {
    CAPTURE(seed);
    const Run r = synth_and_measure("measure_quiet", scenario({-15, 5, 20, 25, 0.3, 900, 0, 0.0, 3, seed}));
    CHECK(r.result["status"] == "ok");
    for (const auto& v : r.result["views"]) CHECK(v["found"] == false);
    bool said = false;
    for (const auto& p : r.result["problems"]) said = said || p.get<std::string>().find(": no CME found") != std::string::npos;
    CHECK(said);
  }
}

TEST_CASE("measure: an unreadable view makes the result partial; the analyst's track replaces the automatic one") {
  Run r = synth_and_measure("measure_partial", scenario({-15, 5, 20, 25, 0.3, 900, 0, 5e5, 3, 21}));
  json event = occulta::fit::read_json_file(r.frames / "measure-event.event.json");
  event["views"][1]["files"] = json::array({"missing/*.fits"});
  std::ofstream(r.frames / "broken.event.json") << event.dump();
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  const auto partial = run_command(bin + " measure --quiet " + shell_quote((r.frames / "broken.event.json").string()) +
                                   " --out " + shell_quote((r.out.parent_path() / "partial").string()));
  CHECK(partial.exit_code == 1);
  const json p = occulta::fit::read_json_file(r.out.parent_path() / "partial/result.json");
  CHECK(p["status"] == "partial");
  CHECK(p["views"].size() == 1);
  CHECK(p["problems"][0].get<std::string>().find("view right: no files match missing/*.fits") != std::string::npos);

  // An analyst's points for view "left": a straight line at 500 km/s on the sky.
  json points = json::array();
  const double t0 = occulta::imaging::utc_seconds_from_iso("2031-07-09T03:30:00");
  for (int i = 0; i < 5; ++i)
    points.push_back({{"view", "left"}, {"time", occulta::imaging::iso_from_utc_seconds(t0 + 600.0 * i)},
                      {"pa_deg", 280.0}, {"height_rs", 4.0 + 500.0 * 600.0 * i / 695700.0}, {"origin", "analyst"}});
  std::ofstream(r.out.parent_path() / "analyst.track.json")
      << json{{"schema", "occulta.track/1"}, {"event_id", "measure-event"}, {"points", points}}.dump();
  const auto tracked = run_command(bin + " measure --quiet " + shell_quote((r.frames / "measure-event.event.json").string()) +
                                   " --out " + shell_quote((r.out.parent_path() / "tracked").string()) + " --track " +
                                   shell_quote((r.out.parent_path() / "analyst.track.json").string()));
  CHECK(tracked.exit_code == 0);
  const json t = occulta::fit::read_json_file(r.out.parent_path() / "tracked/result.json");
  for (const auto& v : t["views"]) {
    if (v["name"] != "left") {
      CHECK(v["track_origin"] == "auto");
      continue;
    }
    CHECK(v["track_origin"] == "analyst");
    CHECK(v["track_points"] == 5);
    CHECK(v["sky_speed_km_s"].get<double>() == doctest::Approx(500.0).epsilon(1e-6));
  }
}


TEST_CASE("measure: a fast CME that leaves the field keeps its speed; a failed shell fit is a problem") {
  // Issue 11: at 2300 km/s the front reaches the field stop within the sequence. Frames
  // where its edge lies at or beyond the stop are censored, not measured, so the sky speed
  // stays within the issue's 7 % of the truth (fit/truth.hpp view_truth, as above) in
  // every view, and no acceleration beyond its own 2σ appears when the truth has none.
  const Run r = synth_and_measure("measure_fast", scenario({-15, 5, 20, 25, 0.30, 2300, 0, 5e5, 3, 31}));
  const occulta::imaging::FrontOptions finder;
  const double lo = 2.5 + finder.inner_margin_rs, hi = 14.5 - finder.outer_margin_rs;
  int compared = 0, censored = 0;
  for (const auto& v : r.result["views"]) {
    const std::string name = v["name"].get<std::string>();
    CAPTURE(name);
    const occulta::fit::ViewTruth t = occulta::fit::view_truth(r.truth, name, lo, hi);
    if (t.frames_in_field < 4) continue;
    REQUIRE(v["found"] == true);
    ++compared;
    censored += v["censored_points"]["at_field_stop"].get<int>();
    CAPTURE(v.dump());
    CHECK(v["sky_speed_km_s"].get<double>() == doctest::Approx(t.sky_speed_km_s).epsilon(0.07));
    if (v["kinematic_model"] == "quadratic")
      CHECK(std::abs(v["sky_accel_m_s2"].get<double>()) <= 2.0 * v["sky_accel_m_s2_sigma"].get<double>());
    CHECK(v["law_ref_time"].is_string());
  }
  CHECK(compared >= 1);
  CHECK(censored >= 1);  // the front did leave the field, and those frames were not measured

  // Issue 13: an analyst's points all at one time give the shell no speed: its
  // covariance is singular. The shell is then "partial", named among the problems, and
  // no arrival is computed from it.
  json points = json::array();
  const double t0 = occulta::imaging::utc_seconds_from_iso("2031-07-09T03:20:00");
  for (const char* view : {"left", "right"})
    for (int i = 0; i < 6; ++i)
      points.push_back({{"view", view}, {"time", occulta::imaging::iso_from_utc_seconds(t0)},
                        {"pa_deg", (std::string(view) == "left" ? 250.0 : 80.0) + 5.0 * i},
                        {"height_rs", 5.0 + 0.2 * i}, {"origin", "analyst"}});
  std::ofstream(r.out.parent_path() / "one_time.track.json") << json{{"points", points}}.dump();
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  const fs::path out = r.out.parent_path() / "one_time";
  const auto run = run_command(bin + " measure --quiet " + shell_quote((r.frames / "measure-event.event.json").string()) +
                               " --out " + shell_quote(out.string()) + " --track " +
                               shell_quote((r.out.parent_path() / "one_time.track.json").string()));
  INFO(run.output);
  const json result = occulta::fit::read_json_file(out / "result.json");
  CHECK(run.exit_code == 1);
  CHECK(result["status"] == "partial");
  CHECK_FALSE(result.contains("arrival"));
  if (result["shell"].is_object()) {
    CHECK(result["shell"]["status"] == "partial");
    CHECK(result["problems"].dump().find("shell fit failed") != std::string::npos);
    CHECK(result.contains("arrival_withheld"));
  } else {
    CHECK(result["problems"].dump().find("no shell fit") != std::string::npos);
  }
}
