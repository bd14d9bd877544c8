// `occulta measure` on windows holding more than one CME, or one CME and a bright point
// drifting across the field (issue 16; `occulta synth` scenarios of our own — the truth is
// synth's projected shell, fit/truth.hpp, our own forward model). The tolerances are the
// single-CME ones of measure_test.cpp (central PA 5°, sky speed 7 %, onset one cadence)
// and shell_measure_test.cpp (direction 4°, speed 7 %). Small frames, few frames: each
// window is measured in a few seconds.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "fit/truth.hpp"
#include "imaging/front.hpp"
#include "imaging/time.hpp"
#include "tests/app/two_cmes.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

constexpr double kCadenceS = occulta::test::kTwoCmesCadenceS;
using Cme = occulta::test::ScenarioCme;
using occulta::test::two_view_scenario;

struct Run {
  json result, truth;
  std::string stdout_text, csv;
};

Run synth_and_measure(const std::string& name, const std::string& text) {
  const fs::path dir = occulta::test::synthesize_event(name, text);
  const auto measured = run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure " +
                                    shell_quote((dir / "frames/multi.event.json").string()) + " --out " +
                                    shell_quote((dir / "result").string()) + " 2>/dev/null");
  Run r;
  r.stdout_text = measured.output;
  r.result = occulta::fit::read_json_file(dir / "result/result.json");
  r.truth = occulta::fit::read_json_file(dir / "frames/multi.truth.json");
  r.csv = occulta::test::slurp(dir / "result/result.csv");
  // Against the project's schema, by the reference validator (Debian's python3-jsonschema,
  // JSON Schema 2020-12).
  const auto valid = occulta::test::run_python(
      "tests/external/validate_schema.py", shell_quote(occulta::test::source_path("schemas/result.schema.json").string()) +
                                               " " + shell_quote((dir / "result/result.json").string()));
  CHECK_MESSAGE(valid.exit_code == 0, valid.output);
  return r;
}

// The views of `block` (the document or one of its cmes) against CME `cme` of the truth,
// as measure_test.cpp compares one CME: returns how many views were compared.
int check_views(const json& block, const json& truth, int cme) {
  const occulta::imaging::FrontOptions finder;
  const double lo = 2.5 + finder.inner_margin_rs, hi = 14.5 - finder.outer_margin_rs;
  int compared = 0;
  for (const auto& v : block["views"]) {
    const std::string name = v["name"].get<std::string>();
    CAPTURE(name);
    CAPTURE(cme);
    const occulta::fit::ViewTruth t = occulta::fit::view_truth(truth, name, lo, hi, cme);
    if (t.frames_in_field < 4) continue;
    REQUIRE(v["found"] == true);
    ++compared;
    const double pa = v["central_pa_deg"].get<double>();
    CAPTURE(pa);
    CAPTURE(t.central_pa_deg);
    CHECK(std::abs(std::remainder(pa - t.central_pa_deg, 360.0)) <= 5.0);
    CHECK(v["sky_speed_km_s"].get<double>() == doctest::Approx(t.sky_speed_km_s).epsilon(0.07));
    REQUIRE(v["onset_time"].is_string());
    const double onset = occulta::imaging::utc_seconds_from_iso(v["onset_time"].get<std::string>());
    CHECK(std::abs(onset - t.sky_onset_utc_s) <= kCadenceS);
  }
  return compared;
}

double angle_between_deg(double a, double b) { return std::abs(std::remainder(a - b, 360.0)); }

}  // namespace

TEST_CASE("measure: two CMEs in different directions at overlapping times, two views — each its own, none fused") {
  // North-east of the Sun–Earth line at 900 km/s from 12:00; south-west at 1300 km/s 30 min
  // later: both in both views' fields together from ~12:50 on.
  const std::vector<Cme> cmes{{-20, 40, 20, 900, 0}, {10, -40, -30, 1300, 30}};
  const Run r = synth_and_measure("measure_multi_apart", two_view_scenario(cmes, 10));
  INFO(r.stdout_text);
  REQUIRE(r.result.contains("cmes"));
  REQUIRE(r.result["cmes"].size() == 2);
  CHECK(r.result["primary"] == 1);  // the earliest onset, by default
  CHECK(r.result["primary_reason"].get<std::string>().find("earliest onset") != std::string::npos);
  for (int k = 0; k < 2; ++k) {
    const json& c = r.result["cmes"][std::size_t(k)];
    CAPTURE(k);
    CHECK(c["index"] == k + 1);
    CHECK(c["association"] == "views");  // both views' sightings, paired
    CHECK(check_views(c, r.truth, k) == 2);
    // Its own shell from both views, within shell_measure_test.cpp's single-CME tolerances.
    REQUIRE(c["shell"].is_object());
    const json& s = c["shell"];
    CAPTURE(s.dump());
    CHECK(s["views"].size() == 2);
    CHECK(angle_between_deg(s["lon_deg"].get<double>(), cmes[std::size_t(k)].lon) <= 4.0);
    CHECK(std::abs(s["lat_deg"].get<double>() - cmes[std::size_t(k)].lat) <= 4.0);
    CHECK(s["speed_km_s"].get<double>() == doctest::Approx(cmes[std::size_t(k)].speed).epsilon(0.07));
    // None fused: in each view, its span holds none of the other CME's central PA.
    const json& other = r.result["cmes"][std::size_t(1 - k)];
    for (std::size_t v = 0; v < 2; ++v) {
      const double from = c["views"][v]["pa_span_deg"][0].get<double>(), to = c["views"][v]["pa_span_deg"][1].get<double>();
      const double pa = other["views"][v]["central_pa_deg"].get<double>();
      CHECK(std::fmod(pa - from + 720.0, 360.0) > std::fmod(to - from + 720.0, 360.0));
    }
  }
  // The top level is the primary CME's; the summary prints a block per CME; result.csv a
  // row per CME, with its index.
  CHECK(r.result["views"] == r.result["cmes"][0]["views"]);
  CHECK(r.result["shell"] == r.result["cmes"][0]["shell"]);
  CHECK(r.stdout_text.find("CME 1 of 2") != std::string::npos);
  CHECK(r.stdout_text.find("CME 2 of 2") != std::string::npos);
  CHECK(r.csv.rfind("event_id,cme,status,", 0) == 0);
  CHECK(r.csv.find("\n\"multi\",1,") != std::string::npos);
  CHECK(r.csv.find("\n\"multi\",2,") != std::string::npos);
}

TEST_CASE("measure: a faster CME after a slower one toward the same direction — each found, paired, its own shell") {
  // tests/imaging/front_multi_test.cpp's follower: both toward Stonyhurst (−15°, +5°), 45°
  // from both views; 1200 km/s from 12:00, then 1800 km/s with its apex at 1.2 R☉ at
  // 13:00, rising through the first's wake in the same PA range of each view. 150 px, 14
  // frames: the window the README's Limits once gave as a known fault (each view found
  // two fronts from the first CME's origin and missed the second).
  const std::vector<Cme> cmes{{-15, 5, 10, 1200, 0}, {-15, 5, 10, 1800, 60}};
  const Run r = synth_and_measure("measure_multi_follow", two_view_scenario(cmes, 14, "", 150));
  INFO(r.stdout_text);
  REQUIRE(r.result.contains("cmes"));
  REQUIRE(r.result["cmes"].size() == 2);
  CHECK(r.result["status"] == "ok");
  for (int k = 0; k < 2; ++k) {
    const json& c = r.result["cmes"][std::size_t(k)];
    CAPTURE(k);
    CHECK(c["association"] == "views");
    // Each view's sighting against its own CME's truth: central PA, sky speed, and the
    // onset within one cadence (check_views).
    CHECK(check_views(c, r.truth, k) == 2);
    REQUIRE(c["shell"].is_object());
    const json& s = c["shell"];
    CAPTURE(s.dump());
    CHECK(angle_between_deg(s["lon_deg"].get<double>(), cmes[std::size_t(k)].lon) <= 4.0);
    CHECK(std::abs(s["lat_deg"].get<double>() - cmes[std::size_t(k)].lat) <= 4.0);
    CHECK(s["speed_km_s"].get<double>() == doctest::Approx(cmes[std::size_t(k)].speed).epsilon(0.07));
  }
}

TEST_CASE("measure: one CME and a bright point drifting across the field — exactly one CME, as accurate") {
  // A point of 2e-9 B☉ (as bright as the sheath's brightest pixels, our choice) crossing
  // the left view's southern sky, away from the CME's northern one.
  const std::vector<Cme> one{{-20, 40, 20, 900, 0}};
  const std::string point =
      R"(, "point_sources": [{"view": "left", "from": {"pa_deg": 150, "height_rs": 6}, "to": {"pa_deg": 200, "height_rs": 9}, "brightness_bsun": 2e-9}])";
  const Run with = synth_and_measure("measure_multi_point", two_view_scenario(one, 8, point));
  const Run without = synth_and_measure("measure_multi_no_point", two_view_scenario(one, 8));
  // One CME: the document as a one-CME window always gave it — no cmes, one csv row.
  CHECK_FALSE(with.result.contains("cmes"));
  CHECK(with.result["status"] == without.result["status"]);
  CHECK(std::count(with.csv.begin(), with.csv.end(), '\n') == 2);
  CHECK(check_views(with.result, with.truth, 0) == 2);
  // As accurate as without the point: the same central PA within 1°, speed within 1 %.
  for (std::size_t v = 0; v < 2; ++v) {
    CAPTURE(v);
    CHECK(angle_between_deg(with.result["views"][v]["central_pa_deg"].get<double>(),
                            without.result["views"][v]["central_pa_deg"].get<double>()) <= 1.0);
    CHECK(with.result["views"][v]["sky_speed_km_s"].get<double>() ==
          doctest::Approx(without.result["views"][v]["sky_speed_km_s"].get<double>()).epsilon(0.01));
  }
}
