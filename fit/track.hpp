// fit/track.hpp — the track file (`*.track.json`): leading-edge points of one event,
// clicked by an analyst in the viewer or found by `measure`, and what `measure --track`
// starts from instead of its own.
//
//   {"schema": "occulta.track/1", "event_id": "…",
//    "points": [{"view", "time" (ISO 8601 UTC), "pa_deg", "height_rs", "origin": "analyst" | "auto"}]}
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

namespace occulta::fit {

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

// Heights a track point may have (R☉): an analyst's leading edge, from the limb to far
// beyond any coronagraph (common practice).
inline constexpr double kTrackHeightRangeRs[2] = {1.0, 300.0};

// Reads a track file strictly: InputError naming the file and the key at fault (unknown
// keys with the nearest known one, `schema` "occulta.track/1" and `event_id` required,
// view names as is_safe_name, pa_deg 0–360, height_rs within kTrackHeightRangeRs).
Track read_track(const std::filesystem::path& path);

// What a track is checked against: one view of the event and its frames' time span
// (unknown when no frame time could be read).
struct ViewSpan {
  std::string name;
  std::optional<double> first_utc_s, last_utc_s;
};
// InputError(file, …) when the track belongs to another event, names a view the event
// lacks (suggesting the nearest), or has a point outside its view's frames' time span.
void check_track_matches(const Track& track, const std::string& file, const std::string& event_id,
                         const std::vector<ViewSpan>& views);
void write_track(const std::filesystem::path& path, const Track& track);

}  // namespace occulta::fit
