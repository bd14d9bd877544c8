// app/track.hpp — the track file (`*.track.json`): leading-edge points of one event,
// clicked by an analyst in the viewer or found by `measure`, and what `measure --track`
// starts from instead of its own.
//
//   {"schema": "occulta.track/1", "event_id": "…",
//    "points": [{"view", "time" (ISO 8601 UTC), "pa_deg", "height_rs", "origin": "analyst" | "auto"}]}
#pragma once

#include <filesystem>
#include <string>
#include <vector>

namespace occulta::app {

struct TrackPoint {
  std::string view;
  double utc_s = 0.0;
  double pa_deg = 0.0;     // CCW from solar north through east
  double height_rs = 0.0;  // plane of the sky, from Sun centre
  std::string origin = "auto";
};

struct Track {
  std::string event_id;
  std::vector<TrackPoint> points;
};

// InputError naming the file and the point at fault.
Track read_track(const std::filesystem::path& path);
void write_track(const std::filesystem::path& path, const Track& track);

}  // namespace occulta::app
