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
