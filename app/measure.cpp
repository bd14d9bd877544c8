#include "app/measure.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <map>
#include <ostream>
#include <sstream>

#include <opencv2/imgproc.hpp>

#include "app/event.hpp"
#include "app/output_set.hpp"
#include "app/forecast.hpp"
#include "app/inspect.hpp"
#include "app/provenance.hpp"
#include "app/quicklook.hpp"
#include "app/shell_report.hpp"
#include "app/track.hpp"
#include "fit/arrival_json.hpp"
#include "fit/json_file.hpp"
#include "fit/kinematics.hpp"
#include "imaging/chain.hpp"
#include "imaging/constants.hpp"
#include "imaging/front.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;

namespace {

// A folder of frames as an event: views grouped by who observed (OBSRVTRY, else
// TELESCOP, else the observer's Stonyhurst position rounded to 1°).
Event event_from_folder(const fs::path& dir) {
  Event event;
  event.path = dir;
  event.id = fs::absolute(dir).lexically_normal().filename().string();
  if (event.id.empty()) event.id = "event";
  std::map<std::string, EventView> views;
  for (const fs::path& file : collect_fits_paths({dir.string()})) {
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
    for (char& c : name)
      if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_') c = '_';
    EventView& view = views[name];
    view.name = name;
    view.files.push_back(file);
  }
  if (views.empty()) throw imaging::InputError(dir.string(), "holds no FITS files");
  for (auto& [name, view] : views) event.views.push_back(std::move(view));
  return event;
}

json number_or_null(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }
json time_or_null(const fit::HeightCrossing& c) {
  return c.found && std::isfinite(c.time_s) ? json(imaging::iso_from_utc_seconds(c.time_s, 0)) : json(nullptr);
}

struct ViewOutcome {
  json entry;
  std::vector<TrackPoint> used;
  ViewForShell for_shell;
};

// Quicklook: the time–height map at the track's PA with the track points (yellow) and
// the fitted law (red) drawn over it.
void draw_time_height(const imaging::PolarSequence& polar, double pa_deg, const std::vector<TrackPoint>& points,
                      const fit::HeightTimeFit* fit, const std::string& caption, const fs::path& path) {
  const imaging::TimeMap th = imaging::time_height(polar, pa_deg, 2.0);
  const double t0 = polar.utc_s.front(), t1 = polar.utc_s.back();
  const int columns = std::max<int>(360, int(polar.utc_s.size()) * 16);
  const cv::Mat values = imaging::render_on_time_axis(th, t0, t1, columns);
  const int scale = picture_scale(values);
  cv::Mat picture;
  cv::cvtColor(grey_picture(values, 4.0), picture, cv::COLOR_GRAY2BGR);
  const auto at = [&](double t, double h) {
    const double x = t1 > t0 ? (t - t0) / (t1 - t0) * (columns - 1) : 0.0;
    return picture_point(x, (h - th.axis_start) / th.axis_step, values.rows, scale);
  };
  if (fit && fit->status == fit::FitStatus::ok) {
    std::vector<cv::Point> line;
    for (int k = 0; k <= 100; ++k) {
      const double t = t0 + (t1 - t0) * k / 100.0;
      line.push_back(at(t, fit->law.height_at(t)));
    }
    cv::polylines(picture, line, false, cv::Scalar(60, 60, 255), 2, cv::LINE_AA);
  }
  for (const TrackPoint& p : points) cv::circle(picture, at(p.utc_s, p.height_rs), 5, cv::Scalar(0, 230, 255), 2, cv::LINE_AA);
  write_png(path, with_caption(picture, caption));
}

// Quicklook: the last running difference of the CME with its leading edge (yellow) and
// the two PAs that bound it (green), north up.
void draw_front(const cv::Mat& difference, const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar,
                const imaging::Front& front, int frame, const std::string& caption, const fs::path& path) {
  const int scale = picture_scale(difference);
  cv::Mat picture;
  cv::cvtColor(grey_picture(difference, 4.0), picture, cv::COLOR_GRAY2BGR);
  const auto at = [&](double pa, double h) {
    const cv::Point2d p = imaging::grid_pixel(grid, pa, h);
    return picture_point(p.x, p.y, difference.rows, scale);
  };
  if (front.found) {
    const double outer = polar.height_rs(polar.height_count - 1);
    for (const double pa : {front.pa_from_deg, front.pa_to_deg})
      cv::line(picture, at(pa, polar.height_rs(0)), at(pa, outer), cv::Scalar(80, 220, 80), 1, cv::LINE_AA);
    if (frame >= 0 && frame < int(front.leading_edge_rs.size()))
      for (int c = 0; c < polar.pa_count; ++c) {
        const float h = front.leading_edge_rs[frame][c];
        if (std::isfinite(h)) cv::circle(picture, at(polar.pa_deg(c), h), 1, cv::Scalar(0, 230, 255), -1);
      }
  }
  write_png(path, with_caption(picture, caption));
}

ViewOutcome measure_view(const Event& event, const EventView& view, const Track* analyst, const MeasureOptions& o,
                         std::vector<std::string>& problems) {
  const imaging::ChainOptions chain = chain_options(event, view, o.median);

  imaging::PolarSequence polar;
  imaging::Observer observer;
  const imaging::ViewRun run = imaging::run_view(view.name, view.files, chain, [&](const imaging::ChainFrame& f) {
    observer = f.frame.geometry.observer;
    polar.utc_s.push_back(f.frame.utc_s);
    polar.frames.push_back(f.polar_running.clone());
  });
  polar.polar = run.polar;
  for (const auto& p : run.problems) problems.push_back(view.name + ": " + p);

  const imaging::Front front = imaging::find_front(polar);
  ViewOutcome outcome;
  json& v = outcome.entry;
  v = {{"name", view.name}, {"frames_used", run.frames_used}, {"found", front.found},
       {"central_pa_deg", nullptr}, {"pa_span_deg", nullptr}, {"sky_width_deg", nullptr},
       {"sky_speed_km_s", nullptr}, {"sky_speed_sigma_km_s", nullptr}, {"sky_accel_m_s2", nullptr},
       {"sky_accel_sigma_m_s2", nullptr}, {"kinematic_model", nullptr}, {"onset_time", nullptr},
       {"onset_sigma_s", nullptr}, {"first_seen_time", nullptr}, {"time_at_21_5_rs", nullptr}, {"track_points", 0}, {"residual_rms_rs", nullptr}};

  // The points: the analyst's for this view when given, else the automatic track.
  std::vector<TrackPoint>& points = outcome.used;
  if (analyst)
    for (const TrackPoint& p : analyst->points)
      if (p.view == view.name) points.push_back(p);
  const bool by_analyst = !points.empty();
  // The automatic track follows the front where it reaches highest (the leading edge an
  // analyst measures — common practice), not the middle of the span.
  if (!by_analyst && front.found)
    for (const imaging::TrackPoint& p : imaging::follow_track(polar, front.outermost_pa_deg, front.onset_frame))
      points.push_back({view.name, p.utc_s, p.pa_deg, p.height_rs, "auto"});
  v["track_origin"] = by_analyst ? "analyst" : "auto";

  if (front.found) {
    v["central_pa_deg"] = front.central_pa_deg;
    v["pa_span_deg"] = {front.pa_from_deg, front.pa_to_deg};
    v["sky_width_deg"] = front.width_deg;
    v["first_seen_time"] = imaging::iso_from_utc_seconds(front.onset_utc_s, 0);
  } else {
    problems.push_back("no CME found in view " + view.name + ": " + front.why_not);
  }
  if (by_analyst && !front.found) {
    double sum_sin = 0.0, sum_cos = 0.0;  // mean direction of the analyst's PAs
    for (const auto& p : points) sum_sin += std::sin(p.pa_deg * kRadPerDeg), sum_cos += std::cos(p.pa_deg * kRadPerDeg);
    v["central_pa_deg"] = std::fmod(std::atan2(sum_sin, sum_cos) * kDegPerRad + 360.0, 360.0);
  }

  fit::HeightTimeFit chosen;
  const bool have_fit = points.size() >= 2;
  if (have_fit) {
    std::vector<fit::HeightTimePoint> ht;
    for (const auto& p : points) ht.push_back({p.utc_s, p.height_rs, 0.0});
    // Robust (Huber) fits, linear unless a quadratic is substantially better (AICc).
    chosen = fit::choose_height_time_model(ht, true).chosen;
    v["track_points"] = int(points.size());
    if (chosen.status == fit::FitStatus::ok) {
      v["kinematic_model"] = fit::to_string(chosen.model);
      v["sky_speed_km_s"] = chosen.law.speed_km_s;
      v["sky_speed_sigma_km_s"] = number_or_null(chosen.speed_sigma_km_s);
      v["sky_accel_m_s2"] = chosen.law.accel_m_s2;
      v["sky_accel_sigma_m_s2"] = chosen.model == fit::HeightTimeModel::quadratic ? number_or_null(chosen.accel_sigma_m_s2)
                                                                                 : json(nullptr);
      v["onset_time"] = time_or_null(chosen.onset);
      v["onset_sigma_s"] = chosen.onset.found ? number_or_null(chosen.onset.sigma_s) : json(nullptr);
      v["time_at_21_5_rs"] = time_or_null(chosen.boundary);
      v["residual_rms_rs"] = chosen.residual_rms_rs;
    } else {
      problems.push_back(view.name + ": the height–time fit failed: " + chosen.problem);
    }
  } else if (front.found || by_analyst) {
    problems.push_back(view.name + ": too few leading-edge points for a height–time fit.");
  }

  // Quicklooks.
  const fs::path dir = fs::path(o.out_dir) / view.name;
  fs::create_directories(dir);
  const double pa = !points.empty() ? points.front().pa_deg
                    : v["central_pa_deg"].is_number() ? v["central_pa_deg"].get<double>() : 0.0;
  if (!points.empty()) v["track_pa_deg"] = pa;
  char caption[200];
  std::snprintf(caption, sizeof caption, "%s PA %.0f: height up, time across; %s track, fit line", view.name.c_str(), pa,
                by_analyst ? "analyst" : "auto");
  draw_time_height(polar, pa, points, have_fit ? &chosen : nullptr, caption, dir / "time_height.png");
  const int last = int(polar.frames.size()) - 1;
  const int shown = front.found ? std::min(front.last_frame, last) : last;
  std::snprintf(caption, sizeof caption, "%s %s running difference, +-4 sigma, north up; front and PA span",
                view.name.c_str(), imaging::iso_from_utc_seconds(polar.utc_s[shown], 0).substr(0, 16).c_str());
  draw_front(cartesian_from_polar(polar.frames[shown], run.grid, polar.polar), run.grid, polar.polar, front, shown,
             caption, dir / "front.png");

  ViewForShell& s = outcome.for_shell;
  s.name = view.name;
  s.observer = observer;
  s.grid = run.grid;
  s.front = front;
  s.polar = std::move(polar);
  if (by_analyst) s.analyst = points;
  if (have_fit && chosen.status == fit::FitStatus::ok) s.kinematic_model = fit::to_string(chosen.model);
  return outcome;
}

std::string csv_field(const json& value) {
  if (value.is_null()) return "";
  if (value.is_string()) {
    std::string text = value.get<std::string>(), quoted = "\"";
    for (char c : text) quoted += (c == '"') ? std::string("\"\"") : std::string(1, c);
    return quoted + "\"";
  }
  if (value.is_array()) {
    std::string joined;
    for (const auto& x : value) joined += (joined.empty() ? "" : ";") + x.dump();
    return joined;
  }
  return value.dump();
}

// One row: the event's keys, then each view's keys prefixed by its name.
void write_csv_row(const fs::path& path, const json& result) {
  std::vector<std::string> names = {"event_id", "status", "problems"};
  std::vector<std::string> values = {csv_field(result["event_id"]), csv_field(result["status"]),
                                     csv_field(json(std::to_string(result["problems"].size())))};
  for (const auto& v : result["views"])
    for (const char* key : {"frames_used", "found", "central_pa_deg", "pa_span_deg", "sky_width_deg", "sky_speed_km_s",
                            "sky_speed_sigma_km_s", "sky_accel_m_s2", "onset_time", "time_at_21_5_rs"}) {
      names.push_back(v["name"].get<std::string>() + "_" + key);
      values.push_back(csv_field(v[key]));
    }
  // The shell and the boundary values, flat, with their σ.
  const json& shell = result["shell"];
  for (const char* key : {"lon_deg", "lat_deg", "tilt_deg", "half_angle_deg", "aspect_ratio", "speed_km_s", "accel_m_s2",
                          "face_on_width_deg", "edge_on_width_deg"}) {
    names.push_back(std::string("shell_") + key);
    values.push_back(shell.is_object() ? csv_field(shell[key]) : "");
    names.push_back(std::string("shell_") + key + "_sigma");
    values.push_back(shell.is_object() ? csv_field(shell["sigma"][key]) : "");
  }
  names.push_back("shell_residual_rms_rs");
  values.push_back(shell.is_object() ? csv_field(shell["residual_rms_rs"]) : "");
  const json& boundary = result["boundary"];
  for (const char* key : {"time", "speed_km_s", "half_width_deg"}) {
    names.push_back(std::string("boundary_") + key);
    values.push_back(boundary.is_object() ? csv_field(boundary[key]) : "");
  }
  std::ostringstream out;
  for (size_t i = 0; i < names.size(); ++i) out << (i ? "," : "") << names[i];
  out << '\n';
  for (size_t i = 0; i < values.size(); ++i) out << (i ? "," : "") << values[i];
  out << '\n';
  fit::write_text_file(path, out.str());
}

}  // namespace

json run_measure(const MeasureOptions& o, std::ostream& err) {
  const auto started = std::chrono::steady_clock::now();
  const fs::path input(o.input);
  const Event event = fs::is_directory(input) ? event_from_folder(input) : read_event(input);
  std::optional<Track> analyst;
  if (!o.track.empty()) analyst = read_track(o.track);
  // What a run writes: checked against the inputs' globs before any work; the previous
  // run's set removed, its result.json first; this run's result.json written last
  // (app/output_set.hpp).
  const OutputNames names{"result.json", {"result.csv", "track.json"}, {"time_height.png", "front.png", "shell.png"}};
  std::vector<fs::path> outputs;
  std::vector<std::string> view_names;
  for (const std::string& name : {names.seal, names.top[0], names.top[1]}) outputs.push_back(fs::path(o.out_dir) / name);
  for (const EventView& view : event.views) {
    view_names.push_back(view.name);
    for (const std::string& name : names.per_view) outputs.push_back(fs::path(o.out_dir) / view.name / name);
  }
  check_outputs_outside_inputs(event, outputs, "--out");
  fs::create_directories(o.out_dir);
  retire_previous_outputs(o.out_dir, names, view_names);

  json views = json::array();
  std::vector<std::string> problems;
  std::vector<fs::path> inputs;
  if (!fs::is_directory(input)) inputs.push_back(input);
  if (analyst) inputs.push_back(o.track);
  Track used{event.id, {}};
  std::vector<ViewForShell> for_shell;
  int measured = 0;
  for (const EventView& view : event.views) {
    inputs.insert(inputs.end(), view.files.begin(), view.files.end());
    if (view.files.empty()) {
      problems.push_back("view " + view.name + " could not be read: no files match " + view.globs.front() + ".");
      continue;
    }
    try {
      ViewOutcome outcome = measure_view(event, view, analyst ? &*analyst : nullptr, o, problems);
      views.push_back(std::move(outcome.entry));
      used.points.insert(used.points.end(), outcome.used.begin(), outcome.used.end());
      for_shell.push_back(std::move(outcome.for_shell));
      ++measured;
    } catch (const imaging::InputError& e) {
      problems.push_back("view " + view.name + " could not be read: " + e.what());
    }
  }
  // One shell over every view that saw the CME: true direction, width and speed.
  const ShellReport shell = fit_and_report_shell(for_shell, event.source_deg, o.apex_law, o.out_dir);
  problems.insert(problems.end(), shell.problems.begin(), shell.problems.end());
  for_shell.clear();  // the polar sequences are no longer needed

  const std::string status = measured == 0 ? "failed" : measured < int(event.views.size()) ? "partial" : "ok";
  json result = {{"schema", "occulta.result/1"},
                 {"event_id", event.id},
                 {"status", status},
                 {"problems", problems},
                 {"views", views},
                 {"shell", shell.shell},
                 {"boundary", shell.boundary}};

  // The arrival estimate for the event's targets (default Earth), from the fit's boundary
  // values and covariance (fit/arrival): model estimates with stated uncertainty.
  if (shell.boundary.is_object()) {
    try {
      const fit::ArrivalInput in = fit::read_arrival_input(result, (fs::path(o.out_dir) / "result.json").string());
      const fit::ForecastSettings settings =
          fit::read_forecast_block(event.forecast, in.launch.boundary_utc_s, event.path.string());
      fit::EnsembleOptions ensemble;
      ensemble.priors = settings.priors;
      result["arrival"] = fit::arrival_block(fit::forecast_arrivals(in.launch, in.covariance, settings.targets, ensemble),
                                             ensemble);
      result["caution"] = std::string(fit::kArrivalCaution);
    } catch (const imaging::InputError& e) {
      result["problems"].push_back(std::string("no arrival estimate: ") + e.what());
    }
  }
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  json options = {{"median", o.median},
                  {"track", o.track.empty() ? json(nullptr) : json(o.track)},
                  {"apex_law", o.apex_law}};
  result["provenance"] = provenance(inputs, options, elapsed);
  write_csv_row(fs::path(o.out_dir) / "result.csv", result);
  write_track(fs::path(o.out_dir) / "track.json", used);
  fit::write_json_file(fs::path(o.out_dir) / "result.json", result);  // the seal, last
  for (const auto& p : result["problems"]) err << "problem: " << p.get<std::string>() << '\n';
  return result;
}

void print_result_table(const json& result, std::ostream& out) {
  out << "view      CME  central PA  PA span        sky width  sky speed (km/s)   accel (m/s²)  onset (UTC)\n";
  for (const auto& v : result["views"]) {
    char line[256];
    const auto num = [&](const char* key) { return v[key].is_number() ? v[key].get<double>() : NAN; };
    std::string span = "-";
    if (v["pa_span_deg"].is_array()) {
      char text[32];
      std::snprintf(text, sizeof text, "%.0f–%.0f°", v["pa_span_deg"][0].get<double>(), v["pa_span_deg"][1].get<double>());
      span = text;
    }
    std::snprintf(line, sizeof line, "%-9s %-4s %9.1f°  %-14s %8.1f°  %7.0f ± %-7.0f  %8.1f      %s", v["name"].get<std::string>().c_str(),
                  v["found"].get<bool>() ? "yes" : "no", num("central_pa_deg"), span.c_str(), num("sky_width_deg"),
                  num("sky_speed_km_s"), num("sky_speed_sigma_km_s"), num("sky_accel_m_s2"),
                  v["onset_time"].is_string() ? v["onset_time"].get<std::string>().c_str() : "-");
    out << line << '\n';
  }
  const json& s = result["shell"];
  if (!s.is_object()) {
    out << "shell: no fit\n";
    return;
  }
  const auto pm = [&](const char* key, int digits) {
    char text[64];
    std::snprintf(text, sizeof text, "%.*f ± %.*f", digits, s[key].get<double>(), digits, s["sigma"][key].get<double>());
    return std::string(text);
  };
  out << "shell (true, from all views): lon " << pm("lon_deg", 1) << "°, lat " << pm("lat_deg", 1) << "°, tilt "
      << pm("tilt_deg", 0) << "°, speed " << pm("speed_km_s", 0) << " km/s, face-on width " << pm("face_on_width_deg", 0)
      << "°, edge-on width " << pm("edge_on_width_deg", 0) << "°\n";
  const json& b = result["boundary"];
  if (b.is_object()) {
    char line[200];
    std::snprintf(line, sizeof line, "at 21.5 R☉: %s ± %.0f min, %.0f ± %.0f km/s, half-width %.0f°\n",
                  b["time"].get<std::string>().c_str(), b["sigma"]["time_s"].get<double>() / 60.0,
                  b["speed_km_s"].get<double>(), b["sigma"]["speed_km_s"].get<double>(), b["half_width_deg"].get<double>());
    out << line;
  }
}

int measure(const MeasureOptions& o, std::ostream& out, std::ostream& err) {
  const json result = run_measure(o, err);
  if (!o.quiet) {
    out << "event " << result["event_id"].get<std::string>() << ": " << result["status"].get<std::string>() << "\n";
    print_result_table(result, out);
    if (result.contains("arrival")) print_arrival_table(result["arrival"], out);
    out << "written: " << (fs::path(o.out_dir) / "result.json").string() << ", result.csv, track.json, <view>/time_height.png, <view>/front.png, <view>/shell.png\n";
  }
  return result["status"] == "ok" ? 0 : 1;
}

}  // namespace occulta::app
