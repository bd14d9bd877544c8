#include "app/track.hpp"

#include <cmath>

#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
using nlohmann::json;

Track read_track(const std::filesystem::path& path) {
  const std::string file = path.string();
  const json doc = fit::read_json_file(path);
  if (!doc.is_object() || !doc.contains("points") || !doc["points"].is_array())
    throw imaging::InputError(file, "must hold an object with a list \"points\"");
  Track track;
  if (doc.contains("event_id") && doc["event_id"].is_string()) track.event_id = doc["event_id"].get<std::string>();
  for (size_t i = 0; i < doc["points"].size(); ++i) {
    const json& p = doc["points"][i];
    const std::string where = "points[" + std::to_string(i) + "]";
    if (!p.is_object() || !p.contains("view") || !p["view"].is_string() || !p.contains("time") ||
        !p["time"].is_string() || !p.contains("pa_deg") || !p["pa_deg"].is_number() || !p.contains("height_rs") ||
        !p["height_rs"].is_number())
      throw imaging::InputError(file, where + " needs view, time, pa_deg and height_rs");
    TrackPoint t;
    t.view = p["view"].get<std::string>();
    try {
      t.utc_s = imaging::utc_seconds_from_iso(p["time"].get<std::string>());
    } catch (const std::invalid_argument& e) {
      throw imaging::InputError(file, where + ".time is \"" + p["time"].get<std::string>() + "\" — " + e.what());
    }
    t.pa_deg = p["pa_deg"].get<double>();
    t.height_rs = p["height_rs"].get<double>();
    if (!std::isfinite(t.pa_deg) || !std::isfinite(t.height_rs) || t.height_rs <= 0.0)
      throw imaging::InputError(file, where + " has a height that is not a positive number");
    t.pa_deg = std::fmod(std::fmod(t.pa_deg, 360.0) + 360.0, 360.0);
    t.origin = p.value("origin", std::string("analyst"));
    if (t.origin != "analyst" && t.origin != "auto")
      throw imaging::InputError(file, where + ".origin is \"" + t.origin + "\" — use \"analyst\" or \"auto\"");
    track.points.push_back(t);
  }
  return track;
}

void write_track(const std::filesystem::path& path, const Track& track) {
  json points = json::array();
  for (const TrackPoint& p : track.points)
    points.push_back({{"view", p.view},
                      {"time", imaging::iso_from_utc_seconds(p.utc_s, 3)},
                      {"pa_deg", p.pa_deg},
                      {"height_rs", p.height_rs},
                      {"origin", p.origin}});
  fit::write_json_file(path, {{"schema", "occulta.track/1"}, {"event_id", track.event_id}, {"points", points}});
}

}  // namespace occulta::app
