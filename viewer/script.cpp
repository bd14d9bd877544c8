// viewer/script.cpp — see script.hpp.
#include "viewer/script.hpp"

#include <cmath>
#include <limits>
#include <set>
#include <stdexcept>

#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::viewer {
namespace {
using nlohmann::json;

// One action object being read: its arguments, checked as they are taken.
class Arguments {
 public:
  Arguments(const json& object, std::string source, std::size_t index, std::string name)
      : object_(object), source_(std::move(source)), where_("action " + std::to_string(index + 1) + " (" + name + ")") {}

  [[noreturn]] void fail(const std::string& problem) const { throw imaging::InputError(source_, where_ + ": " + problem); }

  const json& take(const char* key) {
    taken_.insert(key);
    if (!object_.contains(key)) fail(std::string("needs \"") + key + "\"");
    return object_.at(key);
  }
  bool has(const char* key) const { return object_.contains(key); }

  double number(const char* key) {
    const json& v = take(key);
    if (!v.is_number() || !std::isfinite(v.get<double>())) fail(std::string("\"") + key + "\" must be a number");
    return v.get<double>();
  }
  int integer(const char* key) {
    const json& v = take(key);
    if (!v.is_number_integer() || std::abs(v.get<double>()) > 1e9) fail(std::string("\"") + key + "\" must be a whole number");
    return v.get<int>();
  }
  bool boolean(const char* key) {
    const json& v = take(key);
    if (!v.is_boolean()) fail(std::string("\"") + key + "\" must be true or false");
    return v.get<bool>();
  }
  std::string text(const char* key) {
    const json& v = take(key);
    if (!v.is_string()) fail(std::string("\"") + key + "\" must be text");
    return v.get<std::string>();
  }

  // Every argument must have been taken: a misspelt one is a fault, not a default.
  void finish() const {
    for (const auto& [key, value] : object_.items())
      if (key != "do" && !taken_.count(key)) fail("has no argument \"" + key + "\"");
  }

 private:
  const json& object_;
  std::string source_;
  std::string where_;
  std::set<std::string> taken_;
};

std::string joined_display_names() {
  std::string names;
  for (Display d : displays()) names += (names.empty() ? "" : ", ") + std::string(display_name(d));
  return names;
}

std::string joined_table_names() {
  std::string names;
  for (ColourTable t : colour_tables()) names += (names.empty() ? "" : ", ") + std::string(colour_table_name(t));
  return names;
}

double iso_time(Arguments& args, const char* key) {
  const std::string time = args.text(key);
  try {
    return imaging::utc_seconds_from_iso(time);
  } catch (const std::invalid_argument& e) {
    args.fail(std::string("\"") + key + "\" \"" + time + "\" is not an ISO 8601 UTC time: " + e.what());
  }
}

Action parse_action(const json& item, const std::string& source, std::size_t index) {
  const std::string where = "action " + std::to_string(index + 1);
  if (!item.is_object()) throw imaging::InputError(source, where + " is not an object {\"do\": …}");
  if (!item.contains("do") || !item.at("do").is_string())
    throw imaging::InputError(source, where + " has no \"do\" naming what to do");
  const std::string name = item.at("do").get<std::string>();
  Arguments args(item, source, index, name);
  Action action = action::Quit{};
  if (name == "frame") {
    action = action::Frame{args.integer("index")};
  } else if (name == "step") {
    action::Step step{args.integer("by"), false};
    if (args.has("wrap")) step.wrap = args.boolean("wrap");
    action = step;
  } else if (name == "display") {
    const std::string mode = args.text("mode");
    const auto display = display_named(mode);
    if (!display) args.fail("mode \"" + mode + "\" is not one of " + joined_display_names());
    action = action::ShowDisplay{*display};
  } else if (name == "view") {
    std::string view = args.text("name");
    if (view == "all") view.clear();
    action = action::Focus{view};
  } else if (name == "contrast") {
    const double lo = args.number("lo_sigma"), hi = args.number("hi_sigma");
    if (!(lo < hi)) args.fail("lo_sigma must be below hi_sigma");
    action = action::Contrast{lo, hi};
  } else if (name == "colours") {
    const std::string table = args.text("table");
    const auto found = colour_table_named(table);
    if (!found) args.fail("table \"" + table + "\" is not one of " + joined_table_names());
    action = action::Colours{*found};
  } else if (name == "play") {
    action = action::Play{};
  } else if (name == "pause") {
    action = action::Pause{};
  } else if (name == "resize") {
    const int w = args.integer("width"), h = args.integer("height");
    if (w < kMinWindowPx || h < kMinWindowPx || w > kMaxWindowPx || h > kMaxWindowPx)
      args.fail("width and height must be between " + std::to_string(kMinWindowPx) + " and " +
                std::to_string(kMaxWindowPx) + " pixels");
    action = action::Resize{w, h};
  } else if (name == "hover") {
    action = action::HoverAt{args.text("view"), args.number("x"), args.number("y")};
  } else if (name == "leave") {
    action = action::Leave{};
  } else if (name == "quit") {
    action = action::Quit{};
  } else if (name == "point") {
    const std::string view = args.text("view");
    const double utc_s = iso_time(args, "time");
    action = action::AddPoint{view, utc_s, args.number("pa_deg"), args.number("height_rs")};
  } else if (name == "move") {
    action = action::MovePoint{args.integer("index"), args.number("pa_deg"), args.number("height_rs")};
  } else if (name == "select") {
    action = action::SelectPoint{args.integer("index")};
  } else if (name == "delete") {
    action = action::DeletePoint{args.has("index") ? args.integer("index") : -1};
  } else if (name == "undo") {
    action = action::Undo{};
  } else if (name == "redo") {
    action = action::Redo{};
  } else if (name == "shell") {
    action::SetShell change;
    if (args.has("shown")) change.shown = args.boolean("shown");
    const std::pair<const char*, std::optional<double> action::SetShell::*> numbers[] = {
        {"lon_deg", &action::SetShell::lon_deg},
        {"lat_deg", &action::SetShell::lat_deg},
        {"tilt_deg", &action::SetShell::tilt_deg},
        {"half_angle_deg", &action::SetShell::half_angle_deg},
        {"aspect_ratio", &action::SetShell::aspect_ratio},
        {"apex_height_rs", &action::SetShell::apex_height_rs},
        {"speed_km_s", &action::SetShell::speed_km_s},
        {"accel_m_s2", &action::SetShell::accel_m_s2}};
    for (const auto& [key, member] : numbers)
      if (args.has(key)) change.*member = args.number(key);
    if (args.has("ref_time")) change.ref_utc_s = iso_time(args, "ref_time");
    action = change;
  } else if (name == "tie_mode") {
    action = action::TieMode{args.boolean("on")};
  } else if (name == "clear_ties") {
    action = action::ClearTies{};
  } else if (name == "tie") {
    const auto place = [&](const char* key) {
      const json& p = args.take(key);
      if (!p.is_object()) args.fail(std::string("\"") + key + "\" must be {\"view\", \"time\", \"pa_deg\", \"height_rs\"}");
      Arguments inner(p, source, index, name + " " + key);
      const std::string view = inner.text("view");
      const double utc_s = iso_time(inner, "time");
      action::AddPoint at{view, utc_s, inner.number("pa_deg"), inner.number("height_rs")};
      inner.finish();
      return at;
    };
    action = action::Tie{place("a"), place("b")};
  } else if (name == "fit") {
    std::string points;
    if (args.has("points")) {
      points = args.text("points");
      if (points != "analyst" && points != "auto" && points != "both") args.fail("\"points\" must be analyst, auto or both");
    }
    action = action::Fit{points};
  } else if (name == "adopt") {
    action = action::Adopt{args.has("index") ? args.integer("index") : -1};
  } else if (name == "save_track" || name == "load_track") {
    const std::string path = args.text("path");
    if (path.empty()) args.fail("\"path\" must name a file");
    action = name == "save_track" ? Action{action::SaveTrack{path}} : Action{action::LoadTrack{path}};
  } else if (name == "height_time_pa") {
    action = action::HeightTimePa{args.has("pa_deg") ? args.number("pa_deg") : std::numeric_limits<double>::quiet_NaN()};
  } else if (name == "cme") {
    const int number = args.integer("index");
    if (number < 1) args.fail("\"index\" counts the CMEs from 1, as result.json's cmes[].index");
    action = action::PickCme{number};
  } else if (name == "help") {
    action = action::Help{args.boolean("shown")};
  } else if (name == "export") {
    const std::string dir = args.text("dir");
    if (dir.empty()) args.fail("\"dir\" must name a folder");
    action = action::Export{dir};
  } else if (name == "click") {
    const double x = args.number("x"), y = args.number("y");
    if (std::abs(x) > kMaxWindowPx || std::abs(y) > kMaxWindowPx) args.fail("x and y must be window pixels");
    action = action::Click{float(x), float(y)};
  } else {
    throw imaging::InputError(source, where + ": \"" + name +
                                          "\" is not an action (frame, step, display, view, contrast, colours, "
                                          "play, pause, resize, hover, leave, quit, point, move, select, delete, "
                                          "undo, redo, click, shell, tie_mode, tie, clear_ties, fit, adopt, save_track, "
                                          "load_track, export, help, height_time_pa, cme)");
  }
  args.finish();
  return action;
}

}  // namespace

std::vector<Action> parse_script(const nlohmann::json& script, const std::string& source) {
  if (!script.is_array()) throw imaging::InputError(source, "must be a JSON list of actions [{\"do\": …}, …]");
  std::vector<Action> actions;
  for (std::size_t i = 0; i < script.size(); ++i) actions.push_back(parse_action(script[i], source, i));
  return actions;
}

std::vector<Action> read_script(const std::filesystem::path& path) {
  return parse_script(fit::read_json_file(path), path.string());
}

}  // namespace occulta::viewer
