// fit/track.hpp — the track file (`*.track.json`): leading-edge points of one event,
// clicked by an analyst in the viewer or found by `measure`, and what `measure --track`
// starts from instead of its own.
//
//   {"schema": "occulta.track/1", "event_id": "…",
//    "points": [{"view", "time" (ISO 8601 UTC), "pa_deg", "height_rs", "origin": "analyst" | "auto"}],
//    "ties": [{"a": {"view", "time", "pa_deg", "height_rs"}, "b": {…},
//              "lon_deg", "lat_deg", "distance_rs", "miss_rs"}]}            (optional)
//
// A tie is one feature clicked on two views (viewer/stereo.hpp, Inhester 2006): each click
// as a place on its view's frame (the frame's time; PA and plane-of-sky height as a
// point's) and where the two lines of sight meet — Stonyhurst longitude (west +) and
// latitude (north +) in degrees, distance from Sun centre in R☉ — with how far apart they
// pass (R☉). `measure` does not use ties; the window saves and reads them back.
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

// One click of a tie: where on its view's frame.
struct TieClick {
  std::string view;
  double utc_s = 0.0;      // the frame's time
  double pa_deg = 0.0;     // CCW from solar north through east
  double height_rs = 0.0;  // plane of the sky, from Sun centre (0 at Sun centre)
};

struct TrackTie {
  TieClick a, b;
  double lon_deg = 0.0, lat_deg = 0.0;  // Stonyhurst
  double distance_rs = 0.0;             // from Sun centre
  double miss_rs = 0.0;                 // how far apart the two lines of sight pass
};

struct Track {
  std::string event_id;
  std::vector<TrackPoint> points;
  std::vector<TrackTie> ties = {};  // a default, so {id, points} still makes a Track
};

// Heights a track point may have (R☉): an analyst's leading edge, from the limb to far
// beyond any coronagraph (common practice).
inline constexpr double kTrackHeightRangeRs[2] = {1.0, 300.0};

// Heights of a tie's clicks (R☉): anywhere on a frame, Sun centre included.
inline constexpr double kTieHeightRangeRs[2] = {0.0, 300.0};

// Reads a track file strictly: InputError naming the file and the key at fault (unknown
// keys with the nearest known one, `schema` "occulta.track/1" and `event_id` required,
// view names as is_safe_name, pa_deg 0–360, height_rs within kTrackHeightRangeRs; a
// tie's click heights within kTieHeightRangeRs, lon_deg −180–180, lat_deg −90–90,
// distance_rs 0–300 and miss_rs ≥ 0). Files without `ties` (older ones) read as no ties.
Track read_track(const std::filesystem::path& path);

// What a track is checked against: one view of the event and its frames' time span
// (unknown when no frame time could be read).
struct ViewSpan {
  std::string name;
  std::optional<double> first_utc_s, last_utc_s;
};
// InputError(file, …) when the track belongs to another event, names a view the event
// lacks (suggesting the nearest), or has a point or tie click outside its view's frames'
// time span.
void check_track_matches(const Track& track, const std::string& file, const std::string& event_id,
                         const std::vector<ViewSpan>& views);
// Writes `ties` only when there are some: measure's track.json is as before.
void write_track(const std::filesystem::path& path, const Track& track);

}  // namespace occulta::fit
