// `occulta forecast` on a handwritten result.json: the table and its caution, arrival.json
// against its schema (Debian's python3-jsonschema), the histograms, reproducibility, the
// event file's forecast block, and one sentence for each kind of bad input.
#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <functional>
#include <string>

#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>

#include "fit/arrival.hpp"
#include "fit/json_file.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

// A result as the shell fit writes it: apex 10° west of Earth's meridian at 1000 km/s,
// with a covariance over speed, direction and shape.
json handwritten_result() {
  json shell = {{"lon_deg", 10.0}, {"lat_deg", -2.0}, {"tilt_deg", 15.0}, {"half_angle_deg", 30.0},
                {"aspect_ratio", 0.35}, {"ref_time", "2031-07-09T04:00:00"}, {"apex_height_rs", 9.0},
                {"speed_km_s", 1000.0}, {"accel_m_s2", 0.0}, {"face_on_width_deg", 101.0},
                {"edge_on_width_deg", 41.0}, {"residual_rms_rs", 0.05}};
  shell["sigma"] = {{"lon_deg", 4.0}, {"lat_deg", 4.0}, {"tilt_deg", 10.0}, {"half_angle_deg", 4.0},
                    {"aspect_ratio", 0.03}, {"speed_km_s", 50.0}, {"apex_height_rs", 0.2}, {"accel_m_s2", nullptr}};
  shell["covariance"] = {{"keys", {"lon_deg", "lat_deg", "speed_km_s", "apex_height_rs"}},
                         {"matrix", {{16.0, 2.0, 0.0, 0.0}, {2.0, 16.0, 0.0, 0.0}, {0.0, 0.0, 2500.0, -5.0},
                                     {0.0, 0.0, -5.0, 0.04}}}};
  return {{"schema", "occulta.result/1"}, {"event_id", "forecast-test"}, {"status", "ok"},
          {"problems", json::array()}, {"views", json::array()}, {"shell", shell},
          {"boundary", {{"time", "2031-07-09T07:24:00"}, {"speed_km_s", 1000.0}, {"lon_deg", 10.0},
                        {"lat_deg", -2.0}, {"half_width_deg", 50.5}}},
          {"provenance", {{"version", "test"}, {"inputs", json::array()}, {"options", json::object()}, {"elapsed_s", 1.0}}}};
}

fs::path write(const fs::path& path, const json& doc) {
  std::ofstream(path) << doc.dump(2);
  return path;
}

occulta::test::CommandResult forecast(const std::string& args) {
  return run_command(shell_quote(occulta::test::occulta_binary().string()) + " forecast " + args);
}

occulta::test::CommandResult validate(const std::string& schema, const fs::path& doc) {
  // The reference validator: Debian's python3-jsonschema, JSON Schema 2020-12.
  return occulta::test::run_python("tests/external/validate_schema.py",
                                   shell_quote(occulta::test::source_path(schema).string()) + " " +
                                       shell_quote(doc.string()));
}

}  // namespace

TEST_CASE("forecast: the table with its caution and arrival.json with histograms from a result that is only read") {
  const fs::path dir = occulta::test::scratch_dir("forecast_main");
  const fs::path result = write(dir / "result.json", handwritten_result());
  const std::string before = occulta::test::slurp(result);
  const fs::path out = dir / "out";
  const std::string args = shell_quote(result.string()) + " --target earth --target l1 --target probe:-70,0,0.7";
  const auto run = forecast(args + " --out " + shell_quote(out.string()));
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(occulta::test::slurp(result) == before);
  CHECK(run.output.find("Caution: " + std::string(occulta::fit::kArrivalCaution)) != std::string::npos);
  CHECK(run.output.find("launch spread from the shell fit's covariance") != std::string::npos);
  for (const char* name : {"earth ", "l1 ", "probe "}) CHECK(run.output.find(std::string("\n") + name) != std::string::npos);

  const json doc = occulta::fit::read_json_file(out / "arrival.json");
  const auto valid = validate("schemas/arrival.schema.json", out / "arrival.json");
  CHECK_MESSAGE(valid.exit_code == 0, valid.output);
  CHECK(doc["caution"] == std::string(occulta::fit::kArrivalCaution));
  CHECK(doc["spread_from"] == "covariance");
  REQUIRE(doc["arrival"].size() == 3);
  const json& earth = doc["arrival"][0];
  const json& l1 = doc["arrival"][1];
  const json& probe = doc["arrival"][2];
  CHECK(earth["target"] == "earth");
  CHECK(earth["members"] == 10000);
  CHECK(earth["hit_probability"].get<double>() > 0.9);  // the apex is 10° from Earth's direction
  CHECK(probe["hit_probability"].get<double>() < 0.05);  // 80° east of the apex, beyond its 50.5° flank
  // L1 before Earth, by about 1.5 million km at the impact speed (common practice): within 10 %
  // here, the percentiles of two targets not being one member's difference.
  const auto t = [](const json& a) { return occulta::imaging::utc_seconds_from_iso(a["time_p50"].get<std::string>()); };
  const double lead = t(earth) - t(l1);
  CHECK(lead == doctest::Approx(1.5e6 / earth["speed_km_s_p50"].get<double>()).epsilon(0.1));
  CHECK(earth["wind_km_s"] == json({300.0, 600.0}));

  for (const char* name : {"earth", "l1", "probe"}) {
    const cv::Mat png = cv::imread((out / ("arrival_" + std::string(name) + ".png")).string());
    CAPTURE(name);
    CHECK(png.cols >= 720);
    CHECK(png.rows >= 300);
  }

  // Reproducible: the same command gives the same file; another seed does not.
  const auto again = forecast(args + " --out " + shell_quote((dir / "again").string()));
  REQUIRE(again.exit_code == 0);
  // All but the provenance's elapsed time, which is the clock's.
  const auto estimate = [](const fs::path& path) {
    json file = occulta::fit::read_json_file(path);
    CHECK(file["provenance"]["inputs"].size() == 1);
    file["provenance"].erase("elapsed_s");
    return file;
  };
  CHECK(estimate(dir / "again/arrival.json") == estimate(out / "arrival.json"));
  const auto other = forecast(args + " --seed 9 --out " + shell_quote((dir / "other").string()));
  REQUIRE(other.exit_code == 0);
  CHECK(estimate(dir / "other/arrival.json") != estimate(out / "arrival.json"));
}

TEST_CASE("forecast: the arrival block fits result.schema.json and the two schemas agree on it") {
  const fs::path dir = occulta::test::scratch_dir("forecast_schema");
  const fs::path result = write(dir / "result.json", handwritten_result());
  const auto run = forecast(shell_quote(result.string()) + " --members 500 --out " + shell_quote((dir / "out").string()));
  REQUIRE_MESSAGE(run.exit_code == 0, run.output);
  json with = handwritten_result();
  with["arrival"] = occulta::fit::read_json_file(dir / "out/arrival.json")["arrival"];
  with["caution"] = std::string(occulta::fit::kArrivalCaution);
  const auto valid = validate("schemas/result.schema.json", write(dir / "with_arrival.json", with));
  CHECK_MESSAGE(valid.exit_code == 0, valid.output);
  // A broken entry is refused (the schema can fail).
  with["arrival"][0].erase("time_p50");
  with["arrival"][0]["hit_probability"] = 1.5;
  CHECK(validate("schemas/result.schema.json", write(dir / "broken.json", with)).exit_code != 0);

  const json a = occulta::fit::read_json_file(occulta::test::source_path("schemas/arrival.schema.json"));
  const json r = occulta::fit::read_json_file(occulta::test::source_path("schemas/result.schema.json"));
  CHECK(a["$defs"]["arrival_entry"] == r["$defs"]["arrival_entry"]);
}

TEST_CASE("forecast: targets and ranges from an event file forecast block with options winning") {
  const fs::path dir = occulta::test::scratch_dir("forecast_event");
  const fs::path result = write(dir / "result.json", handwritten_result());
  const fs::path event = write(dir / "e.event.json",
                               {{"id", "forecast-test"}, {"views", {{{"name", "a"}, {"files", "a/*.fits"}}}},
                                {"forecast", {{"targets", {"l1", {{"name", "probe"}, {"lon_deg", 20.0}, {"lat_deg", 0.0},
                                                                  {"dist_au", 0.5}}}},
                                              {"wind_km_s", {350.0, 450.0}}, {"drag_per_km", {0.5e-7, 1e-7}}}}});
  const auto run = forecast(shell_quote(result.string()) + " --members 2000 --event " + shell_quote(event.string()) +
                            " --out " + shell_quote((dir / "out").string()));
  REQUIRE_MESSAGE(run.exit_code == 0, run.output);
  const json doc = occulta::fit::read_json_file(dir / "out/arrival.json");
  REQUIRE(doc["arrival"].size() == 2);
  CHECK(doc["arrival"][0]["target"] == "l1");
  CHECK(doc["arrival"][1]["target"] == "probe");
  CHECK(doc["arrival"][1]["position"]["dist_au"].get<double>() == doctest::Approx(0.5));
  CHECK(doc["arrival"][0]["wind_km_s"] == json({350.0, 450.0}));
  CHECK(doc["arrival"][0]["drag_per_km"] == json({0.5e-7, 1e-7}));

  const auto wins = forecast(shell_quote(result.string()) + " --members 2000 --event " + shell_quote(event.string()) +
                             " --target earth --wind 500,500 --out " + shell_quote((dir / "wins").string()));
  REQUIRE_MESSAGE(wins.exit_code == 0, wins.output);
  const json w = occulta::fit::read_json_file(dir / "wins/arrival.json");
  REQUIRE(w["arrival"].size() == 1);
  CHECK(w["arrival"][0]["target"] == "earth");
  CHECK(w["arrival"][0]["wind_km_s"] == json({500.0, 500.0}));
  CHECK(w["arrival"][0]["drag_per_km"] == json({0.5e-7, 1e-7}));
}

TEST_CASE("forecast: sigma without covariance and no uncertainty at all") {
  const fs::path dir = occulta::test::scratch_dir("forecast_spread");
  json r = handwritten_result();
  r["shell"].erase("covariance");
  const auto sigma = forecast(shell_quote(write(dir / "sigma.json", r).string()) + " --members 1000 --out " +
                              shell_quote((dir / "sigma").string()));
  REQUIRE_MESSAGE(sigma.exit_code == 0, sigma.output);
  CHECK(occulta::fit::read_json_file(dir / "sigma/arrival.json")["spread_from"] == "sigma");
  r["shell"].erase("sigma");
  const auto none = forecast(shell_quote(write(dir / "none.json", r).string()) + " --members 1000");
  REQUIRE_MESSAGE(none.exit_code == 0, none.output);
  CHECK(none.output.find("gives no uncertainty for the shell") != std::string::npos);
  CHECK(!fs::exists(dir / "none"));  // no --out: nothing written
}

TEST_CASE("forecast: bad input gives one sentence naming the file and the fault") {
  const fs::path dir = occulta::test::scratch_dir("forecast_bad");
  const auto says = [&](const std::string& args, const std::string& sentence) {
    const auto run = forecast(args + " --out " + shell_quote((dir / "out").string()));
    CAPTURE(args);
    CAPTURE(run.output);
    // A fault named by an option is usage (2); a file's is an input problem (1).
    CHECK(run.exit_code == (sentence.starts_with("--") ? 2 : 1));
    CHECK(run.output.find(sentence) != std::string::npos);
    CHECK(run.output.find('\n') == run.output.size() - 1);  // one line
    CHECK(!fs::exists(dir / "out/arrival.json"));
  };
  const std::string missing = (dir / "missing.json").string();
  says(shell_quote(missing), missing + ": does not exist.");
  std::ofstream(dir / "garbled.json") << "{\"shell\": [1, 2";
  says(shell_quote((dir / "garbled.json").string()), (dir / "garbled.json").string() + ": is not valid JSON");

  const auto with = [&](const std::string& name, const std::function<void(json&)>& change) {
    json r = handwritten_result();
    change(r);
    return shell_quote(write(dir / name, r).string());
  };
  const std::string p = (dir / "x.json").string();
  says(with("x.json", [](json& r) { r.erase("shell"); }), p + ": has no shell block, which the arrival estimate needs");
  says(with("x.json", [](json& r) { r["boundary"] = nullptr; }), p + ": has no boundary block");
  says(with("x.json", [](json& r) { r["boundary"]["time"] = "2031-13-09T07:24:00"; }),
       p + ": boundary.time is \"2031-13-09T07:24:00\" — month 13 does not exist.");
  says(with("x.json", [](json& r) { r["boundary"].erase("speed_km_s"); }), p + ": boundary.speed_km_s is missing.");
  says(with("x.json", [](json& r) { r["boundary"]["speed_km_s"] = -5; }), p + ": boundary.speed_km_s is -5");
  says(with("x.json", [](json& r) { r["shell"]["aspect_ratio"] = 1.2; }), p + ": shell.aspect_ratio is 1.2 — it must lie in [0, 1).");
  says(with("x.json", [](json& r) { r["shell"]["covariance"]["matrix"][0][0] = -16.0; }),
       p + ": shell.covariance.matrix is not positive semi-definite");
  says(with("x.json", [](json& r) { r["shell"]["covariance"]["matrix"].erase(3); }),
       p + ": shell.covariance.matrix has 3 rows for 4 keys.");
  const std::string good = with("good.json", [](json&) {});
  says(good + " --target mars", "--target: target \"mars\" is not one occulta knows");
  says(good + " --target probe:10,0", "--target: target \"probe:10,0\" needs three numbers");
  says(good + " --target earth --target earth", "--target: two targets are named earth");
  says(good + " --wind 600,300", "--wind: \"600,300\" is outside the allowed range: it needs 50 ≤ LO ≤ HI ≤ 5000 km/s.");
  says(good + " --drag fast", "--drag: \"fast\" is not LO,HI");
  const fs::path event = write(dir / "bad.event.json", {{"id", "e"}, {"views", {{{"name", "a"}, {"files", "a/*.fits"}}}}, {"forecast", {{"wind_km_s", {300}}}}});
  says(good + " --event " + shell_quote(event.string()),
       event.string() + ": forecast.wind_km_s must be [lo, hi], two numbers.");
}

TEST_CASE("forecast: no estimate from an unconstrained direction or a failed shell fit; an assumed one is conditional") {
  // Issue 11 / 13: the verb keeps measure's rule (fit/measurement_shell.cpp).
  const fs::path dir = occulta::test::scratch_dir("forecast_weak");
  json result = handwritten_result();
  result["shell"]["direction_basis"] = "none";
  auto run = forecast(shell_quote(write(dir / "none.json", result).string()));
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("do not constrain") != std::string::npos);
  CHECK(run.output.find("hit") == std::string::npos);
  result["shell"]["direction_basis"] = "views";
  result["shell"]["status"] = "partial";
  run = forecast(shell_quote(write(dir / "failed.json", result).string()));
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("fit failed") != std::string::npos);
  result["shell"]["direction_basis"] = "source region";
  result["shell"]["status"] = "ok";
  run = forecast(shell_quote(write(dir / "source.json", result).string()) + " --members 200");
  CHECK(run.exit_code == 0);
  CHECK(run.output.find("conditional") != std::string::npos);
}
