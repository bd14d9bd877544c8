#include "fit/track.hpp"

#include <algorithm>
#include <cmath>

#include "fit/json_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
using nlohmann::json;
using imaging::InputError;

Track read_track(const std::filesystem::path& path) {
  const std::string file = path.string();
  const json doc = read_json_file(path);
  if (!doc.is_object()) throw InputError(file, "must hold one JSON object, a track file's {schema, event_id, points}");
  require_kind(doc, "track", file, "a track file is needed here");
  check_keys(doc, {"schema", "event_id", "points"}, "", file);
  if (doc.value("schema", json()) != "occulta.track/1")
    throw InputError(file, "`schema` is " + (doc.contains("schema") ? doc["schema"].dump() : std::string("missing")) +
                               " — a track file's is \"occulta.track/1\"");
  if (!doc.contains("event_id") || !doc["event_id"].is_string())
    throw InputError(file, "`event_id` must be a string naming the event the points belong to");
  if (!doc.contains("points") || !doc["points"].is_array()) throw InputError(file, "`points` must be a list");
  Track track;
  track.event_id = doc["event_id"].get<std::string>();
  check_safe_name(track.event_id, "event_id", file);
  for (size_t i = 0; i < doc["points"].size(); ++i) {
    const json& p = doc["points"][i];
    const std::string where = "points[" + std::to_string(i) + "]";
    if (!p.is_object()) throw InputError(file, "`" + where + "` must be an object {view, time, pa_deg, height_rs}");
    check_keys(p, {"view", "time", "pa_deg", "height_rs", "origin"}, where, file);
    for (const char* key : {"view", "time", "pa_deg", "height_rs"})
      if (!p.contains(key)) throw InputError(file, "`" + where + "." + key + "` is missing");
    if (!p["view"].is_string()) throw InputError(file, "`" + where + ".view` must be a string");
    TrackPoint t;
    t.view = p["view"].get<std::string>();
    check_safe_name(t.view, where + ".view", file);
    if (!p["time"].is_string()) throw InputError(file, "`" + where + ".time` must be an ISO 8601 UTC time in quotes");
    try {
      t.utc_s = imaging::utc_seconds_from_iso(p["time"].get<std::string>());
    } catch (const std::invalid_argument& e) {
      throw InputError(file, "`" + where + ".time` is \"" + p["time"].get<std::string>() + "\" — " + e.what());
    }
    if (!p["pa_deg"].is_number() || !p["height_rs"].is_number())
      throw InputError(file, "`" + where + "` needs numbers for pa_deg and height_rs");
    t.pa_deg = p["pa_deg"].get<double>();
    t.height_rs = p["height_rs"].get<double>();
    if (!(t.pa_deg >= 0.0 && t.pa_deg <= 360.0))
      throw InputError(file, "`" + where + ".pa_deg` is " + p["pa_deg"].dump() + ", outside the allowed 0 to 360 deg");
    if (!(t.height_rs >= kTrackHeightRangeRs[0] && t.height_rs <= kTrackHeightRangeRs[1]))
      throw InputError(file, "`" + where + ".height_rs` is " + p["height_rs"].dump() + ", outside the allowed 1 to 300 R☉");
    t.pa_deg = std::fmod(t.pa_deg, 360.0);
    if (p.contains("origin") && !p["origin"].is_string())
      throw InputError(file, "`" + where + ".origin` must be \"analyst\" or \"auto\"");
    t.origin = p.value("origin", std::string("analyst"));
    if (t.origin != "analyst" && t.origin != "auto")
      throw InputError(file, "`" + where + ".origin` is \"" + t.origin + "\" — use \"analyst\" or \"auto\"");
    track.points.push_back(t);
  }
  return track;
}

void check_track_matches(const Track& track, const std::string& file, const std::string& event_id,
                         const std::vector<ViewSpan>& views) {
  if (track.event_id != event_id)
    throw InputError(file, "is a track of event \"" + track.event_id + "\", not of \"" + event_id + "\"");
  std::vector<std::string> names;
  for (const ViewSpan& v : views) names.push_back(v.name);
  for (size_t i = 0; i < track.points.size(); ++i) {
    const TrackPoint& p = track.points[i];
    const std::string where = "points[" + std::to_string(i) + "]";
    const auto view = std::find_if(views.begin(), views.end(), [&](const ViewSpan& v) { return v.name == p.view; });
    if (view == views.end()) {
      const std::string near = nearest_word(p.view, names);
      throw InputError(file, "`" + where + ".view` \"" + p.view + "\" is not a view of event \"" + event_id + "\"" +
                                 (near.empty() ? "" : " — did you mean \"" + near + "\"?"));
    }
    // A point is clicked on a frame: its time is a frame's time, to within a second.
    if (view->first_utc_s && view->last_utc_s &&
        (p.utc_s < *view->first_utc_s - 1.0 || p.utc_s > *view->last_utc_s + 1.0))
      throw InputError(file, "`" + where + ".time` " + imaging::iso_from_utc_seconds(p.utc_s, 3) +
                                 " lies outside view " + p.view + "'s frames, " +
                                 imaging::iso_from_utc_seconds(*view->first_utc_s, 3) + " to " +
                                 imaging::iso_from_utc_seconds(*view->last_utc_s, 3));
  }
}

void write_track(const std::filesystem::path& path, const Track& track) {
  json points = json::array();
  for (const TrackPoint& p : track.points)
    points.push_back({{"view", p.view},
                      {"time", imaging::iso_from_utc_seconds(p.utc_s, 3)},
                      {"pa_deg", p.pa_deg},
                      {"height_rs", p.height_rs},
                      {"origin", p.origin}});
  write_json_file(path, {{"schema", "occulta.track/1"}, {"event_id", track.event_id}, {"points", points}});
}

}  // namespace occulta::fit
