#include "fit/track.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <utility>

#include "fit/json_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
using nlohmann::json;
using imaging::InputError;

namespace {

// A place on a view's frame: a point's or a tie click's view, time, PA and height.
TieClick read_place(const json& p, const std::string& where, const std::string& file, const double (&height_range_rs)[2]) {
  for (const char* key : {"view", "time", "pa_deg", "height_rs"})
    if (!p.contains(key)) throw InputError(file, "`" + where + "." + key + "` is missing");
  if (!p["view"].is_string()) throw InputError(file, "`" + where + ".view` must be a string");
  TieClick t;
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
  if (!(t.height_rs >= height_range_rs[0] && t.height_rs <= height_range_rs[1])) {
    char range[64];
    std::snprintf(range, sizeof range, "%g to %g", height_range_rs[0], height_range_rs[1]);
    throw InputError(file, "`" + where + ".height_rs` is " + p["height_rs"].dump() + ", outside the allowed " + range + " R☉");
  }
  t.pa_deg = std::fmod(t.pa_deg, 360.0);
  return t;
}

// A number of a tie within [lo, hi].
double read_number(const json& tie, const char* key, double lo, double hi, const std::string& where, const std::string& file) {
  if (!tie.contains(key)) throw InputError(file, "`" + where + "." + key + "` is missing");
  if (!tie[key].is_number()) throw InputError(file, "`" + where + "." + key + "` must be a number");
  const double value = tie[key].get<double>();
  if (!(value >= lo && value <= hi)) {
    char range[64];
    std::snprintf(range, sizeof range, "%g to %g", lo, hi);
    throw InputError(file, "`" + where + "." + key + "` is " + tie[key].dump() + ", outside the allowed " + range);
  }
  return value;
}

json place_json(const std::string& view, double utc_s, double pa_deg, double height_rs) {
  return {{"view", view}, {"time", imaging::iso_from_utc_seconds(utc_s, 3)}, {"pa_deg", pa_deg}, {"height_rs", height_rs}};
}

}  // namespace

Track read_track(const std::filesystem::path& path) {
  const std::string file = path.string();
  const json doc = read_json_file(path);
  if (!doc.is_object()) throw InputError(file, "must hold one JSON object, a track file's {schema, event_id, points}");
  require_kind(doc, "track", file, "a track file is needed here");
  check_keys(doc, {"schema", "event_id", "points", "ties"}, "", file);
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
    const TieClick place = read_place(p, where, file, kTrackHeightRangeRs);
    TrackPoint t{place.view, place.utc_s, place.pa_deg, place.height_rs};
    if (p.contains("origin") && !p["origin"].is_string())
      throw InputError(file, "`" + where + ".origin` must be \"analyst\" or \"auto\"");
    t.origin = p.value("origin", std::string("analyst"));
    if (t.origin != "analyst" && t.origin != "auto")
      throw InputError(file, "`" + where + ".origin` is \"" + t.origin + "\" — use \"analyst\" or \"auto\"");
    track.points.push_back(t);
  }
  if (doc.contains("ties") && !doc["ties"].is_array()) throw InputError(file, "`ties` must be a list");
  for (size_t i = 0; doc.contains("ties") && i < doc["ties"].size(); ++i) {
    const json& t = doc["ties"][i];
    const std::string where = "ties[" + std::to_string(i) + "]";
    if (!t.is_object())
      throw InputError(file, "`" + where + "` must be an object {a, b, lon_deg, lat_deg, distance_rs, miss_rs}");
    check_keys(t, {"a", "b", "lon_deg", "lat_deg", "distance_rs", "miss_rs"}, where, file);
    TrackTie tie;
    for (const char* end : {"a", "b"}) {
      const std::string at = where + "." + end;
      if (!t.contains(end) || !t[end].is_object())
        throw InputError(file, "`" + at + "` must be an object {view, time, pa_deg, height_rs}");
      check_keys(t[end], {"view", "time", "pa_deg", "height_rs"}, at, file);
      (end[0] == 'a' ? tie.a : tie.b) = read_place(t[end], at, file, kTieHeightRangeRs);
    }
    if (tie.a.view == tie.b.view)
      throw InputError(file, "`" + where + "` ties view " + tie.a.view + " to itself; a tie needs two views");
    tie.lon_deg = read_number(t, "lon_deg", -180.0, 180.0, where, file);
    tie.lat_deg = read_number(t, "lat_deg", -90.0, 90.0, where, file);
    tie.distance_rs = read_number(t, "distance_rs", 0.0, kTieHeightRangeRs[1], where, file);
    tie.miss_rs = read_number(t, "miss_rs", 0.0, kTieHeightRangeRs[1], where, file);
    track.ties.push_back(tie);
  }
  return track;
}

void check_track_matches(const Track& track, const std::string& file, const std::string& event_id,
                         const std::vector<ViewSpan>& views) {
  if (track.event_id != event_id)
    throw InputError(file, "is a track of event \"" + track.event_id + "\", not of \"" + event_id + "\"");
  std::vector<std::string> names;
  for (const ViewSpan& v : views) names.push_back(v.name);
  // Every point, then each tie's two clicks: each a place on one of the event's views' frames.
  std::vector<std::pair<std::string, TieClick>> places;
  for (size_t i = 0; i < track.points.size(); ++i) {
    const TrackPoint& p = track.points[i];
    places.push_back({"points[" + std::to_string(i) + "]", {p.view, p.utc_s, p.pa_deg, p.height_rs}});
  }
  for (size_t i = 0; i < track.ties.size(); ++i) {
    places.push_back({"ties[" + std::to_string(i) + "].a", track.ties[i].a});
    places.push_back({"ties[" + std::to_string(i) + "].b", track.ties[i].b});
  }
  for (const auto& place : places) {
    const std::string& where = place.first;
    const TieClick& p = place.second;  // not a structured binding: clang 14 cannot capture those
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
  for (const TrackPoint& p : track.points) {
    json point = place_json(p.view, p.utc_s, p.pa_deg, p.height_rs);
    point["origin"] = p.origin;
    points.push_back(point);
  }
  json doc = {{"schema", "occulta.track/1"}, {"event_id", track.event_id}, {"points", points}};
  for (const TrackTie& t : track.ties)
    doc["ties"].push_back({{"a", place_json(t.a.view, t.a.utc_s, t.a.pa_deg, t.a.height_rs)},
                           {"b", place_json(t.b.view, t.b.utc_s, t.b.pa_deg, t.b.height_rs)},
                           {"lon_deg", t.lon_deg},
                           {"lat_deg", t.lat_deg},
                           {"distance_rs", t.distance_rs},
                           {"miss_rs", t.miss_rs}});
  write_json_file(path, doc);
}

}  // namespace occulta::fit
