#include "app/measure.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <map>
#include <ostream>
#include <sstream>

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
#include "fit/strict_json.hpp"
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

json number_or_null(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }
json time_or_null(const fit::HeightCrossing& c) {
  return c.found && std::isfinite(c.time_s) ? json(imaging::iso_from_utc_seconds(c.time_s, 3)) : json(nullptr);
}

struct ViewOutcome {
  json entry;
  std::vector<TrackPoint> used;
  ViewForShell for_shell;
};

// Quicklook: the time–height map at the track's PA with the track points (yellow rings)
// and the fitted law (red) drawn over it, on UTC time and height axes.
void draw_time_height(const imaging::PolarSequence& polar, double pa_deg, const std::vector<TrackPoint>& points,
                      const fit::HeightTimeFit* fit, const std::string& caption, const fs::path& path) {
  const imaging::TimeMap th = imaging::time_height(polar, pa_deg, 2.0);
  const double t0 = polar.utc_s.front(), t1 = polar.utc_s.back();
  const int columns = std::max<int>(360, int(polar.utc_s.size()) * 16);
  QuicklookPanel panel{Plane::time_height, imaging::render_on_time_axis(th, t0, t1, columns),
                       viewer::time_map_extent(th, t0, t1), sigma_scale(4.0, "running difference (σ)"), caption, {}, {}};
  Overlay track{Overlay::Shape::rings, {}, kPointMark, "track points"};
  for (const TrackPoint& p : points) track.points.push_back({p.utc_s, p.height_rs});
  if (!track.points.empty()) panel.overlays.push_back(std::move(track));
  if (fit && fit->status == fit::FitStatus::ok) {
    char label[96];
    std::snprintf(label, sizeof label, "fitted law (%s, %.0f km/s on the sky)", fit::to_string(fit->model),
                  fit->law.speed_km_s);
    Overlay law{Overlay::Shape::line, {}, kFitMark, label};
    for (int k = 0; k <= 100; ++k) {
      const double t = t0 + (t1 - t0) * k / 100.0;
      law.points.push_back({t, fit->law.height_at(t)});
    }
    panel.overlays.push_back(std::move(law));
  }
  write_quicklook(path, {&panel, 1});
}

// Quicklook: the last running difference of the CME with its leading edge (yellow) and
// the two PAs that bound it (green), north up, on axes in R☉ about Sun centre.
void draw_front(const cv::Mat& difference, const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar,
                const imaging::Front& front, int frame, const std::string& caption, const fs::path& path) {
  QuicklookPanel panel{Plane::sky, difference, viewer::sky_extent(grid), sigma_scale(4.0, "running difference (σ)"),
                       caption, polar_radii(polar), {}};
  if (front.found) {
    const double outer = polar.height_rs(polar.height_count - 1);
    Overlay span{Overlay::Shape::line, {}, kSpanMark, "PA span"};
    for (const double pa : {front.pa_from_deg, front.pa_to_deg}) {
      span.points.push_back(sky_point(pa, polar.height_rs(0)));
      span.points.push_back(sky_point(pa, outer));
      span.points.push_back({NAN, NAN});
    }
    Overlay edge{Overlay::Shape::dots, {}, kPointMark, "leading edge"};
    if (frame >= 0 && frame < int(front.leading_edge_rs.size()))
      for (int c = 0; c < polar.pa_count; ++c) {
        const float h = front.leading_edge_rs[frame][c];
        if (std::isfinite(h)) edge.points.push_back(sky_point(polar.pa_deg(c), h));
      }
    panel.overlays.push_back(std::move(edge));
    panel.overlays.push_back(std::move(span));
  }
  write_quicklook(path, {&panel, 1});
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
  for (const auto& p : run.problems) problems.push_back("view " + view.name + ": " + p);

  const imaging::Front front = imaging::find_front(polar);
  ViewOutcome outcome;
  json& v = outcome.entry;
  v = {{"name", view.name}, {"frames_used", run.frames_used}, {"found", front.found},
       {"central_pa_deg", nullptr}, {"pa_span_deg", nullptr}, {"sky_width_deg", nullptr},
       {"sky_speed_km_s", nullptr}, {"sky_speed_km_s_sigma", nullptr}, {"sky_accel_m_s2", nullptr},
       {"sky_accel_m_s2_sigma", nullptr}, {"kinematic_model", nullptr}, {"onset_time", nullptr},
       {"onset_time_sigma_s", nullptr}, {"first_seen_time", nullptr}, {"time_at_21_5_rs", nullptr}, {"track_points", 0}, {"residual_rms_rs", nullptr}};

  // The points: the analyst's for this view when given, else the automatic track. Either
  // way only edges inside the field count: one at or beyond the field stop, at a data
  // gap or behind the occulter is censored (imaging/front.hpp TrackCensoring), counted
  // and left out (issue 11).
  std::vector<TrackPoint>& points = outcome.used;
  imaging::TrackCensoring censored;
  const double step_rs = polar.polar.height_step_rs;
  bool by_analyst = false;
  if (analyst)
    for (const TrackPoint& p : analyst->points) {
      if (p.view != view.name) continue;
      by_analyst = true;
      int frame = -1;  // the frame the point was marked on (within a second)
      for (std::size_t k = 0; k < polar.utc_s.size(); ++k)
        if (std::abs(polar.utc_s[k] - p.utc_s) < 1.0) frame = int(k);
      std::string why;
      if (frame >= 0 && !imaging::height_measurable(polar, frame, p.pa_deg, p.height_rs, step_rs, why)) {
        if (why == "at the field stop") ++censored.at_field_stop;
        else if (why == "at a data gap") ++censored.at_data_gap;
        else ++censored.behind_occulter;
        continue;
      }
      points.push_back(p);
    }
  // The automatic track follows the front where it reaches highest (the leading edge an
  // analyst measures — common practice), not the middle of the span.
  std::vector<imaging::TrackPoint> auto_track;
  if (!by_analyst && front.found) {
    auto_track = imaging::follow_track(polar, front.outermost_pa_deg, front.onset_frame, {}, &censored);
    for (const imaging::TrackPoint& p : auto_track) points.push_back({view.name, p.utc_s, p.pa_deg, p.height_rs, "auto"});
  }
  v["track_origin"] = by_analyst ? "analyst" : "auto";
  // How far above the noise the front stood: the largest band-median running difference
  // on the automatic track, in σ (imaging/front.hpp; the track caps it at 50) — what a
  // detection limit is stated in.
  double contrast = 0.0;
  for (const imaging::TrackPoint& p : auto_track) contrast = std::max(contrast, p.sigma);
  v["front_contrast_sigma"] = auto_track.empty() ? json(nullptr) : json(contrast);
  v["censored_points"] = {{"at_field_stop", censored.at_field_stop},
                          {"at_data_gap", censored.at_data_gap},
                          {"behind_occulter", censored.behind_occulter}};

  if (front.found) {
    v["central_pa_deg"] = front.central_pa_deg;
    v["pa_span_deg"] = {front.pa_from_deg, front.pa_to_deg};
    v["sky_width_deg"] = front.width_deg;
    v["first_seen_time"] = imaging::iso_from_utc_seconds(front.onset_utc_s, 3);
  } else {
    problems.push_back("view " + view.name + ": " + front.why_not);
  }
  if (by_analyst && !front.found) {
    double sum_sin = 0.0, sum_cos = 0.0;  // mean direction of the analyst's PAs
    for (const auto& p : points) sum_sin += std::sin(p.pa_deg * kRadPerDeg), sum_cos += std::cos(p.pa_deg * kRadPerDeg);
    v["central_pa_deg"] = std::fmod(std::atan2(sum_sin, sum_cos) * kDegPerRad + 360.0, 360.0);
  }

  fit::HeightTimeFit chosen;
  const bool have_fit = points.size() >= 2;
  v["law_ref_time"] = nullptr;
  v["sigma_missing_why"] = nullptr;
  if (have_fit) {
    std::vector<fit::HeightTimePoint> ht;
    for (const auto& p : points) ht.push_back({p.utc_s, p.height_rs, 0.0});
    // Robust (Huber) fits, linear unless a quadratic is substantially better (AICc). The
    // scale's floor: the height grid's rounding, Δ/√12 (kinematics.hpp).
    const double resolution_rs = step_rs / std::sqrt(12.0);
    chosen = fit::choose_height_time_model(ht, true, 2.0, resolution_rs).chosen;
    v["track_points"] = int(points.size());
    if (chosen.status == fit::FitStatus::ok && !auto_track.empty()) {
      // The leading edge's definition: the track's band edge (edge_fraction of its peak)
      // against the front's outer threshold edge in the same PA column, frame by frame,
      // both inside the field; half their laws' difference joins the σ (kinematics.hpp).
      const int column = int(std::lround(front.outermost_pa_deg / polar.polar.pa_step_deg)) % polar.polar.pa_count;
      std::vector<fit::HeightTimePoint> outer;
      for (const imaging::TrackPoint& p : auto_track) {
        const float h = front.leading_edge_rs[std::size_t(p.frame)][std::size_t(column)];
        std::string why;
        if (std::isfinite(h) && imaging::height_measurable(polar, p.frame, p.pa_deg, h, imaging::FrontOptions{}.outer_margin_rs + step_rs, why))
          outer.push_back({p.utc_s, double(h), 0.0});
      }
      const fit::HeightTimeFit other =
          fit::fit_height_time(outer, {chosen.model, true, resolution_rs});
      fit::add_definition_spread(chosen, other);
    }
    if (chosen.status == fit::FitStatus::ok) {
      v["kinematic_model"] = fit::to_string(chosen.model);
      v["law_ref_time"] = imaging::iso_from_utc_seconds(chosen.law.ref_time_s, 3);
      v["sky_speed_km_s"] = chosen.law.speed_km_s;
      v["sky_speed_km_s_sigma"] = number_or_null(chosen.speed_sigma_km_s);
      v["sky_accel_m_s2"] = chosen.law.accel_m_s2;
      v["sky_accel_m_s2_sigma"] = chosen.model == fit::HeightTimeModel::quadratic ? number_or_null(chosen.accel_sigma_m_s2)
                                                                                 : json(nullptr);
      v["onset_time"] = time_or_null(chosen.onset);
      v["onset_time_sigma_s"] = chosen.onset.found ? number_or_null(chosen.onset.sigma_s) : json(nullptr);
      v["time_at_21_5_rs"] = time_or_null(chosen.boundary);
      v["residual_rms_rs"] = chosen.residual_rms_rs;
      if (!chosen.sigmas_known) {
        v["sigma_missing_why"] = chosen.problem;
        problems.push_back(view.name + ": no σ for the sky speed and onset: " + chosen.problem + ".");
      }
    } else {
      problems.push_back("view " + view.name + ": the height–time fit failed: " + chosen.problem);
    }
  } else if (front.found || by_analyst) {
    problems.push_back("view " + view.name + ": too few leading-edge points for a height–time fit.");
  }

  // Quicklooks.
  const fs::path dir = fs::path(o.out_dir) / view.name;
  fs::create_directories(dir);
  const double pa = !points.empty() ? points.front().pa_deg
                    : v["central_pa_deg"].is_number() ? v["central_pa_deg"].get<double>() : 0.0;
  if (!points.empty()) v["track_pa_deg"] = pa;
  char caption[200];
  std::snprintf(caption, sizeof caption, "%s · time–height along PA %.0f° (median over ±2°) · %s track",
                view.name.c_str(), pa, by_analyst ? "the analyst's" : "automatic");
  draw_time_height(polar, pa, points, have_fit ? &chosen : nullptr, caption, dir / "time_height.png");
  const int last = int(polar.frames.size()) - 1;
  const int shown = front.found ? std::min(front.last_frame, last) : last;
  std::snprintf(caption, sizeof caption, "%s · running difference, north up · %s UTC", view.name.c_str(),
                imaging::iso_from_utc_seconds(polar.utc_s[shown], 0).substr(0, 16).replace(10, 1, " ").c_str());
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
  // The problems as the sentences themselves, one after another in one quoted field.
  std::string problems;
  for (const auto& p : result["problems"]) problems += (problems.empty() ? "" : " ") + p.get<std::string>();
  std::vector<std::string> values = {csv_field(result["event_id"]), csv_field(result["status"]), csv_field(json(problems))};
  for (const auto& v : result["views"])
    for (const char* key : {"frames_used", "found", "central_pa_deg", "pa_span_deg", "sky_width_deg", "sky_speed_km_s",
                            "sky_speed_km_s_sigma", "sky_accel_m_s2", "sky_accel_m_s2_sigma", "onset_time",
                            "onset_time_sigma_s", "time_at_21_5_rs", "law_ref_time", "frames_outside_window"}) {
      names.push_back(v["name"].get<std::string>() + "_" + key);
      // The frames outside the window are named in result.json; the row counts them.
      values.push_back(std::string(key) == "frames_outside_window" ? std::to_string(v.value(key, json::array()).size())
                                                                    : csv_field(v.contains(key) ? v[key] : json(nullptr)));
    }
  // The shell and the boundary values, flat, with their σ.
  const json& shell = result["shell"];
  for (const char* key : {"lon_deg", "lat_deg", "tilt_deg", "half_angle_deg", "aspect_ratio", "speed_km_s", "accel_m_s2",
                          "face_on_width_deg", "edge_on_width_deg"}) {
    names.push_back(std::string("shell_") + key);
    values.push_back(shell.is_object() ? csv_field(shell[key]) : "");
    names.push_back(std::string("shell_") + key + "_sigma");  // σ of K is K_sigma (README "Outputs")
    values.push_back(shell.is_object() ? csv_field(shell["sigma"][key]) : "");
  }
  names.push_back("shell_residual_rms_rs");
  values.push_back(shell.is_object() ? csv_field(shell["residual_rms_rs"]) : "");
  // What the data leave open (shell_report.hpp): the direction's basis, and the keys not
  // constrained, joined by ';' as arrays are here.
  names.push_back("shell_direction_basis");
  values.push_back(shell.is_object() && shell.contains("direction_basis") ? csv_field(shell["direction_basis"]) : "");
  names.push_back("shell_not_constrained");
  values.push_back(shell.is_object() && shell.contains("not_constrained") ? csv_field(shell["not_constrained"]) : "");
  names.push_back("arrival_withheld");
  values.push_back(result.contains("arrival_withheld") ? csv_field(result["arrival_withheld"]) : "");
  names.push_back("arrival_conditional_on");
  values.push_back(result.contains("arrival_conditional_on") ? csv_field(result["arrival_conditional_on"]) : "");
  const json& boundary = result["boundary"];
  for (const char* key : {"time", "speed_km_s", "half_width_deg"}) {
    names.push_back(std::string("boundary_") + key);
    values.push_back(boundary.is_object() ? csv_field(boundary[key]) : "");
    // boundary.sigma holds time_s for the time (a σ in seconds), the keys' own names else.
    const std::string sigma_key = std::string(key) == "time" ? "time_s" : key;
    names.push_back(std::string("boundary_") + key + (std::string(key) == "time" ? "_sigma_s" : "_sigma"));
    values.push_back(boundary.is_object() && boundary.contains("sigma") ? csv_field(boundary["sigma"].value(sigma_key, json())) : "");
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
  if (!fs::is_directory(input))
    fit::require_kind(fit::read_json_file(input), "event", o.input, "`measure` needs an event file or a folder of frames");
  const Event event = fs::is_directory(input) ? event_from_folder(input) : read_event(input);
  std::optional<Track> analyst;
  if (!o.track.empty()) analyst = read_track(o.track);

  // The event's window, from each frame's header time; the frames' spans check the track.
  std::vector<WindowSplit> splits;
  std::vector<ViewSpan> spans;
  for (const EventView& view : event.views) {
    splits.push_back(apply_window(event, view));
    spans.push_back({view.name, splits.back().first_utc_s, splits.back().last_utc_s});
  }
  if (analyst) check_track_matches(*analyst, o.track, event.id, spans);
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
  check_outputs_outside_inputs(event, outputs, o.out_dir);  // an unusable --out: exit 1, as out_dir.hpp
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
  for (size_t i = 0; i < event.views.size(); ++i) {
    const EventView& listed = event.views[i];
    const WindowSplit& split = splits[i];
    inputs.insert(inputs.end(), split.inside.begin(), split.inside.end());
    if (listed.files.empty()) {
      problems.push_back("view " + listed.name + ": no files match " + listed.globs.front() + ".");
      continue;
    }
    if (split.inside.empty()) {
      problems.push_back("view " + listed.name + ": none of its " + std::to_string(split.outside.size()) +
                         " frames lies in the event's window " + imaging::iso_from_utc_seconds((*event.window_s)[0], 3) +
                         " to " + imaging::iso_from_utc_seconds((*event.window_s)[1], 3) + ".");
      continue;
    }
    EventView view = listed;
    view.files = split.inside;
    try {
      ViewOutcome outcome = measure_view(event, view, analyst ? &*analyst : nullptr, o, problems);
      json outside = json::array();
      for (const fs::path& f : split.outside) outside.push_back(f.generic_string());
      outcome.entry["frames_outside_window"] = outside;
      views.push_back(std::move(outcome.entry));
      used.points.insert(used.points.end(), outcome.used.begin(), outcome.used.end());
      for_shell.push_back(std::move(outcome.for_shell));
      ++measured;
    } catch (const imaging::InputError& e) {
      problems.push_back("view " + view.name + ": " + e.what());
    }
  }
  // One shell over every view that saw the CME: true direction, width and speed.
  const ShellReport shell = fit_and_report_shell(for_shell, event.source_deg, o.apex_law, o.out_dir);
  problems.insert(problems.end(), shell.problems.begin(), shell.problems.end());
  for_shell.clear();  // the polar sequences are no longer needed

  // A sentence said once: the same fault met twice (the same frame in two views' globs…)
  // is one problem.
  for (size_t i = 0; i < problems.size(); ++i)
    for (size_t j = problems.size(); j-- > i + 1;)
      if (problems[j] == problems[i]) problems.erase(problems.begin() + static_cast<std::ptrdiff_t>(j));
  // partial: a view could not be read, a view sees no CME while another does, the shell
  // fit failed in a way its numbers do not show, or no arrival may be made from it.
  const bool weak = shell.views_without_cme > 0 || !shell.arrival_withheld.empty() ||
                    (shell.shell.is_object() && shell.shell["status"] != "ok");
  const std::string status = measured == 0                            ? "failed"
                             : measured < int(event.views.size()) || weak ? "partial"
                                                                        : "ok";
  json result = {{"schema", "occulta.result/1"},
                 {"event_id", event.id},
                 {"status", status},
                 {"problems", problems},
                 {"views", views},
                 {"shell", shell.shell},
                 {"boundary", shell.boundary}};

  // The arrival estimate for the event's targets (default Earth), from the fit's boundary
  // values and covariance (fit/arrival): model estimates with stated uncertainty.
  if (!shell.arrival_withheld.empty()) {
    result["arrival_withheld"] = shell.arrival_withheld;
  } else if (shell.boundary.is_object()) {
    try {
      const fit::ArrivalInput in = fit::read_arrival_input(result, (fs::path(o.out_dir) / "result.json").string());
      const fit::ForecastSettings settings =
          fit::read_forecast_block(event.forecast, in.launch.boundary_utc_s, event.path.string());
      fit::EnsembleOptions ensemble;
      ensemble.priors = settings.priors;
      result["arrival"] = fit::arrival_block(fit::forecast_arrivals(in.launch, in.covariance, settings.targets, ensemble),
                                             ensemble);
      // An estimate that rests on an assumption the data do not test says so, beside it.
      if (!shell.arrival_condition.empty()) result["arrival_conditional_on"] = shell.arrival_condition;
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
  for (const auto& p : result["problems"]) err << "occulta: problem: " << p.get<std::string>() << '\n';
  return result;
}

namespace {

// What a table shows where nothing was measured (README "Outputs"): a word, never "nan".
constexpr const char* kNotMeasured = "—";

// A number with `digits` decimals and a unit, or kNotMeasured.
std::string shown(const json& value, int digits, const char* unit = "") {
  if (!value.is_number() || !std::isfinite(value.get<double>())) return kNotMeasured;
  char text[64];
  std::snprintf(text, sizeof text, "%.*f%s", digits, value.get<double>(), unit);
  return text;
}

// "value ± σ" when both are numbers, the value alone when σ is not, else kNotMeasured.
std::string shown_pm(const json& value, const json& sigma, int digits, const char* unit = "") {
  if (!value.is_number()) return kNotMeasured;
  if (!sigma.is_number()) return shown(value, digits, unit);
  return shown(value, digits) + " ± " + shown(sigma, digits, unit);
}

// Left-aligned in `width` columns of the terminal (UTF-8: count code points, not bytes).
std::string padded(const std::string& text, size_t width) {
  size_t columns = 0;
  for (unsigned char c : text) columns += (c & 0xC0) != 0x80;
  return text + std::string(width > columns ? width - columns : 1, ' ');
}

}  // namespace

void print_result_table(const json& result, std::ostream& out) {
  out << padded("view", 10) << padded("CME", 5) << padded("central PA", 12) << padded("PA span", 14)
      << padded("sky width", 11) << padded("sky speed (km/s)", 18) << padded("accel (m/s²)", 15) << "onset (UTC)\n";
  for (const auto& v : result["views"]) {
    std::string span = kNotMeasured;
    if (v["pa_span_deg"].is_array())
      span = shown(v["pa_span_deg"][0], 0) + "–" + shown(v["pa_span_deg"][1], 0, "°");
    out << padded(v["name"].get<std::string>(), 10) << padded(v["found"].get<bool>() ? "yes" : "no", 5)
        << padded(shown(v["central_pa_deg"], 1, "°"), 12) << padded(span, 14) << padded(shown(v["sky_width_deg"], 1, "°"), 11)
        << padded(shown_pm(v["sky_speed_km_s"], v.value("sky_speed_km_s_sigma", json()), 0), 18)
        << padded(shown_pm(v["sky_accel_m_s2"], v.value("sky_accel_m_s2_sigma", json()), 1), 15)
        << (v["onset_time"].is_string() ? v["onset_time"].get<std::string>() : std::string(kNotMeasured)) << '\n';
  }
  const json& s = result["shell"];
  if (!s.is_object()) {
    out << "shell: no fit\n";
    return;
  }
  const auto pm = [&](const char* key, int digits, const char* unit) {
    return shown_pm(s[key], s.contains("sigma") ? s["sigma"].value(key, json()) : json(), digits, unit);
  };
  // Say on what the shell rests, in words: the reader of this line may never open the JSON.
  const std::string basis = s.value("direction_basis", std::string("views"));
  const std::size_t n_views = s.contains("views") ? s["views"].size() : 0;
  std::string heading;
  if (basis == "views")
    heading = "shell (direction measured from " + std::to_string(n_views) + " views)";
  else if (basis == "source region")
    heading = "shell (ONE view: direction ASSUMED from the source region, not measured)";
  else
    heading = "shell (direction NOT CONSTRAINED by the data: lon and lat below are a guess)";
  if (s.value("status", std::string("ok")) != "ok") heading += " [FIT FAILED: see problems]";
  out << heading << ": lon " << pm("lon_deg", 1, "°") << ", lat " << pm("lat_deg", 1, "°") << ", tilt "
      << pm("tilt_deg", 0, "°") << ", speed " << pm("speed_km_s", 0, " km/s") << ", face-on width "
      << pm("face_on_width_deg", 0, "°") << ", edge-on width " << pm("edge_on_width_deg", 0, "°") << "\n";
  if (s.contains("not_constrained") && !s["not_constrained"].empty()) {
    std::string keys;
    for (const auto& k : s["not_constrained"]) keys += (keys.empty() ? "" : ", ") + k.get<std::string>();
    out << "not constrained by the data: " << keys << "\n";
  }
  const json& b = result["boundary"];
  if (b.is_object()) {
    const json sigma = b.value("sigma", json::object());
    const json time_min = sigma.value("time_s", json()).is_number() ? json(sigma["time_s"].get<double>() / 60.0) : json();
    out << "at 21.5 R☉: " << b["time"].get<std::string>() << " ± " << shown(time_min, 0, " min") << ", "
        << shown_pm(b["speed_km_s"], sigma.value("speed_km_s", json()), 0, " km/s") << ", half-width "
        << shown(b["half_width_deg"], 0, "°") << "\n";
  }
}

int measure(const MeasureOptions& o, std::ostream& out, std::ostream& err) {
  const json result = run_measure(o, err);
  if (!o.quiet) {
    out << "event " << result["event_id"].get<std::string>() << ": " << result["status"].get<std::string>() << "\n";
    print_result_table(result, out);
    if (result.contains("arrival")) {
      if (result.contains("arrival_conditional_on"))
        out << "arrival below is CONDITIONAL: it holds only if " << result["arrival_conditional_on"].get<std::string>()
            << "\n";
      print_arrival_table(result["arrival"], out);
    }
    if (result.contains("arrival_withheld"))
      out << "arrival: WITHHELD: " << result["arrival_withheld"].get<std::string>() << "\n";
    out << "written: " << (fs::path(o.out_dir) / "result.json").string() << ", result.csv, track.json, <view>/time_height.png, <view>/front.png, <view>/shell.png\n";
  }
  return result["status"] == "ok" && result["problems"].empty() ? 0 : 1;
}

}  // namespace occulta::app
