// viewer/actions.cpp — see actions.hpp.
#include "viewer/actions.hpp"

#include "fit/measurement.hpp"
#include "fit/shell.hpp"
#include "viewer/cme_list.hpp"
#include "viewer/shell_overlay.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <numbers>

namespace occulta::viewer {
namespace {

constexpr std::array kDisplays{Display::calibrated, Display::running_difference, Display::base_difference,
                               Display::nrgf, Display::polar};
constexpr std::array<std::string_view, 5> kNames{"calibrated", "running_difference", "base_difference", "nrgf",
                                                 "polar"};
constexpr std::array<std::string_view, 5> kLabels{"calibrated", "running difference", "base difference", "NRGF",
                                                  "polar"};

template <class... F>
struct Overloaded : F... {
  using F::operator()...;
};
template <class... F>
Overloaded(F...) -> Overloaded<F...>;  // clang 14 does not deduce aggregates' arguments yet

int last_frame(const WindowState& s) { return std::max(0, int(s.timeline_utc_s.size()) - 1); }

bool names_point(const WindowState& s, int index) { return index >= 0 && index < int(s.points.size()); }

// The points as they are become an undo step; what was undone cannot be redone any more.
void before_change(WindowState& s) {
  s.undo.push_back(s.points);
  if (s.undo.size() > kUndoSteps) s.undo.erase(s.undo.begin());
  s.redo.clear();
  s.unsaved = true;
}

bool usable_height(double h) { return std::isfinite(h) && h >= kPointHeightRangeRs[0] && h <= kPointHeightRangeRs[1]; }
double wrapped_pa(double pa_deg) {
  const double pa = std::fmod(pa_deg, 360.0);
  return pa < 0 ? pa + 360.0 : (pa >= 360.0 ? 0.0 : pa);
}

// The view's frame time nearest utc_s (the earlier on a tie, as pictures.hpp nearest_frame);
// NaN when the view is unknown or not loaded.
double nearest_view_time(const WindowState& s, const std::string& view, double utc_s) {
  const auto at = std::find(s.views.begin(), s.views.end(), view);
  const std::size_t i = std::size_t(at - s.views.begin());
  if (at == s.views.end() || i >= s.view_times_utc_s.size() || !std::isfinite(utc_s))
    return std::numeric_limits<double>::quiet_NaN();
  double best = std::numeric_limits<double>::quiet_NaN();
  for (double t : s.view_times_utc_s[i])
    if (!std::isfinite(best) || std::abs(t - utc_s) < std::abs(best - utc_s)) best = t;
  return best;
}

void step_back(std::vector<std::vector<MarkedPoint>>& from, std::vector<std::vector<MarkedPoint>>& to, WindowState& s) {
  if (from.empty()) return;
  to.push_back(std::move(s.points));
  s.points = std::move(from.back());
  from.pop_back();
  if (!names_point(s, s.selected)) s.selected = -1;
  s.dragging = false;
  s.unsaved = true;
}

// The points a CME's measurement took from its automatic track (not the analyst's).
std::vector<MarkedPoint> automatic_points(const std::vector<fit::ViewMeasurement>& views) {
  std::vector<MarkedPoint> out;
  for (const fit::ViewMeasurement& v : views)
    if (!v.by_analyst)
      for (const fit::TrackPoint& p : v.points) out.push_back({p.view, p.utc_s, p.pa_deg, p.height_rs, true});
  return out;
}

// The controls showing a fitted shell (radians → degrees; the law as fitted).
ShellControls controls_of(const fit::ShellFit& fit, ShellControls c) {
  constexpr double deg = 180.0 / std::numbers::pi;
  c.lon_deg = fit.shell.lon * deg;
  c.lat_deg = fit.shell.lat * deg;
  c.tilt_deg = fit.shell.tilt * deg;
  c.half_angle_deg = fit.shell.half_angle * deg;
  c.aspect_ratio = fit.shell.aspect_ratio;
  c.ref_utc_s = fit.law.ref_time_s;
  c.apex_height_rs = fit.law.height_rs;
  c.speed_km_s = fit.law.speed_km_s;
  c.accel_m_s2 = fit.law.accel_m_s2;
  return c;
}

// The shown CME (viewer/cme_list.hpp) in the shell's controls and, after an automatic fit,
// as the automatic track to adopt; a measurement without CMEs shows its top level.
void show_cme(WindowState& s) {
  const fit::CmeMeasurement* cme = shown_cme(s);
  const std::vector<fit::ViewMeasurement>& views = cme ? cme->views : s.measured->views;
  const std::optional<fit::ShellFit>& fit = cme ? cme->shell.fit : s.measured->shell.fit;
  if (s.measured_points == "auto") s.auto_points = automatic_points(views);
  if (fit) s.shell = controls_of(*fit, s.shell);
  // No fit: hide the outline rather than show another CME's shell as this one's.
  if (fit || s.measured->cmes.size() > 1) s.shell.shown = bool(fit);
}

// " and N tie(s)" when the state holds ties: what a saved or read track file holds.
std::string ties_said(const WindowState& s) {
  return s.ties.empty() ? std::string() : " and " + std::to_string(s.ties.size()) + " tie(s)";
}

}  // namespace

std::span<const Display> displays() { return kDisplays; }
std::string_view display_name(Display display) { return kNames[std::size_t(display)]; }
std::string_view display_label(Display display) { return kLabels[std::size_t(display)]; }
std::optional<Display> display_named(std::string_view name) {
  for (std::size_t i = 0; i < kNames.size(); ++i)
    if (kNames[i] == name) return kDisplays[i];
  return std::nullopt;
}

double pa_deg_at(double x_rs, double y_rs) { return wrapped_pa(std::atan2(-x_rs, y_rs) * 180.0 / std::numbers::pi); }

double displayed_time(const WindowState& state) {
  if (state.timeline_utc_s.empty()) return std::numeric_limits<double>::quiet_NaN();
  return state.timeline_utc_s[std::size_t(std::clamp(state.frame, 0, last_frame(state)))];
}

void apply(WindowState& s, const Action& a) {
  std::visit(
      Overloaded{
          [&](const action::Frame& f) { s.frame = std::clamp(f.index, 0, last_frame(s)); },
          [&](const action::Step& f) {
            const int n = last_frame(s) + 1;
            if (f.wrap) s.frame = ((s.frame + f.by) % n + n) % n;
            else s.frame = std::clamp(s.frame + f.by, 0, n - 1);
          },
          [&](const action::ShowDisplay& d) { s.display = d.mode; },
          [&](const action::Focus& f) {
            const bool known = std::find(s.views.begin(), s.views.end(), f.view) != s.views.end();
            s.focus = known ? f.view : std::string();
          },
          [&](const action::Contrast& c) {
            // A range of at least 0.1 σ, limits within ±1000 σ, in order.
            double lo = std::isfinite(c.lo_sigma) ? std::clamp(c.lo_sigma, -1000.0, 1000.0) : s.sigma_lo;
            double hi = std::isfinite(c.hi_sigma) ? std::clamp(c.hi_sigma, -1000.0, 1000.0) : s.sigma_hi;
            if (lo > hi) std::swap(lo, hi);
            if (hi - lo < 0.1) hi = lo + 0.1;
            s.sigma_lo = lo;
            s.sigma_hi = hi;
          },
          [&](const action::Colours& c) { s.colours = c.table; },
          [&](const action::Play&) { s.playing = true; },
          [&](const action::Pause&) { s.playing = false; },
          [&](const action::Resize& r) {
            s.width = std::clamp(r.width, kMinWindowPx, kMaxWindowPx);
            s.height = std::clamp(r.height, kMinWindowPx, kMaxWindowPx);
          },
          [&](const action::HoverAt& h) {
            if (std::isfinite(h.x_rs) && std::isfinite(h.y_rs)) s.hover = Hover{h.view, h.x_rs, h.y_rs};
          },
          [&](const action::Leave&) { s.hover.reset(); },
          [&](const action::Quit&) {
            if (s.unsaved && !s.points.empty()) s.asking_quit = true;
            else s.quit = true;
          },
          [&](const action::QuitAnyway&) { s.quit = true; },
          [&](const action::KeepWorking&) { s.asking_quit = false; },
          [&](const action::Help& h) { s.help = h.shown; },
          [&](const action::HeightTimePa& h) {
            s.height_time_pa_deg = std::isfinite(h.pa_deg) ? wrapped_pa(h.pa_deg) : std::numeric_limits<double>::quiet_NaN();
          },
          [&](const action::Timeline& t) {
            // Keep the displayed time: the new timeline's nearest frame to it.
            const double now = displayed_time(s);
            s.timeline_utc_s = t.utc_s;
            std::sort(s.timeline_utc_s.begin(), s.timeline_utc_s.end());
            s.timeline_utc_s.erase(std::unique(s.timeline_utc_s.begin(), s.timeline_utc_s.end()),
                                   s.timeline_utc_s.end());
            s.frame = 0;
            if (!std::isfinite(s.shell.ref_utc_s) && !s.timeline_utc_s.empty()) s.shell.ref_utc_s = s.timeline_utc_s.front();
            if (std::isfinite(now))
              for (int i = 0; i <= last_frame(s); ++i)
                if (std::abs(s.timeline_utc_s[std::size_t(i)] - now) <
                    std::abs(s.timeline_utc_s[std::size_t(s.frame)] - now))
                  s.frame = i;
          },
          [&](const action::ViewFrames& f) {
            const auto at = std::find(s.views.begin(), s.views.end(), f.view);
            if (at == s.views.end()) return;
            s.view_times_utc_s.resize(s.views.size());
            std::vector<double>& times = s.view_times_utc_s[std::size_t(at - s.views.begin())];
            times = f.utc_s;
            std::sort(times.begin(), times.end());
          },
          [&](const action::AddPoint& p) {
            const double t = nearest_view_time(s, p.view, p.utc_s);
            if (!std::isfinite(t) || !usable_height(p.height_rs) || !std::isfinite(p.pa_deg)) return;
            before_change(s);
            s.points.push_back(MarkedPoint{p.view, t, wrapped_pa(p.pa_deg), p.height_rs, p.automatic});
            s.selected = int(s.points.size()) - 1;
          },
          [&](const action::MovePoint& m) {
            if (!names_point(s, m.index) || !usable_height(m.height_rs) || !std::isfinite(m.pa_deg)) return;
            if (!m.drag || !s.dragging) before_change(s);
            s.dragging = m.drag;
            MarkedPoint& p = s.points[std::size_t(m.index)];
            p.pa_deg = wrapped_pa(m.pa_deg);
            p.height_rs = m.height_rs;
            s.selected = m.index;
          },
          [&](const action::EndDrag&) { s.dragging = false; },
          [&](const action::SelectPoint& p) { s.selected = names_point(s, p.index) ? p.index : -1; },
          [&](const action::DeletePoint& d) {
            const int index = d.index < 0 ? s.selected : d.index;
            if (!names_point(s, index)) return;
            before_change(s);
            s.points.erase(s.points.begin() + index);
            s.selected = -1;
            s.dragging = false;
          },
          [&](const action::Undo&) { step_back(s.undo, s.redo, s); },
          [&](const action::Redo&) { step_back(s.redo, s.undo, s); },
          [&](const action::Click&) {},  // the window turns it into actions (run_script)
          [&](const action::TieMode& m) {
            s.tying = m.on;
            s.tie_first.reset();
          },
          [&](const action::TieFirst& f) { s.tie_first = f.mark; },
          [&](const action::AddTie& t) {
            s.ties.push_back(t.tie);
            s.tie_first.reset();
            s.unsaved = true;
          },
          [&](const action::Tie&) {},  // the window triangulates it (run_script)
          [&](const action::ClearTies&) {
            if (!s.ties.empty()) s.unsaved = true;
            s.ties.clear();
            s.tie_first.reset();
          },
          [&](const action::Fit& f) {
            std::string points = f.points;
            if (points.empty()) points = s.points.empty() ? "auto" : "analyst";
            if (points != "auto" && s.points.empty()) {
              s.message = "There are no points to fit: mark the leading edge, or fit the automatic track.";
              return;
            }
            s.fit_request = points;
          },
          [&](const action::FitDone& d) {
            s.fit_request.clear();
            s.message = d.message;
            if (!d.measured) return;
            s.measured = d.measured;
            s.measured_points = d.points;
            s.measured_seconds = d.seconds;
            // The CME shown: the one the analyst's points made, else the primary.
            const auto& cmes = d.measured->cmes;
            const auto marked = std::find_if(cmes.begin(), cmes.end(), [](const fit::CmeMeasurement& c) {
              return std::any_of(c.views.begin(), c.views.end(), [](const fit::ViewMeasurement& v) { return v.by_analyst; });
            });
            s.cme = marked != cmes.end() ? int(marked - cmes.begin()) : d.measured->primary;
            show_cme(s);
          },
          [&](const action::PickCme& p) {
            if (!s.measured || p.number < 1 || p.number > int(s.measured->cmes.size())) return;
            s.cme = p.number - 1;
            show_cme(s);
          },
          [&](const action::Adopt& adopt) {
            if (adopt.index >= int(s.auto_points.size()) || s.auto_points.empty()) return;
            before_change(s);
            for (std::size_t i = 0; i < s.auto_points.size(); ++i)
              if (adopt.index < 0 || int(i) == adopt.index) s.points.push_back(s.auto_points[i]);
          },
          [&](const action::SaveTrack&) {},  // performed by the window (session.hpp)
          [&](const action::LoadTrack&) {},
          [&](const action::Export&) {},
          [&](const action::TrackRead& r) {
            before_change(s);
            s.points = r.points;
            s.ties = r.ties;
            s.tie_first.reset();
            s.selected = -1;
            s.unsaved = false;
            s.track_path = r.path;
            s.message = "Read " + std::to_string(r.points.size()) + " point(s)" + ties_said(s) + " from " + r.path + ".";
          },
          [&](const action::Saved& w) {
            s.unsaved = false;
            s.track_path = w.path;
            s.message = "Saved " + std::to_string(s.points.size()) + " point(s)" + ties_said(s) + " to " + w.path + ".";
          },
          [&](const action::Note& n) { s.message = n.message; },
          [&](const action::SetShell& c) {
            ShellControls next = s.shell;
            if (c.shown) next.shown = *c.shown;
            const auto take = [](double& to, const std::optional<double>& from) {
              if (from) to = *from;
            };
            take(next.lon_deg, c.lon_deg);
            take(next.lat_deg, c.lat_deg);
            take(next.tilt_deg, c.tilt_deg);
            take(next.half_angle_deg, c.half_angle_deg);
            take(next.aspect_ratio, c.aspect_ratio);
            take(next.ref_utc_s, c.ref_utc_s);
            take(next.apex_height_rs, c.apex_height_rs);
            take(next.speed_km_s, c.speed_km_s);
            take(next.accel_m_s2, c.accel_m_s2);
            const double values[] = {next.lon_deg, next.lat_deg, next.tilt_deg, next.half_angle_deg, next.aspect_ratio,
                                     next.apex_height_rs, next.speed_km_s, next.accel_m_s2};
            if (!std::all_of(std::begin(values), std::end(values), [](double v) { return std::isfinite(v); })) return;
            if (std::abs(next.lat_deg) > 90.0 || !fit::is_valid(shell_params(next, next.ref_utc_s))) return;
            s.shell = next;
          },
      },
      a);
}

}  // namespace occulta::viewer
