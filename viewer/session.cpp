// viewer/session.cpp — see session.hpp.
#include "viewer/session.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numbers>
#include <set>

#include "imaging/input_error.hpp"
#include "viewer/cme_list.hpp"
#include "viewer/stereo.hpp"
#include "viewer/ui.hpp"

namespace occulta::viewer {
namespace fs = std::filesystem;

namespace {

// A tie as two clicks would make it: each place on its view's frame nearest in time.
void tie(WindowState& state, const std::vector<ViewPictures>& views, const action::Tie& t) {
  const auto mark = [&](const action::AddPoint& p) -> std::optional<SkyMark> {
    for (const ViewPictures& v : views)
      if (v.name == p.view && !v.frames.empty()) {
        const MarkedPoint at{p.view, 0.0, p.pa_deg, p.height_rs};
        return SkyMark{p.view, v.frames[std::size_t(nearest_frame(v, p.utc_s))].utc_s, sky_x_rs(at), sky_y_rs(at)};
      }
    return std::nullopt;
  };
  const auto a = mark(t.a), b = mark(t.b);
  const auto met = a && b ? tie_marks(*a, *b, views) : std::nullopt;
  if (met) apply(state, action::AddTie{*met});
  else apply(state, action::Note{"The tie needs two different loaded views whose lines of sight are not parallel."});
}

// A tie's click as the track file holds it (PA, height) and as the window does (sky x, y;
// viewer/state.hpp: x west, y north, PA counter-clockwise from north through east).
fit::TieClick click_of(const SkyMark& m) {
  const double pa_deg = std::atan2(-m.x_rs, m.y_rs) * 180.0 / std::numbers::pi;
  return {m.view, m.utc_s, pa_deg < 0.0 ? pa_deg + 360.0 : pa_deg, std::hypot(m.x_rs, m.y_rs)};
}
SkyMark mark_of(const fit::TieClick& c) {
  const MarkedPoint at{c.view, c.utc_s, c.pa_deg, c.height_rs};
  return {c.view, c.utc_s, sky_x_rs(at), sky_y_rs(at)};
}

std::vector<TiePoint> ties_of(const fit::Track& track) {
  std::vector<TiePoint> ties;
  for (const fit::TrackTie& t : track.ties)
    ties.push_back({mark_of(t.a), mark_of(t.b), t.lon_deg, t.lat_deg, t.distance_rs, t.miss_rs});
  return ties;
}

std::vector<MarkedPoint> points_of(const fit::Track& track) {
  std::vector<MarkedPoint> points;
  for (const fit::TrackPoint& p : track.points) points.push_back({p.view, p.utc_s, p.pa_deg, p.height_rs, p.origin == "auto"});
  return points;
}

// The loader's imaging in the event's order, when it is what image_event would make:
// every view loaded over exactly its frames inside the window, with the checksum policy
// already in force.
std::optional<std::vector<fit::ViewImaging>> reusable(const fit::MeasurementInput& input, const fit::MeasurementOptions& o,
                                                      const ViewImagings& imaged) {
  if (o.checksum_policy) return std::nullopt;
  std::vector<fit::ViewImaging> views;
  for (std::size_t i = 0; i < input.event.views.size(); ++i) {
    const auto held = std::find_if(imaged.begin(), imaged.end(), [&](const auto& v) {
      return v && v->name == input.event.views[i].name && v->files == input.windows[i].inside;
    });
    if (held == imaged.end() || input.windows[i].inside.empty()) return std::nullopt;
    views.push_back(**held);
  }
  return views;
}

// Whether the shown CME's automatic points in `view` may join the list's points there:
// the list has none there, or the measurement gives them to the shown CME's front
// (fit::marked_front, over every CME's front in that view). Otherwise the two sets are
// different CMEs, which one fit would mix.
bool shown_cme_joins(const WindowState& state, const fit::Track& listed, const std::string& view) {
  std::vector<fit::TrackPoint> marked;
  for (const fit::TrackPoint& p : listed.points)
    if (p.view == view) marked.push_back(p);
  if (marked.empty() || !state.measured) return true;
  const fit::ViewMeasurement* shown = shown_sighting(state, view);
  if (!shown || !shown->front.found) return true;  // it has no automatic points there
  std::vector<const imaging::Front*> fronts;
  std::size_t shown_at = 0;
  for (const fit::CmeMeasurement& cme : state.measured->cmes)
    for (const fit::ViewMeasurement& v : cme.views)
      if (v.name == view && v.front.found) {
        if (&v == shown) shown_at = fronts.size();
        fronts.push_back(&v.front);
      }
  if (fronts.empty()) return true;  // a measurement without CMEs: its one front is the shown one
  return fit::marked_front(fronts, marked) == shown_at;
}

}  // namespace

ViewImagings imaging_of(const std::vector<ViewPictures>& views) {
  ViewImagings imaged;
  for (const ViewPictures& v : views) imaged.push_back(v.imaging);
  return imaged;
}

fit::Track track_of(const WindowState& state) {
  fit::Track track{state.event_id, {}};
  for (const MarkedPoint& p : state.points)
    track.points.push_back({p.view, p.utc_s, p.pa_deg, p.height_rs, p.automatic ? "auto" : "analyst"});
  for (const TiePoint& t : state.ties)
    track.ties.push_back({click_of(t.a), click_of(t.b), t.lon_deg, t.lat_deg, t.distance_rs, t.miss_rs});
  return track;
}

action::FitDone run_fit(const WindowState& state, const Session& session, const std::string& points,
                        const ViewImagings& imaged) {
  if (!session.input) return {nullptr, points, 0.0, "There is no event to measure: the window was opened without one."};
  const auto started = std::chrono::steady_clock::now();
  std::string kept_apart;  // views where the shown CME's automatic points were not added
  fit::MeasurementInput input = *session.input;
  input.track_file.clear();
  if (points == "auto") {
    input.analyst.reset();
  } else {
    fit::Track track = track_of(state);
    if (points == "both") {
      // The shown CME's automatic points the list does not hold already, in every view but
      // those where the list's points are another CME's (shown_cme_joins).
      std::set<std::tuple<std::string, double, double>> held;
      for (const fit::TrackPoint& p : track.points) held.insert({p.view, p.utc_s, p.pa_deg});
      const fit::Track listed = track;
      for (const std::string& view : state.views) {
        if (!shown_cme_joins(state, listed, view)) {
          kept_apart += (kept_apart.empty() ? "" : ", ") + view;
          continue;
        }
        for (const MarkedPoint& p : state.auto_points)
          if (p.view == view && !held.count({p.view, p.utc_s, p.pa_deg}))
            track.points.push_back({p.view, p.utc_s, p.pa_deg, p.height_rs, "auto"});
      }
    }
    input.analyst = std::move(track);
  }
  try {
    const auto held = reusable(input, session.options, imaged);
    auto measured = std::make_shared<const fit::Measurement>(held ? fit::measure_imaged(input, *held, session.options)
                                                                  : fit::measure_event(input, session.options));
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    char text[160];
    std::snprintf(text, sizeof text, "Measured over the %s points in %.2f s: %s.",
                  points == "both" ? "analyst's and automatic" : (points == "auto" ? "automatic" : "analyst's"), seconds,
                  measured->status.c_str());
    std::string said = text;
    if (!kept_apart.empty())
      said += " In " + kept_apart +
              " the shown CME's automatic points were left out: the list's points there are another CME's, and the "
              "two would have been fitted as one.";
    return {std::move(measured), points, seconds, said};
  } catch (const imaging::InputError& e) {
    return {nullptr, points, 0.0, e.what()};
  }
}

void perform(WindowState& state, const std::vector<ViewPictures>& views, const Session& session, const Action& a,
             const HeadlessOptions& options) {
  if (const auto* c = std::get_if<action::Click>(&a)) return click_window(state, views, *c, options);
  if (const auto* t = std::get_if<action::Tie>(&a)) return tie(state, views, *t);
  try {
    if (const auto* save = std::get_if<action::SaveTrack>(&a)) {
      fit::write_track(save->path, track_of(state));
      return apply(state, action::Saved{save->path});
    }
    if (const auto* load = std::get_if<action::LoadTrack>(&a)) {
      const fit::Track track = fit::read_track(load->path);
      if (!state.event_id.empty() && track.event_id != state.event_id)
        throw imaging::InputError(load->path, "is the track of event \"" + track.event_id + "\", not of \"" + state.event_id + "\"");
      return apply(state, action::TrackRead{points_of(track), load->path, ties_of(track)});
    }
    if (const auto* e = std::get_if<action::Export>(&a)) {
      if (!session.export_result) return apply(state, action::Note{"There is nothing to export to: no event was opened."});
      fs::create_directories(e->dir);
      const fs::path track = fs::path(e->dir) / "analyst.track.json";
      fit::write_track(track, track_of(state));
      session.export_result(track, e->dir);
      return apply(state, action::Note{"Exported the measurement of " + std::to_string(state.points.size()) +
                                       " point(s) to " + e->dir + "."});
    }
  } catch (const imaging::InputError& e) {
    return apply(state, action::Note{e.what()});
  } catch (const fs::filesystem_error& e) {
    return apply(state, action::Note{std::string(e.path1().string()) + ": " + e.code().message() + "."});
  }
  apply(state, a);
  // A fit asked for: run to the end here (scripts); the window's loop runs it on a worker.
  if (std::holds_alternative<action::Fit>(a) && !state.fit_request.empty())
    apply(state, run_fit(state, session, state.fit_request, imaging_of(views)));
}

void run_script(WindowState& state, const std::vector<ViewPictures>& views, std::span<const Action> script,
                const Session& session, const HeadlessOptions& options) {
  for (const Action& a : script) perform(state, views, session, a, options);
}

}  // namespace occulta::viewer
