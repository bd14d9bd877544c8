// tests/app/two_cmes.hpp — the `occulta synth` scenario of windows holding several CMEs
// (issue 16), shared by measure_multi_test.cpp (measure) and window_cmes_test.cpp (the
// analyst's window): two views 90° apart, small frames, 10-minute cadence.
#pragma once

#include <cstdio>
#include <string>
#include <vector>

namespace occulta::test {

inline constexpr double kTwoCmesCadenceS = 600.0;

// One CME: direction, tilt, speed, and when its apex is at 1.2 R☉ (minutes after 12:00).
struct ScenarioCme {
  double lon, lat, tilt, speed, at_min;
};

// Two views 90° apart (Stonyhurst lon −60° and 30°, named left and right), `size_px` px,
// `frames` frames at 10 min from 2031-06-01T12:00; event id "multi"; `extra` adds
// top-level members (each with a leading comma).
inline std::string two_view_scenario(const std::vector<ScenarioCme>& cmes, int frames, const std::string& extra = "",
                                     int size_px = 128) {
  std::string shells;
  for (const ScenarioCme& c : cmes) {
    char shell[512];
    std::snprintf(shell, sizeof shell, R"({"lon_deg": %g, "lat_deg": %g, "tilt_deg": %g, "half_angle_deg": 25, "aspect_ratio": 0.3,
        "apex": {"time": "2031-06-01T%02d:%02d:00", "height_rs": 1.2, "speed_km_s": %g}, "density_cm3": 5e5})",
                  c.lon, c.lat, c.tilt, 12 + int(c.at_min) / 60, int(c.at_min) % 60, c.speed);
    shells += (shells.empty() ? "" : ", ") + std::string(shell);
  }
  char text[4096];
  std::snprintf(text, sizeof text, R"({
    "id": "multi", "start": "2031-06-01T12:00:00", "cadence_s": %g, "frames": %d, "exposure_s": 6,
    "image": {"size_px": %d, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
    "observers": [{"name": "left", "lon_deg": -60, "lat_deg": 2, "dist_au": 0.98, "roll_deg": 4},
                  {"name": "right", "lon_deg": 30, "lat_deg": -3, "dist_au": 1.01}],
    "shells": [%s],
    "detector": {"dn_per_s_per_bsun": 2e12}, "jitter_px": 0.3, "cosmic_rays_per_frame": 6, "seed": 7%s
  })", kTwoCmesCadenceS, frames, size_px, shells.c_str(), extra.c_str());
  return text;
}

}  // namespace occulta::test
