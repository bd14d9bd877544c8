// `occulta measure` on one small two-view synthetic event: a frame cut short in a view is
// skipped and makes the result partial (exit 1, the frame named), and `--apex-law free`
// gives the same result.json twice, to the last bit (but for the run's elapsed time).
#include <filesystem>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::shell_quote;

// Two observers 90° apart, 96² px, 9 frames: a CME both see (as tests/app/batch/batch_fixture.cpp's).
const char* kScenario = R"({
  "id": "repeat", "start": "2031-07-09T03:00:00", "cadence_s": 1230, "frames": 9, "exposure_s": 6,
  "image": {"size_px": 96, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
  "observers": [{"name": "a", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.97},
                {"name": "b", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01}],
  "shell": {"lon_deg": 0, "lat_deg": 15, "tilt_deg": 45, "half_angle_deg": 20, "aspect_ratio": 0.25,
            "apex": {"time": "2031-07-09T03:00:00", "height_rs": 2.0, "speed_km_s": 850, "accel_m_s2": 0},
            "density_cm3": 5e5},
  "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": 3},
  "seed": 502
})";

occulta::test::CommandResult measure(const fs::path& event, const fs::path& out, const std::string& options = "") {
  return occulta::test::run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure " +
                                    shell_quote(event.string()) + " --out " + shell_quote(out.string()) + " --quiet " +
                                    options + " 2>&1");
}

}  // namespace

TEST_CASE("measure repeat: --apex-law free twice gives the same result; a frame cut short makes the result partial") {
  const fs::path dir = occulta::test::synthesize_event("measure_repeat", kScenario);
  const fs::path event = dir / "frames" / "repeat.event.json";
  REQUIRE(fs::exists(event));

  // Twice with free heights: the same bytes but for provenance.elapsed_s.
  json runs[2];
  for (int k = 0; k < 2; ++k) {
    const auto run = measure(event, dir / ("free" + std::to_string(k)), "--apex-law free");
    INFO(run.output);
    REQUIRE(run.exit_code == 0);
    runs[k] = occulta::fit::read_json_file(dir / ("free" + std::to_string(k)) / "result.json");
    runs[k]["provenance"].erase("elapsed_s");
  }
  CHECK(runs[0]["shell"]["covariance"].is_object());
  CHECK(runs[0].dump() == runs[1].dump());

  // The middle frame of view b cut to half its length: skipped, named, and the result partial.
  const fs::path frame = dir / "frames" / "b" / "b_004.fits";
  REQUIRE(fs::exists(frame));
  fs::resize_file(frame, fs::file_size(frame) / 2);
  const auto cut = measure(event, dir / "cut");
  INFO(cut.output);
  CHECK(cut.exit_code == 1);
  const json result = occulta::fit::read_json_file(dir / "cut" / "result.json");
  CHECK(result["status"] == "partial");
  CHECK(result["problems"].dump().find("b_004.fits") != std::string::npos);
  CHECK(result["shell"].is_object());  // the other frames still measure the CME
}
