// `occulta inspect` on files written by other software (astropy), run as a user runs it.
#include <fstream>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "imaging/constants.hpp"
#include "tests/support/support.hpp"

namespace {
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

json read_json(const std::filesystem::path& path) {
  std::ifstream in(path);
  return json::parse(in);
}

std::string inspect_command(const std::string& arguments) {
  return shell_quote(occulta::test::occulta_binary().string()) + " inspect " + arguments;
}

}  // namespace

TEST_CASE("inspect: reports sizes, times and geometry of files written by astropy") {
  const auto dir = occulta::test::scratch_dir("inspect_astropy");
  // Reference: astropy.io.fits writes the files; astropy.wcs and astropy.time give the
  // expected Sun centre, roll, scale and time (tests/external/write_solar_frames.py).
  const auto written = occulta::test::run_python("tests/external/write_solar_frames.py", shell_quote(dir.string()));
  REQUIRE_MESSAGE(written.exit_code == 0, written.output);
  const json expected = read_json(dir / "expected.json");

  const auto run = run_command(inspect_command("--json " + shell_quote(dir.string())));
  CHECK(run.exit_code == 1);  // some files are broken on purpose
  const auto begin = run.output.find('[');
  REQUIRE(begin != std::string::npos);
  const json reports = json::parse(run.output.substr(begin, run.output.rfind(']') - begin + 1));
  REQUIRE(reports.size() == expected.size());

  for (const auto& report : reports) {
    const std::string name = std::filesystem::path(report["path"].get<std::string>()).filename().string();
    CAPTURE(name);
    REQUIRE(expected.contains(name));
    const json& e = expected[name];
    // Exactly the keys the issue names, whatever the outcome.
    CHECK(report.size() == 13);
    for (const char* key : {"path", "ok", "problem", "width", "height", "bitpix", "time", "exposure_s", "observer",
                            "sun_center_px", "rs_per_px", "roll_deg", "finite_fraction"})
      CHECK(report.contains(key));
    CHECK(report["ok"] == e["ok"]);
    if (!e["ok"].get<bool>()) {
      const std::string problem = report["problem"].get<std::string>();
      CHECK(problem.find(name) != std::string::npos);                          // names the file
      CHECK(problem.find(e["phrase"].get<std::string>()) != std::string::npos);  // and the fault
      continue;
    }
    CHECK(report["width"] == e["width"]);
    CHECK(report["height"] == e["height"]);
    CHECK(report["bitpix"] == e["bitpix"]);
    CHECK(report["exposure_s"].get<double>() == doctest::Approx(e["exposure_s"].get<double>()));
    const auto& o = report["observer"];
    CHECK(o["lon_deg"].get<double>() == doctest::Approx(e["lon_deg"].get<double>()).epsilon(1e-9));
    CHECK(o["lat_deg"].get<double>() == doctest::Approx(e["lat_deg"].get<double>()).epsilon(1e-9));
    CHECK(o["dist_au"].get<double>() == doctest::Approx(e["dist_au"].get<double>()).epsilon(1e-9));
    // astropy.wcs world→pixel at HPC (0, 0), origin 0: to a thousandth of a pixel.
    CHECK(std::abs(report["sun_center_px"][0].get<double>() - e["sun_center_px"][0].get<double>()) < 1e-3);
    CHECK(std::abs(report["sun_center_px"][1].get<double>() - e["sun_center_px"][1].get<double>()) < 1e-3);
    CHECK(std::abs(report["roll_deg"].get<double>() - e["roll_deg"].get<double>()) < 1e-4);
    // D☉·(pixel angle)/R☉ from astropy's pixel scale; ours may use the exact TAN scale
    // at Sun centre, a few arcsec from the reference pixel: equal to 1e-4.
    CHECK(report["rs_per_px"].get<double>() == doctest::Approx(e["rs_per_px"].get<double>()).epsilon(1e-4));
    CHECK(report["finite_fraction"].get<double>() == doctest::Approx(e["finite_fraction"].get<double>()));
    // Time: astropy.time's ISO form of DATE-OBS in UTC, to the millisecond.
    CHECK(report["time"].get<std::string>() == e["iso"].get<std::string>());
  }
}

TEST_CASE("inspect: one line per file, and exit codes 0 / 1 / 2") {
  const auto dir = occulta::test::scratch_dir("inspect_lines");
  const auto written = occulta::test::run_python("tests/external/write_solar_frames.py", shell_quote(dir.string()));
  REQUIRE_MESSAGE(written.exit_code == 0, written.output);

  const auto good = run_command(inspect_command(shell_quote((dir / "rice.fits").string())));
  CHECK(good.exit_code == 0);
  CHECK(good.output.find("rice.fits: 64×64 BITPIX 16") != std::string::npos);
  CHECK(good.output.find("2031-03-14T07:00:00.500") != std::string::npos);

  const auto bad = run_command(inspect_command(shell_quote((dir / "not_fits.fits").string())));
  CHECK(bad.exit_code == 1);
  CHECK(bad.output.find("not_fits.fits") != std::string::npos);

  const auto missing = run_command(inspect_command(shell_quote((dir / "nowhere.fits").string())));
  CHECK(missing.exit_code == 1);
  CHECK(missing.output.find("no such file") != std::string::npos);

  CHECK(run_command(inspect_command("")).exit_code == 2);                 // no PATH
  CHECK(run_command(inspect_command("--no-such-option x")).exit_code == 2);
}
