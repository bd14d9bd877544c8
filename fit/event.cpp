#include "fit/event.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <sstream>
#include <glob.h>

#include "fit/arrival_json.hpp"
#include "fit/json_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/fits.hpp"
#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
namespace fs = std::filesystem;
using nlohmann::json;
using imaging::InputError;

namespace {

bool looks_like_fits_name(const fs::path& path) {
  std::string name = path.filename().string();
  std::transform(name.begin(), name.end(), name.begin(), [](unsigned char c) { return std::tolower(c); });
  for (const char* suffix : {".fits", ".fit", ".fts", ".fz", ".fits.gz"}) {
    const std::string s(suffix);
    if (name.size() > s.size() && name.compare(name.size() - s.size(), s.size(), s) == 0) return true;
  }
  return false;
}

// POSIX glob(3): the shell's own pattern rules, sorted matches.
std::vector<fs::path> expand(const fs::path& base, const std::string& pattern) {
  const fs::path full = fs::path(pattern).is_absolute() ? fs::path(pattern) : base / pattern;
  glob_t found{};
  std::vector<fs::path> files;
  if (glob(full.c_str(), 0, nullptr, &found) == 0)
    for (size_t i = 0; i < found.gl_pathc; ++i)
      if (fs::is_regular_file(found.gl_pathv[i])) files.emplace_back(found.gl_pathv[i]);
  globfree(&found);
  return files;
}

double time_field(const json& object, const char* key, const std::string& where, const std::string& file) {
  if (!object.contains(key) || !object[key].is_string())
    throw InputError(file, "`" + where + key + "` must be an ISO 8601 UTC time in quotes, e.g. \"2031-03-14T06:00:00\"");
  const std::string text = object[key].get<std::string>();
  try {
    return imaging::utc_seconds_from_iso(text);
  } catch (const std::invalid_argument& e) {
    throw InputError(file, "`" + where + key + "` is \"" + text + "\" — " + e.what());
  }
}

std::string format(double x) {
  std::ostringstream text;
  text << x;
  return text.str();
}

double checked(const json& value, const std::string& name, double lo, double hi, const char* unit,
               const std::string& file) {
  if (!value.is_number()) throw InputError(file, "`" + name + "` must be a number (" + unit + ")");
  const double x = value.get<double>();
  if (!std::isfinite(x) || x < lo || x > hi)
    throw InputError(file, "`" + name + "` is " + format(x) + ", outside the allowed " + format(lo) + " to " +
                               format(hi) + " " + unit);
  return x;
}

std::array<double, 2> pair_field(const json& value, const std::string& name, double lo, double hi, const char* unit,
                                 const std::string& file) {
  if (!value.is_array() || value.size() != 2)
    throw InputError(file, "`" + name + "` must be a pair of numbers [a, b] (" + unit + ")");
  return {checked(value[0], name + "[0]", lo, hi, unit, file), checked(value[1], name + "[1]", lo, hi, unit, file)};
}

double number_field(const json& object, const char* key, const std::string& where, double lo, double hi,
                    const char* unit, const std::string& file) {
  if (!object.contains(key)) throw InputError(file, "`" + where + key + "` is missing");
  return checked(object[key], where + key, lo, hi, unit, file);
}

}  // namespace

Event read_event(const fs::path& path) {
  const std::string file = path.string();
  const json doc = read_json_file(path);
  if (!doc.is_object()) throw InputError(file, "must hold one JSON object, an event file's {id, views, …}");
  require_kind(doc, "event", file, "an event file is needed here");
  check_keys(doc, {"schema", "id", "views", "window", "base_time", "source", "forecast"}, "", file);
  if (doc.contains("schema") && doc["schema"] != "occulta.event/1")
    throw InputError(file, "`schema` is " + doc["schema"].dump() + " — an event file's is \"occulta.event/1\"");

  Event event;
  event.path = path;
  if (!doc.contains("id") || !doc["id"].is_string()) throw InputError(file, "`id` must be a string naming the event");
  event.id = doc["id"].get<std::string>();
  check_safe_name(event.id, "id", file);
  if (!doc.contains("views") || !doc["views"].is_array() || doc["views"].empty())
    throw InputError(file, "`views` must be a non-empty list of {name, files}");

  const fs::path base = path.parent_path().empty() ? fs::path(".") : path.parent_path();
  for (size_t i = 0; i < doc["views"].size(); ++i) {
    const json& v = doc["views"][i];
    const std::string where = "views[" + std::to_string(i) + "].";
    if (!v.is_object()) throw InputError(file, "`" + where.substr(0, where.size() - 1) + "` must be an object {name, files}");
    check_keys(v, {"name", "files", "observer", "occulter_rs"}, where.substr(0, where.size() - 1), file);
    EventView view;
    if (!v.contains("name") || !v["name"].is_string()) throw InputError(file, "`" + where + "name` must be a string");
    view.name = v["name"].get<std::string>();
    check_safe_name(view.name, where + "name", file);
    for (const auto& other : event.views)
      if (other.name == view.name) throw InputError(file, "`" + where + "name` \"" + view.name + "\" is used twice");
    if (!v.contains("files")) throw InputError(file, "`" + where + "files` is missing");
    const json files = v["files"].is_string() ? json::array({v["files"]}) : v["files"];
    if (!files.is_array() || files.empty())
      throw InputError(file, "`" + where + "files` must be a glob or a list of globs");
    for (const json& g : files) {
      if (!g.is_string() || g.get<std::string>().empty())
        throw InputError(file, "`" + where + "files` must hold non-empty strings (globs)");
      view.globs.push_back(g.get<std::string>());
      for (auto& f : expand(base, view.globs.back())) view.files.push_back(std::move(f));
    }
    std::sort(view.files.begin(), view.files.end());
    view.files.erase(std::unique(view.files.begin(), view.files.end()), view.files.end());
    if (v.contains("observer")) {
      const json& o = v["observer"];
      const std::string ow = where + "observer.";
      if (!o.is_object()) throw InputError(file, "`" + where + "observer` must be an object {lon_deg, lat_deg, dist_au}");
      check_keys(o, {"lon_deg", "lat_deg", "dist_au"}, where + "observer", file);
      const double dist_au = number_field(o, "dist_au", ow, 0.05, 100.0, "au", file);
      view.observer = imaging::observer_from_degrees(number_field(o, "lon_deg", ow, -180.0, 360.0, "deg", file),
                                                     number_field(o, "lat_deg", ow, -90.0, 90.0, "deg", file),
                                                     dist_au * kAuKm);
    }
    if (v.contains("occulter_rs")) {
      view.occulter_rs = pair_field(v["occulter_rs"], where + "occulter_rs", 1.0, 300.0, "R☉", file);
      if (!((*view.occulter_rs)[1] > (*view.occulter_rs)[0]))
        throw InputError(file, "`" + where + "occulter_rs` must be [inner, outer] with inner < outer (R☉)");
    }
    event.views.push_back(std::move(view));
  }

  if (doc.contains("window")) {
    const json& w = doc["window"];
    if (!w.is_object()) throw InputError(file, "`window` must be an object {start, end}");
    check_keys(w, {"start", "end"}, "window", file);
    event.window_s = std::array<double, 2>{time_field(w, "start", "window.", file), time_field(w, "end", "window.", file)};
    if ((*event.window_s)[1] < (*event.window_s)[0]) throw InputError(file, "`window.end` comes before `window.start`");
  }
  if (doc.contains("base_time")) event.base_time_s = time_field(doc, "base_time", "", file);
  if (doc.contains("source")) {
    const json& s = doc["source"];
    if (!s.is_object()) throw InputError(file, "`source` must be an object {lon_deg, lat_deg}");
    check_keys(s, {"lon_deg", "lat_deg"}, "source", file);
    event.source_deg = std::array<double, 2>{number_field(s, "lon_deg", "source.", -180.0, 360.0, "deg", file),
                                             number_field(s, "lat_deg", "source.", -90.0, 90.0, "deg", file)};
  }
  if (doc.contains("forecast")) {
    event.forecast = doc["forecast"];
    // Checked now, not when the fit reaches it: targets are placed at some time; any will do.
    read_forecast_block(event.forecast, event.window_s ? (*event.window_s)[0] : 0.0, file);
  }
  return event;
}

WindowSplit apply_window(const Event& event, const EventView& view, bool with_span) {
  WindowSplit split;
  if (!event.window_s && !with_span) {
    split.inside = view.files;
    return split;
  }
  for (const fs::path& f : view.files) {
    std::optional<double> utc_s;
    try {
      utc_s = imaging::read_frame_time(imaging::read_fits_header(f), f.string()).utc_s;
    } catch (const InputError&) {
      // Unreadable here: the chain reads it again and reports the fault.
    }
    if (utc_s && event.window_s && (*utc_s < (*event.window_s)[0] || *utc_s > (*event.window_s)[1])) {
      split.outside.push_back(f);
      continue;
    }
    split.inside.push_back(f);
    if (utc_s) {
      split.first_utc_s = std::min(split.first_utc_s.value_or(*utc_s), *utc_s);
      split.last_utc_s = std::max(split.last_utc_s.value_or(*utc_s), *utc_s);
    }
  }
  return split;
}

imaging::ChainOptions chain_options(const Event& event, const EventView& view, int median_filter) {
  imaging::ChainOptions chain;
  chain.observer = view.observer;
  if (view.occulter_rs) chain.occulter_rs = std::make_pair((*view.occulter_rs)[0], (*view.occulter_rs)[1]);
  chain.base_time_utc_s = event.base_time_s;
  chain.median_filter = median_filter;
  return chain;
}

// A folder of frames as an event: views grouped by who observed (OBSRVTRY, else
// TELESCOP, else the observer's Stonyhurst position rounded to 1°).
Event event_from_folder(const std::filesystem::path& dir) {
  Event event;
  event.path = dir;
  event.id = std::filesystem::absolute(dir).lexically_normal().filename().string();
  // The id names files (track.json's event_id): the one safe-name rule of fit/strict_json.hpp.
  event.id = fit::safe_name_from(event.id, "event");
  std::map<std::string, EventView> views;
  for (const std::filesystem::path& file : collect_fits_paths({dir.string()})) {
    std::string name;
    try {
      const imaging::Header header = imaging::read_fits_header(file);
      if (auto o = header.text("OBSRVTRY"); o && !o->empty()) name = *o;
      else if (auto t = header.text("TELESCOP"); t && !t->empty()) name = *t;
      else if (auto lon = header.number("HGLN_OBS"), lat = header.number("HGLT_OBS"); lon && lat) {
        char key[64];
        std::snprintf(key, sizeof key, "lon%+.0f_lat%+.0f", *lon, *lat);
        name = key;
      } else {
        name = "unknown-observer";
      }
    } catch (const imaging::InputError&) {
      name = "unreadable";  // the chain reports each such frame
    }
    name = fit::safe_name_from(name, "unknown-observer");
    EventView& view = views[name];
    view.name = name;
    view.files.push_back(file);
  }
  if (views.empty()) throw imaging::InputError(dir.string(), "holds no FITS files");
  for (auto& [name, view] : views) event.views.push_back(std::move(view));
  return event;
}

std::vector<fs::path> collect_fits_paths(const std::vector<std::string>& paths) {
  std::vector<fs::path> files;
  for (const auto& given : paths) {
    std::error_code ec;
    if (fs::is_directory(given, ec)) {
      std::vector<fs::path> found;
      for (fs::recursive_directory_iterator it(given, fs::directory_options::skip_permission_denied, ec), end;
           !ec && it != end; it.increment(ec)) {
        if (it->is_regular_file(ec) && looks_like_fits_name(it->path())) found.push_back(it->path());
      }
      std::sort(found.begin(), found.end());
      files.insert(files.end(), found.begin(), found.end());
    } else {
      files.emplace_back(given);  // a file, or a path that does not exist: reported later
    }
  }
  return files;
}

}  // namespace occulta::fit
