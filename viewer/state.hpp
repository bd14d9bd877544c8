// viewer/state.hpp — everything the analyst's window shows, and nothing it computes
// (STYLE.md "The window is a function of plain state"). Only viewer/actions.cpp changes it.
//
// Conventions: times are UTC seconds since 2000-01-01 (imaging/time.hpp); sky positions are
// in R☉ from Sun centre, x to solar west and y to solar north (Thompson 2006's θx, θy
// directions, as on the imaging chain's registered grid); contrast limits are in σ of the
// displayed image (what every display holds, see viewer/pictures.hpp); sizes in pixels.
#pragma once

#include <cmath>
#include <limits>
#include <memory>
#include <numbers>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "viewer/colour_table.hpp"

namespace occulta::fit {
struct Measurement;  // fit/measurement.hpp
}

namespace occulta::viewer {

// What each view's panel shows of its frame.
enum class Display { calibrated, running_difference, base_difference, nrgf, polar };

std::span<const Display> displays();                 // every display, in the order of the enum
std::string_view display_name(Display display);      // "calibrated", "running_difference", …
std::string_view display_label(Display display);     // for people: "running difference"
std::optional<Display> display_named(std::string_view name);

// A leading-edge point: clicked by the analyst, or found by the automatic front finder
// (then adopted or not). PA counter-clockwise from solar north through east, 0–360°;
// height in the plane of the sky from Sun centre (what the track file holds).
struct MarkedPoint {
  std::string view;
  double utc_s = 0.0;       // the time of the view's frame it was marked on
  double pa_deg = 0.0;
  double height_rs = 0.0;
  bool automatic = false;   // origin "auto" in the track file; false: "analyst"
};

// A place clicked on one view's frame, for tie-pointing (viewer/stereo.hpp).
struct SkyMark {
  std::string view;
  double utc_s = 0.0;            // the view's frame it was clicked on
  double x_rs = 0.0, y_rs = 0.0;  // sky position, R☉ (x west, y north)
};

// One feature clicked on two views and where their lines of sight meet (Stonyhurst).
struct TiePoint {
  SkyMark a, b;
  double lon_deg = 0.0, lat_deg = 0.0, distance_rs = 0.0;
  double miss_rs = 0.0;  // how far apart the two lines of sight pass
};

// The shell drawn on every view (fit/shell.hpp's graduated cylindrical shell): its six
// parameters in degrees (Stonyhurst lon, lat; tilt, half-angle α) and κ, and the apex law
// h(t) = h₀ + v (t − t₀) + ½ a (t − t₀)² (fit/scenario.hpp ApexLaw: t₀ UTC seconds, h₀ R☉,
// v km/s, a m/s²). t₀ is the first frame time until set.
struct ShellControls {
  bool shown = false;
  double lon_deg = 0.0, lat_deg = 0.0, tilt_deg = 0.0, half_angle_deg = 30.0, aspect_ratio = 0.3;
  double ref_utc_s = std::numeric_limits<double>::quiet_NaN();
  double apex_height_rs = 5.0, speed_km_s = 500.0, accel_m_s2 = 0.0;
};

// The cursor over a view's panel, as a sky position (also over the polar display).
struct Hover {
  std::string view;
  double x_rs = 0.0, y_rs = 0.0;
};

struct WindowState {
  std::vector<std::string> views;      // view names, in the order the event lists them
  std::vector<double> timeline_utc_s;  // every view's frame times merged, increasing; empty while loading
  int frame = 0;                       // index into timeline_utc_s: the displayed time
  Display display = Display::running_difference;
  std::string focus;                   // one view shown alone; empty: every view side by side
  double sigma_lo = -3.0, sigma_hi = 3.0;
  ColourTable colours = ColourTable::grey;
  bool playing = false;
  int width = 1280, height = 800;      // the window's size
  std::optional<Hover> hover;
  bool quit = false;

  // Marking (viewer/actions.hpp AddPoint …). view_times_utc_s[i]: the frame times of
  // views[i] (a point is marked on one of them); empty while that view loads.
  std::vector<std::vector<double>> view_times_utc_s;
  std::vector<MarkedPoint> points;                 // in the order they were marked
  int selected = -1;                               // index into points; −1: none
  bool dragging = false;                           // a point is being dragged (one undo step)
  std::vector<std::vector<MarkedPoint>> undo, redo;  // earlier and undone `points`, newest last
  bool unsaved = false;                            // points changed since the last save or load

  ShellControls shell;
  // The PA the height–time panels follow; NaN: each view's points' mean direction.
  double height_time_pa_deg = std::numeric_limits<double>::quiet_NaN();

  // Tie-pointing: while `tying`, a click is a feature to tie, not a leading-edge point. The
  // first click's line of sight is drawn on the other views (also the hovered place's,
  // before a first click); a click on another view ties the pair.
  bool tying = false;
  std::optional<SkyMark> tie_first;
  std::vector<TiePoint> ties;

  // The measurement (fit/measurement.hpp, the one `measure` runs): the last fit's; shared,
  // never changed (copies of the state stay cheap).
  std::string event_id;
  std::shared_ptr<const fit::Measurement> measured;
  std::string measured_points;          // the points it used: "analyst", "auto" or "both"
  // The CME shown (index into measured->cmes; viewer/cme_list.hpp): its leading edges and
  // tracks, height–time fits, shell and answer. After a measurement: the analyst's CME when their points made
  // one, else the primary; the analyst picks another from the list.
  int cme = 0;
  double measured_seconds = 0.0;        // how long it took
  std::string fit_request;              // a fit asked for and not yet done ("": none)
  std::vector<MarkedPoint> auto_points; // the automatic track of the shown CME (after an automatic fit)
  std::string track_path;               // where the points were last saved or loaded from
  std::string message;                  // the last file or fit action's outcome, one sentence
  bool asking_quit = false;             // quit asked with unsaved points: the window asks
  bool help = false;                    // the keys shown
};

// The displayed time, or NaN while the timeline is empty.
double displayed_time(const WindowState& state);

// A point's sky position (R☉, x west, y north). PA counter-clockwise from north through
// east, and east is −x: x = −h sin PA, y = h cos PA.
inline double sky_x_rs(const MarkedPoint& p) { return -p.height_rs * std::sin(p.pa_deg * std::numbers::pi / 180.0); }
inline double sky_y_rs(const MarkedPoint& p) { return p.height_rs * std::cos(p.pa_deg * std::numbers::pi / 180.0); }
// The inverse: PA in [0, 360) and height of a sky position.
double pa_deg_at(double x_rs, double y_rs);

}  // namespace occulta::viewer
