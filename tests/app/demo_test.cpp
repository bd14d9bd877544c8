// `occulta demo` on the committed sample: every frame usable, one line per view.
#include <cmath>

#include <doctest/doctest.h>

#include "fit/json_file.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

TEST_CASE("demo: summarises the committed sample event, every frame usable") {
  using occulta::test::shell_quote;
  const auto run = occulta::test::run_command("cd " + shell_quote(occulta::test::source_path("").string()) + " && " +
                                              shell_quote(occulta::test::occulta_binary().string()) + " demo");
  INFO(run.output);
  CHECK(run.exit_code == 0);
  CHECK(run.output.find("sample event \"sample-2031-03-14\"") != std::string::npos);
  CHECK(run.output.find("east         16     16  2031-03-14T06:00:00") != std::string::npos);
  CHECK(run.output.find("west         16     16  2031-03-14T06:00:00") != std::string::npos);
  CHECK(run.output.find("problem") == std::string::npos);

  // The shell fit beside the truth, and the arrival estimate with its caution at the end.
  CHECK(run.output.find("shell (direction measured from 2 views)") != std::string::npos);
  CHECK(run.output.find("shell (truth)") != std::string::npos);
  const std::string caution = "operational space-weather warnings come from the responsible national forecasting services.";
  const auto at = run.output.rfind(caution);
  REQUIRE(at != std::string::npos);
  CHECK(run.output.find_first_not_of(" \n", at + caution.size()) == std::string::npos);
  CHECK(run.output.find("earth ") != std::string::npos);

  // What the demo printed, against the sample's truth file (our forward model), to the
  // shell-fit issue's tolerances: direction within 4°, apex speed within 7 %, face-on
  // width within 8° (Thernisien 2011: 2(α + asin κ)).
  const auto result = occulta::fit::read_json_file(occulta::test::source_path("demo-out/result.json"));
  const auto truth = occulta::fit::read_json_file(occulta::test::source_path("sample_frames/sample-2031-03-14.truth.json"));
  const auto& s = result["shell"];
  const auto& t = truth["shell"];
  REQUIRE(s.is_object());
  CHECK(std::abs(std::remainder(s["lon_deg"].get<double>() - t["lon_deg"].get<double>(), 360.0)) <= 4.0);
  CHECK(std::abs(s["lat_deg"].get<double>() - t["lat_deg"].get<double>()) <= 4.0);
  const double dt = occulta::imaging::utc_seconds_from_iso(s["ref_time"].get<std::string>()) -
                    occulta::imaging::utc_seconds_from_iso(t["ref_time"].get<std::string>());
  const double speed = t["speed_km_s"].get<double>() + 1e-3 * t["accel_m_s2"].get<double>() * dt;
  CHECK(s["speed_km_s"].get<double>() == doctest::Approx(speed).epsilon(0.07));
  CHECK(std::abs(s["face_on_width_deg"].get<double>() - t["face_on_width_deg"].get<double>()) <= 8.0);
  REQUIRE(result["arrival"].is_array());
  CHECK(result["arrival"][0]["target"] == "earth");
  CHECK(result["caution"].get<std::string>().find(caution) != std::string::npos);
}

TEST_CASE("demo: a sample whose truth file lacks a view's observer gets a sentence, not an internal fault") {
  // One view of the sample (its first six frames), with the truth's observer of that view
  // renamed: the truth has nothing to say about the view.
  using occulta::test::shell_quote;
  namespace fs = std::filesystem;
  const fs::path work = occulta::test::scratch_dir("demo_truth_without_view");
  const fs::path sample = work / "sample";
  fs::create_directories(sample / "east");
  for (int i = 0; i < 6; ++i) {
    const std::string name = "east_00" + std::to_string(i) + ".fits";
    fs::copy_file(occulta::test::source_path("sample_frames/east/" + name), sample / "east" / name);
  }
  auto event = occulta::fit::read_json_file(occulta::test::source_path("sample_frames/sample-2031-03-14.event.json"));
  event["views"] = nlohmann::json::array({event["views"][0]});
  occulta::test::spit(sample / "sample-2031-03-14.event.json", event.dump(2));
  auto truth = occulta::fit::read_json_file(occulta::test::source_path("sample_frames/sample-2031-03-14.truth.json"));
  for (auto& o : truth["observers"])
    if (o["name"] == "east") o["name"] = "elsewhere";
  const fs::path truth_path = sample / "sample-2031-03-14.truth.json";
  occulta::test::spit(truth_path, truth.dump(2));
  const auto run = occulta::test::run_command(shell_quote(occulta::test::occulta_binary().string()) + " demo --sample " +
                                              shell_quote(sample.string()) + " --out " + shell_quote((work / "out").string()));
  INFO(run.output);
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("occulta: problem: " + truth_path.string() + ": holds no truth for view \"east\"") !=
        std::string::npos);
  CHECK(run.output.find("internal") == std::string::npos);
}
