// The shell fit end to end: `occulta synth` renders a shell of known truth into two or
// three views, `occulta measure` finds the CME in each and fits one shell over all of
// them. The reference is the truth file of synth — our own forward model (Thomson
// scattering of the shell's sheath, fit/thomson), not an outside source; the geometry
// (face-on width 2(α + δ), δ = asin κ) is Thernisien (2011, ApJS 194, 33). Tolerances are
// the issue's: longitude and latitude within 4°, apex speed within 7 %, face-on width
// within 8°.
#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/track.hpp"
#include "fit/json_file.hpp"
#include "fit/shell.hpp"
#include "fit/truth.hpp"
#include "imaging/front.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

struct Observer {
  const char* name;
  double lon, lat, dist_au;
};

struct Config {
  const char* what;
  double lon, lat, tilt, half_angle, kappa, speed, accel;
  std::vector<Observer> observers;
};

// Frames every cadence so that about ten of them show the apex in the 2.5–14.5 R☉ field.
std::string scenario(const Config& c, unsigned seed) {
  const double cadence = std::round(12.0 * 695700.0 / c.speed / 10.0);
  std::string observers;
  for (const Observer& o : c.observers) {
    char one[200];
    std::snprintf(one, sizeof one, R"(%s{"name": "%s", "lon_deg": %g, "lat_deg": %g, "dist_au": %g})",
                  observers.empty() ? "" : ", ", o.name, o.lon, o.lat, o.dist_au);
    observers += one;
  }
  char text[3000];
  std::snprintf(text, sizeof text, R"({
    "id": "shell-event", "start": "2031-09-21T12:00:00", "cadence_s": %g, "frames": 12, "exposure_s": 6,
    "image": {"size_px": 192, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [%s],
    "shell": {"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": %g, "aspect_ratio": %g,
              "apex": {"time": "2031-09-21T12:00:00", "height_rs": 2.0, "speed_km_s": %g, "accel_m_s2": %g},
              "density_cm3": 5e5},
    "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": 3},
    "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": %u
  })", cadence, observers.c_str(), c.lon, c.lat, c.tilt, c.half_angle, c.kappa, c.speed, c.accel, seed);
  return text;
}

double angle_between_deg(double a, double b) { return std::abs(std::remainder(a - b, 360.0)); }

}  // namespace

TEST_CASE("shell measure: six synthetic configurations give the true direction, apex speed and face-on width") {
  // The issue's range: one heading almost toward an observer (a halo there), apex speeds
  // 400–2500 km/s, aspect ratios 0.2–0.5, half-angles 10–50°, tilts ±60°, two and three
  // views, image noise (photon and read noise, cosmic rays, pointing jitter).
  // Known bias: the rendered sheath has a thickness (σ = 0.1 × the apex cross-section
  // radius, fit/density.hpp) and the fit sees its bright rim, so face-on widths come out
  // 3–8° wide — more for fat shells (κ → 0.5) and most where α + δ nears 90°: a shell of
  // α = 50°, κ = 0.5 (face-on 160°) measures ~169°, beyond the 8°, and is not among these
  // six (README "Limits"). Direction and speed are unaffected.
  const std::vector<Config> configs = {
      {"tilted, two views 86 deg apart", -12, 6, 30, 26, 0.33, 950, 0, {{"a", -62, 1.5, 0.97}, {"b", 24, -2, 1.01}}},
      {"toward the first observer, three views", 6, -8, -45, 35, 0.40, 1500, 0,
       {{"a", 0, -3, 0.99}, {"b", -70, 2, 0.96}, {"c", 55, 4, 1.03}}},
      {"fast and narrow", 80, 12, 60, 10, 0.20, 2500, 0, {{"a", -5, 1, 0.98}, {"b", 140, -3, 0.95}}},
      {"slow and wide, three views", -100, 20, -60, 50, 0.35, 400, 0,
       {{"a", -20, 0, 1.0}, {"b", -150, 5, 0.97}, {"c", 60, -5, 1.02}}},
      {"thin, untilted, southern", 35, -25, 0, 30, 0.20, 1200, 0, {{"a", -40, 0, 1.0}, {"b", 80, 2, 0.99}}},
      {"decelerating, fat", -40, 15, 45, 20, 0.50, 1800, -40, {{"a", 10, -2, 1.0}, {"b", -95, 3, 0.96}}},
  };
  unsigned seed = 40;
  for (const Config& c : configs) {
    const std::string what = c.what;
    CAPTURE(what);
    const fs::path dir = occulta::test::synthesize_event("shell_measure_" + std::to_string(seed - 39), scenario(c, seed));
    ++seed;
    const fs::path out = dir / "result";
    const auto measured = run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure --quiet " +
                                      shell_quote((dir / "frames" / "shell-event.event.json").string()) + " --out " +
                                      shell_quote(out.string()));
    INFO(measured.output);
    const json result = occulta::fit::read_json_file(out / "result.json");
    REQUIRE(result["shell"].is_object());
    const json& s = result["shell"];
    CAPTURE(s.dump());
    CHECK(s["views"].size() == c.observers.size());
    CHECK(angle_between_deg(s["lon_deg"].get<double>(), c.lon) <= 4.0);
    CHECK(std::abs(s["lat_deg"].get<double>() - c.lat) <= 4.0);
    // The truth's apex speed at the fit's reference time (its law is v + a (t − t₀)).
    const double t0 = occulta::imaging::utc_seconds_from_iso("2031-09-21T12:00:00");
    const double t_ref = occulta::imaging::utc_seconds_from_iso(s["ref_time"].get<std::string>());
    const double speed = c.speed + 1e-3 * c.accel * (t_ref - t0);
    CHECK(s["speed_km_s"].get<double>() == doctest::Approx(speed).epsilon(0.07));
    const double face_on = 2.0 * (c.half_angle + std::asin(c.kappa) * 180.0 / M_PI);
    CHECK(std::abs(s["face_on_width_deg"].get<double>() - face_on) <= 8.0);
    // Every shell key has its σ (the covariance of the fit), and the boundary block is there.
    for (const char* key : {"lon_deg", "lat_deg", "tilt_deg", "half_angle_deg", "aspect_ratio", "apex_height_rs",
                            "speed_km_s", "accel_m_s2", "face_on_width_deg", "edge_on_width_deg"}) {
      CAPTURE(key);
      CHECK(s["sigma"][key].is_number());
    }
    CHECK(result["boundary"]["height_rs"] == 21.5);
    for (const auto& o : c.observers) CHECK(fs::exists(out / o.name / "shell.png"));
    const auto valid = occulta::test::run_python(
        "tests/external/validate_schema.py",
        shell_quote(occulta::test::source_path("schemas/result.schema.json").string()) + " " +
            shell_quote((out / "result.json").string()));
    CHECK_MESSAGE(valid.exit_code == 0, valid.output);
    MESSAGE(what << ": lon " << s["lon_deg"].get<double>() << " (" << c.lon << "), lat " << s["lat_deg"].get<double>()
                 << " (" << c.lat << "), speed " << s["speed_km_s"].get<double>() << " (" << speed << "), face-on "
                 << s["face_on_width_deg"].get<double>() << " (" << face_on << ")");
  }
}

TEST_CASE("shell measure: the reported uncertainty covers the truth over 20 noisy realisations") {
  // The issue's test of honesty, end to end: the same event rendered 20 times with new
  // noise, cosmic rays and jitter (seeds), measured each time; the truth must lie within
  // 2σ of the fitted speed and longitude in at least 85 % of them (17 of 20). σ is the
  // fit's covariance × its design effect, widened by the rim/outer-edge systematic
  // (fit/shell_fit.hpp merge_edge_fits).
  const Config c{"tilted, two views", -12, 6, 30, 26, 0.33, 950, 0, {{"a", -62, 1.5, 0.97}, {"b", 24, -2, 1.01}}};
  // Each view's sky-plane speed too (issue 11): the truth is fit/truth.hpp view_truth's
  // straight line through the true sky-plane leading edge over the heights the finder
  // examines, as in measure_test.cpp.
  const occulta::imaging::FrontOptions finder;
  // Under the sanitizers (CI's second pass) 4 realisations check the code path's memory;
  // the statistics need all 20 and are checked in the Release pass.
  const bool statistics = !occulta::test::sanitized_build();
  const unsigned realisations = statistics ? 20 : 4;
  int speed_in = 0, lon_in = 0, runs = 0, sky_in = 0, sky_compared = 0;
  for (unsigned seed = 500; seed < 500 + realisations; ++seed) {
    std::string text = scenario(c, seed);
    const auto at = text.find("\"size_px\": 192");
    REQUIRE(at != std::string::npos);
    text.replace(at, 14, "\"size_px\": 128");  // smaller frames: 20 events stay quick
    const fs::path dir = occulta::test::synthesize_event("shell_honesty", text);
    const fs::path out = dir / "result";
    run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure --quiet " +
                shell_quote((dir / "frames" / "shell-event.event.json").string()) + " --out " + shell_quote(out.string()));
    const json result = occulta::fit::read_json_file(out / "result.json");
    REQUIRE(result["shell"].is_object());
    const json& s = result["shell"];
    ++runs;
    speed_in += std::abs(s["speed_km_s"].get<double>() - c.speed) <= 2.0 * s["sigma"]["speed_km_s"].get<double>();
    lon_in += angle_between_deg(s["lon_deg"].get<double>(), c.lon) <= 2.0 * s["sigma"]["lon_deg"].get<double>();
    const json truth = occulta::fit::read_json_file(dir / "frames" / "shell-event.truth.json");
    for (const auto& v : result["views"]) {
      const occulta::fit::ViewTruth t = occulta::fit::view_truth(truth, v["name"].get<std::string>(),
                                                                 2.5 + finder.inner_margin_rs, 14.5 - finder.outer_margin_rs);
      if (t.frames_in_field < 4 || !v["sky_speed_km_s_sigma"].is_number()) continue;
      ++sky_compared;
      const double error = v["sky_speed_km_s"].get<double>() - t.sky_speed_km_s;
      sky_in += std::abs(error) <= 2.0 * v["sky_speed_km_s_sigma"].get<double>();
      MESSAGE("seed " << seed << " " << v["name"].get<std::string>() << ": sky speed error " << error << " ± "
                      << v["sky_speed_km_s_sigma"].get<double>() << " km/s");
    }
  }
  CAPTURE(speed_in);
  CAPTURE(lon_in);
  CAPTURE(sky_in);
  CAPTURE(sky_compared);
  CHECK(runs == int(realisations));
  if (!statistics) return;
  CHECK(speed_in >= 17);
  CHECK(lon_in >= 17);
  CHECK(sky_compared >= 36);  // both views, in nearly every realisation
  CHECK(sky_in >= 0.85 * sky_compared);
}

namespace {

// The truth's shell at one of its frames (the truth file's apex height at that time).
occulta::fit::ShellParams truth_shell_at(const json& truth_frame, const Config& c) {
  const double r = M_PI / 180.0;
  return {c.lon * r, c.lat * r, c.tilt * r, truth_frame["apex_height_rs"].get<double>(), c.half_angle * r, c.kappa};
}

}  // namespace

TEST_CASE("shell measure: an analyst's sparse points replace the automatic ones and give the true shell") {
  // What an analyst marks in the viewer: five points along each view's front in every
  // other frame, 0.2 R☉ off the true outline (Gaussian, seeded) — the outline from the
  // truth's own shell projected into the view (fit/shell sky_outline, the largest sky
  // height per PA). Tolerances as above (the issue's).
  const Config c{"tilted, two views", -12, 6, 30, 26, 0.33, 950, 0, {{"a", -62, 1.5, 0.97}, {"b", 24, -2, 1.01}}};
  const fs::path dir = occulta::test::synthesize_event("shell_analyst", scenario(c, 77));
  const json truth = occulta::fit::read_json_file(dir / "frames" / "shell-event.truth.json");
  occulta::fit::Track track{"shell-event", {}};
  std::mt19937 rng(5);
  std::normal_distribution<double> noise(0.0, 0.2);
  for (const Observer& o : c.observers) {
    const occulta::imaging::Observer observer =
        occulta::imaging::observer_from_degrees(o.lon, o.lat, o.dist_au * 149597870.7);
    for (std::size_t k = 1; k < truth["frames"].size(); k += 2) {
      const json& frame = truth["frames"][k];
      const occulta::fit::ShellParams shell = truth_shell_at(frame, c);
      const auto outline = occulta::fit::sky_outline(occulta::fit::make_mesh(shell, {24, 120, 72}), shell, observer, 1.0);
      std::vector<std::pair<double, double>> seen;  // (PA, height) inside the field
      for (std::size_t b = 0; b < outline.max_height_rs.size(); ++b)
        if (outline.max_height_rs[b] >= 3.0 && outline.max_height_rs[b] <= 14.0) seen.emplace_back(b + 0.5, outline.max_height_rs[b]);
      if (seen.size() < 10) continue;
      for (int p = 0; p < 5; ++p) {
        const auto& [pa, h] = seen[(seen.size() - 1) * static_cast<std::size_t>(p) / 4];
        track.points.push_back({o.name, occulta::imaging::utc_seconds_from_iso(frame["time"].get<std::string>()), pa,
                                h + noise(rng), "analyst"});
      }
    }
  }
  REQUIRE(track.points.size() >= 40);
  occulta::fit::write_track(dir / "analyst.track.json", track);
  const fs::path out = dir / "result";
  const auto measured = run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure --quiet " +
                                    shell_quote((dir / "frames" / "shell-event.event.json").string()) + " --track " +
                                    shell_quote((dir / "analyst.track.json").string()) + " --out " + shell_quote(out.string()));
  INFO(measured.output);
  const json result = occulta::fit::read_json_file(out / "result.json");
  REQUIRE(result["shell"].is_object());
  const json& s = result["shell"];
  CAPTURE(s.dump());
  // Every click, no automatic points — but clicks where an edge cannot be measured (at
  // the field stop or behind the occulter) are censored like the automatic track's
  // (issue 11), and counted.
  int censored = 0;
  for (const auto& v : result["views"]) {
    CHECK(v["track_origin"] == "analyst");
    for (const auto& [why, count] : v["censored_points"].items()) censored += count.get<int>();
  }
  CHECK(censored <= static_cast<int>(track.points.size()) / 10);
  CHECK(s["points_used"] == static_cast<int>(track.points.size()) - censored);
  CHECK(angle_between_deg(s["lon_deg"].get<double>(), c.lon) <= 4.0);
  CHECK(std::abs(s["lat_deg"].get<double>() - c.lat) <= 4.0);
  CHECK(s["speed_km_s"].get<double>() == doctest::Approx(c.speed).epsilon(0.07));
  const double face_on = 2.0 * (c.half_angle + std::asin(c.kappa) * 180.0 / M_PI);
  CHECK(std::abs(s["face_on_width_deg"].get<double>() - face_on) <= 8.0);
  for (const auto& o : c.observers) CHECK(fs::exists(out / o.name / "shell.png"));
}

TEST_CASE("shell measure: one view takes its direction from the event's source region") {
  // DESIGN.md: the event's `source` fixes the direction of a one-view fit. The source
  // given is the truth's direction; speed along it within the issue's 7 %.
  const Config c{"one view", -12, 6, 30, 26, 0.33, 950, 0, {{"a", -62, 1.5, 0.97}}};
  const fs::path dir = occulta::test::synthesize_event("shell_one_view", scenario(c, 78));
  json event = occulta::fit::read_json_file(dir / "frames" / "shell-event.event.json");
  event["source"] = {{"lon_deg", c.lon}, {"lat_deg", c.lat}};
  occulta::fit::write_json_file(dir / "frames" / "sourced.event.json", event);
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  const fs::path out = dir / "result";
  run_command(bin + " measure --quiet " + shell_quote((dir / "frames" / "sourced.event.json").string()) + " --out " +
              shell_quote(out.string()));
  const json s = occulta::fit::read_json_file(out / "result.json")["shell"];
  REQUIRE(s.is_object());
  CAPTURE(s.dump());
  CHECK(s["direction_constrained"] == true);
  CHECK(s["lon_deg"].get<double>() == doctest::Approx(c.lon));
  CHECK(s["lat_deg"].get<double>() == doctest::Approx(c.lat));
  CHECK(s["sigma"]["lon_deg"].get<double>() >= 10.0);
  CHECK(s["speed_km_s"].get<double>() == doctest::Approx(c.speed).epsilon(0.07));

  // With the source, the arrival is stated as conditional on it (issue 11).
  const json sourced = occulta::fit::read_json_file(out / "result.json");
  CHECK(sourced["shell"]["direction_basis"] == "source region");
  CHECK(sourced.contains("arrival_conditional_on"));

  // Without the source the direction is unconstrained, and the result says so: in the
  // JSON (machine-readably), the CSV and the summary, with no arrival estimate and a
  // status and exit code that are not "ok" (issue 11).
  const fs::path bare = dir / "bare";
  const auto bare_run = run_command(bin + " measure " + shell_quote((dir / "frames" / "shell-event.event.json").string()) +
                                    " --out " + shell_quote(bare.string()));
  INFO(bare_run.output);
  const json whole = occulta::fit::read_json_file(bare / "result.json");
  const json& b = whole["shell"];
  REQUIRE(b.is_object());
  CHECK(b["direction_constrained"] == false);
  CHECK(b["sigma"]["lon_deg"].get<double>() >= 60.0);
  CHECK(b["notes"].dump().find("unconstrained") != std::string::npos);
  CHECK(b["direction_basis"] == "none");
  CHECK(b["not_constrained"].dump().find("lon_deg") != std::string::npos);
  CHECK(b["not_constrained"].dump().find("face_on_width_deg") != std::string::npos);
  CHECK_FALSE(whole.contains("arrival"));
  CHECK(whole["arrival_withheld"].get<std::string>().find("not constrained") != std::string::npos);
  CHECK(whole["status"] == "partial");
  CHECK(bare_run.exit_code == 1);
  CHECK(bare_run.output.find("direction NOT CONSTRAINED") != std::string::npos);
  CHECK(bare_run.output.find("arrival: WITHHELD") != std::string::npos);
  CHECK(bare_run.output.find("true, from all views") == std::string::npos);
  const std::string csv = occulta::test::slurp(bare / "result.csv");
  const auto header_end = csv.find('\n');
  REQUIRE(header_end != std::string::npos);
  CHECK(csv.substr(0, header_end).find("shell_not_constrained") != std::string::npos);
  CHECK(csv.substr(header_end).find("lon_deg") != std::string::npos);
  CHECK(csv.substr(header_end).find("none") != std::string::npos);
  // The schema holds the new keys (Debian's python3-jsonschema, JSON Schema 2020-12).
  for (const fs::path& result : {out / "result.json", bare / "result.json"}) {
    const auto valid = occulta::test::run_python(
        "tests/external/validate_schema.py",
        shell_quote(occulta::test::source_path("schemas/result.schema.json").string()) + " " + shell_quote(result.string()));
    CHECK_MESSAGE(valid.exit_code == 0, valid.output);
  }
}

TEST_CASE("shell measure: a slow Earth-directed CME is seen from Earth, and Earth's hit probability is high") {
  // Issue 11: in a slow (350 km/s), nearly Earth-directed event, the Earth-facing view
  // must detect the CME (a faint front round the occulter), and the two-view shell must
  // give Earth a hit probability of at least 80 %. The truth is the scenario's own shell
  // (lon 0, lat 2: straight at Earth).
  const Config c{"slow, Earth-directed", 0, 2, 0, 25, 0.3, 350, 0, {{"earth", 0, 0, 0.99}, {"side", -80, -2, 0.97}}};
  std::string text = scenario(c, 5);
  const auto at = text.find("\"size_px\": 192");
  REQUIRE(at != std::string::npos);
  text.replace(at, 14, "\"size_px\": 160");
  const fs::path dir = occulta::test::synthesize_event("shell_earth_directed", text);
  const fs::path out = dir / "result";
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure --quiet " +
                               shell_quote((dir / "frames" / "shell-event.event.json").string()) + " --out " +
                               shell_quote(out.string()));
  INFO(run.output);
  const json result = occulta::fit::read_json_file(out / "result.json");
  CAPTURE(result["problems"].dump());
  for (const auto& v : result["views"]) {
    CAPTURE(v.dump());
    CHECK(v["found"] == true);
  }
  REQUIRE(result.contains("arrival"));
  bool earth = false;
  for (const auto& a : result["arrival"])
    if (a["target"] == "earth") {
      earth = true;
      CHECK(a["hit_probability"].get<double>() >= 0.80);
    }
  CHECK(earth);
  CHECK(result["status"] == "ok");
}
