// tests/app/batch/batch_fixture.cpp — makes the catalogue run suite's shared events once
// (contents in batch_fixture.hpp). Run by CTest as the batch_events fixture's setup.
#include "tests/app/batch/batch_fixture.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include <doctest/doctest.h>

#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using occulta::test::shell_quote;

struct Cme {
  double lon, lat, tilt, half_angle, kappa, speed;
};

// Ten CMEs seen by two observers 90° apart, all heading where both see them.
constexpr Cme kCmes[10] = {
    {-30, 5, 20, 25, 0.30, 900},   {-15, -10, -30, 30, 0.35, 1000}, {0, 15, 45, 20, 0.25, 850},
    {10, 0, 0, 28, 0.30, 950},     {25, -5, 60, 22, 0.40, 1100},    {40, 10, -45, 30, 0.30, 900},
    {-5, -15, 30, 25, 0.35, 800},  {15, 20, -20, 26, 0.30, 1000},   {-25, 3, 10, 24, 0.28, 950},
    {30, -8, -60, 27, 0.33, 1050}};

std::string scenario(int n, const Cme& c, double cadence_s) {
  char text[2048];
  std::snprintf(text, sizeof text, R"({
    "id": "s%02d", "start": "2031-07-09T03:00:00", "cadence_s": %g, "frames": 9, "exposure_s": 6,
    "image": {"size_px": 96, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [{"name": "a", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.97},
                  {"name": "b", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01}],
    "shell": {"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": %g, "aspect_ratio": %g,
              "apex": {"time": "2031-07-09T03:00:00", "height_rs": 2.0, "speed_km_s": %g, "accel_m_s2": 0},
              "density_cm3": 5e5},
    "detector": {"dn_per_s_per_bsun": 2e12, "read_noise_dn": 3},
    "seed": %d
  })", n, cadence_s, c.lon, c.lat, c.tilt, c.half_angle, c.kappa, c.speed, 500 + n);
  return text;
}

std::string iso(double utc_s) { return occulta::imaging::iso_from_utc_seconds(utc_s, 0); }

}  // namespace

TEST_CASE("batch fixture: synthetic CMEs, three broken events, one catalogue (33 rows in Release)") {
  const occulta::test::BatchCatalogueSize size = occulta::test::batch_catalogue_size();
  const fs::path root = occulta::test::batch_events_dir();
  fs::remove_all(root);
  fs::create_directories(root);
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  std::string rows = "id,start,end,views,truth\n";
  const double t0 = occulta::imaging::utc_seconds_from_iso("2031-07-09T03:00:00");
  for (int n = 0; n < size.scenarios; ++n) {
    const Cme& c = kCmes[n];
    // A cadence that carries the apex from 2 R☉ to the field stop (14.5 R☉) in about 8 frames.
    const double cadence_s = 10.0 * std::round(12.0 * 695700.0 / c.speed / 8.0 / 10.0);
    char name[8];
    std::snprintf(name, sizeof name, "s%02d", n);
    const fs::path dir = root / name;
    fs::create_directories(dir);
    occulta::test::spit(dir / "s.scenario.json", scenario(n, c, cadence_s));
    const auto made = occulta::test::run_command(bin + " synth --quiet " + shell_quote((dir / "s.scenario.json").string()) +
                                                 " --out " + shell_quote((dir / "frames").string()));
    REQUIRE_MESSAGE(made.exit_code == 0, made.output);
    // Windows of seven frames each: frames 0–6, 1–7, 2–8 (a minute's margin).
    for (int w = 0; w < size.windows; ++w) {
      const double from = t0 + w * cadence_s - 60, to = t0 + (w + 6) * cadence_s + 60;
      rows += std::string(name) + "w" + std::to_string(w) + "," + iso(from) + "," + iso(to) + ",a=" + name +
              "/frames/a/*.fits;b=" + name + "/frames/b/*.fits," + name + "/frames/" + name + ".truth.json\n";
    }
  }
  // The broken ones. A frame cut short: the first three frames of s00's view a, the
  // second halved — too few frames left for running differences, so the view (the only
  // one) fails because of it.
  const fs::path truncated = root / "broken" / "truncated";
  fs::create_directories(truncated);
  for (const char* frame : {"a_000.fits", "a_001.fits", "a_002.fits"})
    fs::copy_file(root / "s00" / "frames" / "a" / frame, truncated / frame);
  fs::resize_file(truncated / "a_001.fits", fs::file_size(truncated / "a_001.fits") / 2);
  // Frames without an observer: s01's, with HGLN_OBS, HGLT_OBS and DSUN_OBS removed.
  const fs::path blind = root / "broken" / "no-observer";
  fs::create_directories(blind / "a");
  std::string files;
  for (const auto& f : fs::directory_iterator(root / "s01" / "frames" / "a")) {
    fs::copy_file(f.path(), blind / "a" / f.path().filename());
    files += " " + shell_quote((blind / "a" / f.path().filename()).string());
  }
  const auto stripped = occulta::test::run_python("tests/external/strip_observer.py", files);
  REQUIRE_MESSAGE(stripped.exit_code == 0, stripped.output);
  const std::string window = "," + iso(t0 - 60) + "," + iso(t0 + 3 * 3600) + ",";
  rows += "truncated" + window + "a=broken/truncated/*.fits,\n";
  rows += "missing" + window + "a=broken/nowhere/*.fits,\n";
  rows += "no-observer" + window + "a=broken/no-observer/a/*.fits,\n";
  occulta::test::spit(root / "catalogue.csv", rows);
  CHECK(std::count(rows.begin(), rows.end(), '\n') == size.rows() + 1);
}
