// Scenario files: what read_scenario accepts, and one clear sentence for what it refuses.
#include <fstream>

#include <doctest/doctest.h>

#include "fit/scenario.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {

const char* kMinimal = R"({
  "id": "t1", "start": "2031-03-14T06:00:00", "cadence_s": 600, "frames": 4,
  "image": {"size_px": 64, "half_width_rs": 12, "occulter_rs": [2.5, 11.5]},
  "observers": [{"name": "a", "lon_deg": -40, "lat_deg": 0, "dist_au": 1.0}],
  "shell": {"lon_deg": 0, "lat_deg": 0, "half_angle_deg": 20, "aspect_ratio": 0.3,
            "apex": {"time": "2031-03-14T06:00:00", "height_rs": 2.0, "speed_km_s": 800, "accel_m_s2": -20}}
})";

std::filesystem::path write(const std::string& name, const std::string& text) {
  const auto dir = occulta::test::scratch_dir("scenario_" + name);
  const auto path = dir / (name + ".scenario.json");
  std::ofstream(path) << text;
  return path;
}

std::string refusal(const std::string& name, const std::string& text) {
  try {
    occulta::fit::read_scenario(write(name, text));
  } catch (const occulta::imaging::InputError& e) {
    return e.what();
  }
  return "accepted";
}

std::string with(std::string text, const std::string& from, const std::string& to) {
  const auto at = text.find(from);
  REQUIRE(at != std::string::npos);
  return text.replace(at, from.size(), to);
}

}  // namespace

TEST_CASE("scenario: a minimal file reads with its defaults, and the apex law is kinematics") {
  const auto s = occulta::fit::read_scenario(write("minimal", kMinimal));
  CHECK(s.id == "t1");
  CHECK(s.frames == 4);
  CHECK(s.observers.size() == 1);
  CHECK(s.detector.pixels == "int16");
  CHECK(s.start_s == occulta::imaging::utc_seconds_from_iso("2031-03-14T06:00:00"));
  // h(t) = h0 + v t + a t²/2 with v in km/s and a in m/s², heights in R☉ of 695 700 km
  // (IAU 2015 B3): after 600 s, 2 + (800·600 − 0.5·0.02·600²) / 695700.
  const double t = s.start_s + 600.0;
  CHECK(s.shells.at(0).apex.height_at(t) == doctest::Approx(2.0 + (800.0 * 600.0 - 0.5 * 0.020 * 600.0 * 600.0) / 695700.0));
  CHECK(s.shells.at(0).apex.speed_at(t) == doctest::Approx(800.0 - 0.020 * 600.0));
}

TEST_CASE("scenario: each fault is refused with one sentence naming the file and the field") {
  const auto check = [](const std::string& name, const std::string& text, const std::string& phrase) {
    const std::string message = refusal(name, text);
    CAPTURE(message);
    CHECK(message.find(name + ".scenario.json") != std::string::npos);
    CHECK(message.find(phrase) != std::string::npos);
  };
  check("notjson", "{ this is not json", "not valid JSON");
  check("noid", with(kMinimal, R"("id": "t1", )", ""), "`id` is missing");
  check("baddate", with(kMinimal, R"("start": "2031-03-14T06:00:00")", R"("start": "2031-13-14T06:00:00")"),
        "month 13");
  check("speed", with(kMinimal, R"("speed_km_s": 800)", R"("speed_km_s": 90000)"), "`shell.apex.speed_km_s` is 90000");
  check("noobs", with(kMinimal, R"([{"name": "a", "lon_deg": -40, "lat_deg": 0, "dist_au": 1.0}])", "[]"),
        "observers");
  check("badname", with(kMinimal, R"("name": "a")", R"("name": "a b")"), "observers[0].name");
  check("occulter", with(kMinimal, "[2.5, 11.5]", "[5, 3]"), "occulter_rs");
  check("model", with(kMinimal, R"("cadence_s": 600,)", R"("cadence_s": 600, "background": {"k_corona": "mine"},)"),
        "background.k_corona");
  check("wide", with(kMinimal, R"("half_angle_deg": 20)", R"("half_angle_deg": 75)"), "below 90");
  CHECK(refusal("missing", "") .find("not valid JSON") != std::string::npos);
}

TEST_CASE("scenario: several CMEs, views on their own clocks and drifting points") {
  const std::string shell =
      R"({"lon_deg": 0, "lat_deg": 0, "half_angle_deg": 20, "aspect_ratio": 0.3,
          "apex": {"time": "2031-03-14T06:00:00", "height_rs": 2.0, "speed_km_s": 800, "accel_m_s2": -20}})";
  // A second CME whose apex is at 1.2 R☉ 30 min after the start: not launched at the
  // first frames (below 0.1 R☉ before ~18 min in at 900 km/s), drawn from then on.
  const std::string late =
      R"({"lon_deg": 90, "lat_deg": -20, "half_angle_deg": 30, "aspect_ratio": 0.25,
          "apex": {"time": "2031-03-14T06:30:00", "height_rs": 1.2, "speed_km_s": 900}})";
  const std::string two = with(with(kMinimal, R"("shell": )", R"("shells": [)"), "-20}}\n}", "-20}}, " + late + "]\n}");
  std::string text = with(two, R"("dist_au": 1.0})",
                          R"("dist_au": 1.0, "cadence_s": 480, "start_offset_s": 300, "frames": 6}, )"
                          R"({"name": "b", "lon_deg": 40, "lat_deg": 0, "dist_au": 1.0})");
  text = with(text, "\n}", R"(, "point_sources": [{"view": "b", "from": {"pa_deg": 150, "height_rs": 6},
      "to": {"pa_deg": 200, "height_rs": 9}, "brightness_bsun": 2e-9}]
})");
  const auto s = occulta::fit::read_scenario(write("several", text));
  REQUIRE(s.shells.size() == 2);
  CHECK(s.shells[1].lon_deg == 90.0);
  const double start = occulta::imaging::utc_seconds_from_iso("2031-03-14T06:00:00");
  CHECK_FALSE(s.shells[1].launched(start));
  CHECK(s.shells[1].launched(start + 1800.0));
  CHECK(s.shells[0].launched(start));
  // View a on its own clock, b on the scenario's.
  CHECK(s.observers[0].cadence_s == 480.0);
  CHECK(s.observers[0].frames == 6);
  CHECK(s.frame_time(0, 2) == start + 300.0 + 960.0);
  CHECK(s.frame_time(1, 2) == start + 1200.0);
  CHECK_FALSE(s.shared_clock());
  REQUIRE(s.point_sources.size() == 1);
  CHECK(s.point_sources[0].view == "b");
  CHECK(s.point_sources[0].to_height_rs == 9.0);

  const auto check = [](const std::string& name, const std::string& bad, const std::string& phrase) {
    const std::string message = refusal(name, bad);
    CAPTURE(message);
    CHECK(message.find(name + ".scenario.json") != std::string::npos);
    CHECK(message.find(phrase) != std::string::npos);
  };
  check("both", with(kMinimal, R"("shell": )", R"("shells": [)" + shell + R"(], "shell": )"), "not both");
  const std::string head = kMinimal;
  const std::string without = head.substr(0, head.find(R"(,
  "shell")")) + "\n}";
  check("neither", without, "`shell` is missing");
  check("emptylist", without.substr(0, without.size() - 2) + R"(, "shells": []
})", "`shells` must be a non-empty list");
  check("pointview", with(text, R"("view": "b", "from")", R"("view": "c", "from")"), "point_sources[0].view");
  check("clock", with(text, R"("cadence_s": 480)", R"("cadence_s": 0)"), "observers[0].cadence_s");
  // A law that turns round below 0.1 R☉ within the frames.
  check("falls",
        with(kMinimal, R"("height_rs": 2.0, "speed_km_s": 800, "accel_m_s2": -20)",
             R"("height_rs": 1.0, "speed_km_s": 100, "accel_m_s2": -1000)"),
        "back below 0.1");
}
