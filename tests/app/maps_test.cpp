// `occulta maps` on synthetic events of known truth: the cube and quicklooks it writes,
// and where the time–height ridge lies against the truth's sky-plane leading edge.
#include <cmath>
#include <fstream>
#include <utility>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>

#include "app/quicklook.hpp"
#include "fit/event.hpp"
#include "imaging/chain.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

// Two views of one shell; `direction` sets the shell's longitude and latitude.
std::string scenario(double lon, double lat, double speed, double tilt) {
  char text[2048];
  std::snprintf(text, sizeof text, R"({
    "id": "maps-event", "start": "2031-06-01T12:00:00", "cadence_s": 600, "frames": 9, "exposure_s": 6,
    "image": {"size_px": 160, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [{"name": "one", "lon_deg": -55, "lat_deg": 2, "dist_au": 0.98, "roll_deg": 4},
                  {"name": "two", "lon_deg": 35, "lat_deg": -3, "dist_au": 1.01}],
    "shell": {"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": 25, "aspect_ratio": 0.3,
              "apex": {"time": "2031-06-01T12:00:00", "height_rs": 2.0, "speed_km_s": %g},
              "density_cm3": 5e5},
    "detector": {"dn_per_s_per_bsun": 2e12}, "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": 5
  })", lon, lat, tilt, speed);
  return text;
}


json read_json(const fs::path& path) {
  std::ifstream in(path);
  return json::parse(in);
}

}  // namespace

TEST_CASE("maps: writes the polar cube and the quicklooks for each view") {
  const fs::path dir = occulta::test::synthesize_event("maps_outputs", scenario(-10, 5, 900, 20));
  const fs::path out = dir / "maps";
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " maps " +
                               shell_quote((dir / "frames/maps-event.event.json").string()) + " --out " +
                               shell_quote(out.string()) + " --pa 90 --pa 270 --nrgf");
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  for (const char* view : {"one", "two"}) {
    CAPTURE(view);
    // Each picture one panel of its plane's size (app/quicklook: axes, colour bar, title).
    using occulta::app::Plane;
    for (const auto& [png, plane] : std::vector<std::pair<const char*, Plane>>{{"running_difference.png", Plane::sky},
                                                                            {"polar_running_difference.png", Plane::polar},
                                                                            {"time_height_pa090.png", Plane::time_height},
                                                                            {"time_height_pa270.png", Plane::time_height},
                                                                            {"nrgf.png", Plane::polar}}) {
      const std::string name = png;  // not a structured binding: clang 14 cannot capture those
      CAPTURE(name);
      const cv::Mat picture = cv::imread((out / view / png).string());
      CHECK(picture.cols == occulta::app::panel_size(plane).width);
      CHECK(picture.rows == occulta::app::panel_size(plane).height);
    }
    // astropy.io.fits reads the cube (Debian's python3-astropy): 8 differences of 9 frames,
    // PA along NAXIS1 at 0.5° steps covering 360°.
    const auto read = occulta::test::run_python("tests/external/read_cube.py", shell_quote((out / view / "polar.fits").string()));
    REQUIRE_MESSAGE(read.exit_code == 0, read.output);
    const json cube = json::parse(read.output);
    CHECK(cube["shape"][0] == 8);
    CHECK(cube["shape"][2] == 720);
    CHECK(cube["ctype3"] == "FRAME");
    CHECK(cube["extname"] == "FRAMES");
    CHECK(cube["columns"]["TIME"][0] == "2031-06-01T12:10:00.000");  // the later frame of the first difference
  }
}

TEST_CASE("maps: the time-height ridge at the apex PA follows the truth's sky-plane leading edge") {
  // Three directions: toward the limb of view one, between the views, and off the ecliptic.
  struct Case { double lon, lat, speed, tilt; };
  for (const Case c : {Case{-10, 5, 900, 20}, Case{20, -15, 1400, -45}, Case{-30, 25, 600, 60}}) {
    CAPTURE(c.lon);
    CAPTURE(c.lat);
    const fs::path dir = occulta::test::synthesize_event("maps_ridge", scenario(c.lon, c.lat, c.speed, c.tilt));
    const json truth = read_json(dir / "frames/maps-event.truth.json");
    const auto event = occulta::fit::read_event(dir / "frames/maps-event.event.json");
    for (const auto& view : event.views) {
      CAPTURE(view.name);
      occulta::imaging::ChainOptions options;
      options.median_filter = 5;  // against the scenario's cosmic-ray tracks (up to 4 px long)
      const auto run = occulta::imaging::polar_running_differences(view.name, view.files, options);
      const auto& polar = run.running;
      int compared = 0;
      for (size_t i = 0; i < polar.frames.size(); ++i) {
        const json& t = truth["frames"][i + 1];  // difference i ends at frame i + 1
        REQUIRE(occulta::imaging::utc_seconds_from_iso(t["time"].get<std::string>()) == polar.utc_s[i]);
        const json& seen = t["views"][view.name];
        const double edge = seen["sky_leading_edge_at_apex_pa_rs"].get<double>();
        // Only where the edge is inside the field, clear of the occulter and field stop.
        if (edge < 3.3 || edge > 13.7) continue;
        // The ridge: the outermost local maximum of the running difference along the apex
        // PA that reaches 60 % of the profile's peak and 5σ (the front's new position is
        // bright and its old one dark; the leading edge is the outermost bright band, and a
        // noise bump of a 2° band median stays below 5σ — common practice).
        const auto profile = occulta::imaging::band_profile(polar.frames[i], polar.polar,
                                                            seen["apex_pa_deg"].get<double>(), 2.0);
        float peak = 0.0f;
        for (const float v : profile)
          if (std::isfinite(v)) peak = std::max(peak, v);
        int best = -1;
        for (int k = int(profile.size()) - 1; k >= 0 && best < 0; --k)
          if (std::isfinite(profile[k]) && profile[k] >= std::max(0.6f * peak, 5.0f)) best = k;
        while (best >= 1 && std::isfinite(profile[best - 1]) && profile[best - 1] > profile[best]) --best;
        while (best + 1 < int(profile.size()) && std::isfinite(profile[best + 1]) && profile[best + 1] > profile[best]) ++best;
        REQUIRE(best >= 0);
        CAPTURE(i);
        CAPTURE(edge);
        CAPTURE(polar.polar.height_rs(best));
        CHECK(std::abs(polar.polar.height_rs(best) - edge) < 0.3);
        ++compared;
      }
      CHECK(compared >= 4);
    }
  }
}

TEST_CASE("maps: a view without frames is a problem, the other views go on") {
  const fs::path dir = occulta::test::synthesize_event("maps_bad", scenario(-10, 5, 900, 20));
  json event = read_json(dir / "frames/maps-event.event.json");
  event["views"][1]["files"] = json::array({"nowhere/*.fits"});
  std::ofstream(dir / "frames/broken.event.json") << event.dump();
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " maps " +
                               shell_quote((dir / "frames/broken.event.json").string()) + " --out " +
                               shell_quote((dir / "maps").string()));
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("problem: view two: no files match nowhere/*.fits.") != std::string::npos);
  CHECK(fs::exists(dir / "maps/one/polar.fits"));
}

TEST_CASE("maps: polar.fits holds the chain's running differences exactly, also when a frame is skipped") {
  // The cube goes to the file plane by plane as frames finish (room for n − 1 planes, then
  // NAXIS3 set to the differences made). Compared with the chain's own sequence, kept in
  // memory (imaging::polar_running_differences) under the options maps uses: every pixel
  // equal, as written to float32 and read back by astropy (Debian's python3-astropy).
  const fs::path dir = occulta::test::synthesize_event("maps_stream", scenario(-10, 5, 900, 20));
  const fs::path broken = dir / "frames/one/one_004.fits";
  const std::string bytes = occulta::test::slurp(broken);
  std::ofstream(broken, std::ios::binary | std::ios::trunc) << bytes.substr(0, 2880);  // a header, no image
  const fs::path event_path = dir / "frames/maps-event.event.json";
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " maps " +
                               shell_quote(event_path.string()) + " --out " + shell_quote((dir / "maps").string()));
  INFO(run.output);
  CHECK(run.exit_code == 1);  // the skipped frame is a problem
  CHECK(run.output.find("one_004.fits") != std::string::npos);
  const auto event = occulta::fit::read_event(event_path);
  for (const auto& view : event.views) {
    CAPTURE(view.name);
    const auto chain = occulta::imaging::polar_running_differences(view.name, view.files,
                                                                   occulta::fit::chain_options(event, view, 5));
    const auto& expected = chain.running;
    CHECK(expected.frames.size() == (view.name == "one" ? 7u : 8u));
    const auto read = occulta::test::run_python("tests/external/read_cube.py",
                                                shell_quote((dir / "maps" / view.name / "polar.fits").string()));
    REQUIRE_MESSAGE(read.exit_code == 0, read.output);
    const json cube = json::parse(read.output);
    REQUIRE(cube["shape"] == json({expected.frames.size(), expected.polar.height_count, expected.polar.pa_count}));
    REQUIRE(cube["columns"]["UTC_S"].size() == expected.frames.size());
    int differing = 0;
    std::size_t at = 0;
    for (std::size_t k = 0; k < expected.frames.size(); ++k) {
      CHECK(cube["columns"]["UTC_S"][k].get<double>() == expected.utc_s[k]);
      for (int y = 0; y < expected.polar.height_count; ++y)
        for (int x = 0; x < expected.polar.pa_count; ++x, ++at) {
          const float want = expected.frames[k].at<float>(y, x);
          const json& got = cube["pixels"][at];
          if (std::isfinite(want) ? !got.is_number() || got.get<double>() != double(want) : !got.is_null()) ++differing;
        }
    }
    CHECK(differing == 0);
  }
}
