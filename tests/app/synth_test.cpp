// `occulta synth` as a user runs it: a small scenario becomes frames that inspect,
// fitsverify and astropy all accept, with an event file and a truth file.
#include <fstream>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/event.hpp"
#include "imaging/fits.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

const char* kScenario = R"({
  "id": "small-event", "start": "2031-05-02T10:00:00", "cadence_s": 900, "frames": 4,
  "exposure_s": 4.0,
  "image": {"size_px": 64, "half_width_rs": 12, "occulter_rs": [2.5, 11.5]},
  "observers": [{"name": "north", "lon_deg": -50, "lat_deg": 3, "dist_au": 0.98, "roll_deg": 7},
                {"name": "south", "lon_deg": 30, "lat_deg": -1, "dist_au": 1.02}],
  "shell": {"lon_deg": -10, "lat_deg": 5, "tilt_deg": 20, "half_angle_deg": 25, "aspect_ratio": 0.3,
            "apex": {"time": "2031-05-02T10:00:00", "height_rs": 3.0, "speed_km_s": 700}},
  "jitter_px": 0.4, "cosmic_rays_per_frame": 3, "seed": 11,
  "missing_blocks": [{"view": "south", "frame": 2, "x": 0, "y": 0, "width": 16, "height": 8}]
})";

fs::path synth_small(const std::string& name) {
  const fs::path dir = occulta::test::scratch_dir(name);
  const fs::path scenario = dir / "small.scenario.json";
  std::ofstream(scenario) << kScenario;
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " synth " +
                               shell_quote(scenario.string()) + " --out " + shell_quote((dir / "out").string()));
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(run.output.find("synth: 8/8 frames") != std::string::npos);  // the progress line
  return dir / "out";
}

json parse_array(const std::string& output) {
  const auto begin = output.find('[');
  REQUIRE(begin != std::string::npos);
  return json::parse(output.substr(begin, output.rfind(']') - begin + 1));
}

}  // namespace

TEST_CASE("synth: frames that inspect accepts, with the event file and truth file") {
  const fs::path out = synth_small("synth_small");
  const occulta::fit::Event event = occulta::fit::read_event(out / "small-event.event.json");
  CHECK(event.id == "small-event");
  REQUIRE(event.views.size() == 2);
  CHECK(event.views[0].name == "north");
  CHECK(event.views[0].files.size() == 4);
  CHECK(event.views[1].files.size() == 4);
  REQUIRE(event.views[0].occulter_rs);
  CHECK((*event.views[0].occulter_rs)[0] == 2.5);

  std::ifstream truth_in(out / "small-event.truth.json");
  const json truth = json::parse(truth_in);
  REQUIRE(truth["frames"].size() == 4);

  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " inspect --json " +
                               shell_quote(out.string()));
  INFO(run.output);
  CHECK(run.exit_code == 0);  // every frame usable
  const json reports = parse_array(run.output);
  REQUIRE(reports.size() == 8);
  for (const auto& r : reports) {
    const std::string path = r["path"].get<std::string>();
    const std::string view = fs::path(path).parent_path().filename().string();
    const int index = std::stoi(fs::path(path).stem().string().substr(view.size() + 1));
    CAPTURE(path);
    CHECK(r["width"] == 64);
    CHECK(r["bitpix"] == 16);
    CHECK(r["time"] == truth["frames"][index]["time"]);
    CHECK(r["exposure_s"].get<double>() == 4.0);
    CHECK(r["finite_fraction"].get<double>() < 0.9);  // occulter and field stop hold no data
    if (view == "north") {
      CHECK(r["roll_deg"].get<double>() == doctest::Approx(7.0));
      CHECK(r["observer"]["lon_deg"].get<double>() == doctest::Approx(-50.0));
    }
  }
}

TEST_CASE("synth: frames pass fitsverify, and astropy's WCS puts Sun centre where inspect does") {
  const fs::path out = synth_small("synth_external");
  std::vector<std::string> files;
  for (const auto& entry : fs::recursive_directory_iterator(out))
    if (entry.path().extension() == ".fits") files.push_back(entry.path().string());
  REQUIRE(files.size() == 8);

  std::string list;
  for (const auto& f : files) {
    // fitsverify (HEASARC's FITS checker, Debian package): "verification OK" means 0
    // errors and 0 warnings.
    const auto verify = run_command(shell_quote(OCCULTA_FITSVERIFY) + " -q " + shell_quote(f));
    CAPTURE(verify.output);
    CHECK(verify.output.find("verification OK") != std::string::npos);
    list += " " + shell_quote(f);
  }
  // astropy.wcs (Debian's python3-astropy) world → pixel at HPC (0, 0), origin 0.
  const auto centres = occulta::test::run_python("tests/external/sun_center.py", list);
  REQUIRE_MESSAGE(centres.exit_code == 0, centres.output);
  const json expected = json::parse(centres.output);
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " inspect --json" + list);
  const json reports = parse_array(run.output);
  REQUIRE(reports.size() == files.size());
  for (const auto& r : reports) {
    const std::string path = r["path"].get<std::string>();
    CAPTURE(path);
    CHECK(std::abs(r["sun_center_px"][0].get<double>() - expected[path][0].get<double>()) < 1e-3);
    CHECK(std::abs(r["sun_center_px"][1].get<double>() - expected[path][1].get<double>()) < 1e-3);
  }
}

TEST_CASE("synth: the same scenario gives the same pixels; a bad scenario gives one sentence") {
  const fs::path a = synth_small("synth_repeat_a"), b = synth_small("synth_repeat_b");
  for (const char* frame : {"north/north_001.fits", "south/south_002.fits"}) {
    const auto pa = occulta::imaging::read_fits(a / frame), pb = occulta::imaging::read_fits(b / frame);
    CHECK(cv::norm(pa.pixels != pb.pixels, cv::NORM_L1) == 0.0);  // NaN != NaN counts: none
  }
  const fs::path dir = occulta::test::scratch_dir("synth_bad");
  std::ofstream(dir / "bad.scenario.json") << R"({"id": "x", "start": "2031-05-02T10:00:00"})";
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " synth " +
                               shell_quote((dir / "bad.scenario.json").string()) + " --out " +
                               shell_quote((dir / "out").string()));
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("bad.scenario.json: `cadence_s` is missing") != std::string::npos);
}
