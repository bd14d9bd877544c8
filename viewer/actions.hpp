// viewer/actions.hpp — every change the analyst can make to the window, by mouse, key or
// script, as a named action, and apply(): the only place the window's state changes.
//
// The script form of each action (viewer/script.hpp) is given beside it. Arguments out
// of range are clamped (a frame index past the end shows the last frame), so an action
// can never leave the state inconsistent.
#pragma once

#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "viewer/state.hpp"

namespace occulta::viewer::action {

struct Frame { int index = 0; };                 // {"do": "frame", "index": 5}
struct Step { int by = 1; bool wrap = false; };  // {"do": "step", "by": -1, "wrap": false}
struct ShowDisplay { Display mode; };            // {"do": "display", "mode": "base_difference"}
struct Focus { std::string view; };              // {"do": "view", "name": "east"}; "" or "all": side by side
struct Contrast { double lo_sigma, hi_sigma; };  // {"do": "contrast", "lo_sigma": -2, "hi_sigma": 2}
struct Colours { ColourTable table; };           // {"do": "colours", "table": "blue_red"}
struct Play {};                                  // {"do": "play"}
struct Pause {};                                 // {"do": "pause"}
struct Resize { int width, height; };            // {"do": "resize", "width": 1280, "height": 800}
struct HoverAt { std::string view; double x_rs, y_rs; };  // {"do": "hover", "view": "east", "x": 3.5, "y": -2}
struct Leave {};                                 // {"do": "leave"}: the cursor left the panels
struct Quit {};                                  // {"do": "quit"}; with unsaved points the window asks first
// Not a person's action: the loader's frame times, when a view has finished loading.
struct Timeline { std::vector<double> utc_s; };
struct ViewFrames { std::string view; std::vector<double> utc_s; };  // one view's frame times

// Marking the leading edge. A point lands on the view's frame nearest utc_s in time (as a
// click on the frame shown at that time does); PA is wrapped into [0, 360); a height
// outside kPointHeightRangeRs, a view that is not loaded, or an index that names no point
// changes nothing. Each change but a drag's later moves is one undo step.
// {"do": "point", "view": "east", "time": "2031-03-14T07:12:00", "pa_deg": 95, "height_rs": 6.2}
struct AddPoint { std::string view; double utc_s, pa_deg, height_rs; bool automatic = false; };
// {"do": "move", "index": 0, "pa_deg": 96, "height_rs": 6.4}  (index counts from 0, in marking order)
// A drag's moves (drag = true) are one undo step, from the first move to EndDrag.
struct MovePoint { int index; double pa_deg, height_rs; bool drag = false; };
struct EndDrag {};                               // the mouse button let go of a dragged point
struct SelectPoint { int index; };               // {"do": "select", "index": 2}; −1: none
struct DeletePoint { int index = -1; };          // {"do": "delete", "index": 2}; no index: the selected
struct Undo {};                                  // {"do": "undo"}
struct Redo {};                                  // {"do": "redo"}
// {"do": "click", "x": 400, "y": 300}: the left button pressed and let go at that window
// pixel (Dear ImGui's: x right, y down, from the window's top-left corner). It is the
// window that knows what lies there: run_script (ui.hpp) draws the window as the state
// stands and applies what the click asked for; apply() alone leaves the state as it is.
struct Click { float x, y; };

// The shell's controls; any subset of them, the others kept. A change that would give an
// invalid shell (fit/shell.hpp is_valid: h₀ > 0, 0 ≤ α, 0 ≤ κ < 1, α + asin κ < 90°) or
// a non-finite value changes nothing.
// {"do": "shell", "shown": true, "lon_deg": -12, "lat_deg": 6, "tilt_deg": 30, "half_angle_deg": 26,
//  "aspect_ratio": 0.33, "ref_time": ISO, "apex_height_rs": 2, "speed_km_s": 950, "accel_m_s2": -12}
// Tie-pointing. {"do": "tie_mode", "on": true}: clicks tie features across views.
struct TieMode { bool on = true; };
struct TieFirst { SkyMark mark; };              // a first click (its epipolar line is drawn)
struct AddTie { TiePoint tie; };                // a second click, triangulated by the window
// {"do": "tie", "a": {"view", "time", "pa_deg", "height_rs"}, "b": {…}}: the pair as two
// clicks at those places on the views' frames nearest those times would tie it; the
// window (run_script) triangulates it, apply() alone leaves the state as it is.
struct Tie { AddPoint a, b; };
struct ClearTies {};                            // {"do": "clear_ties"}

// The measurement over the analyst's points, the automatic ones or both ("" or absent:
// the analyst's when there are any, else the automatic). The window runs it (on a worker
// thread; scripts wait for it) and applies FitDone: the answer, and the shell's controls
// set to the fitted shell. {"do": "fit", "points": "analyst"}
struct Fit { std::string points; };
struct FitDone {
  std::shared_ptr<const fit::Measurement> measured;  // null: it failed (message says why)
  std::string points;
  double seconds = 0.0;
  std::string message;
};
// The CME the window shows, by its number in the measurement (result.json's `index`, from
// 1; viewer/cme_list.hpp): its tracks on the frames, its height–time fits, its shell in the
// controls (hidden when it has none) and its answer. A number the measurement does not
// have changes nothing. {"do": "cme", "index": 2}
struct PickCme { int number = 1; };
// The automatic track's points adopted as points of the analyst's list (then editable):
// one by its index in auto_points, or all (−1). {"do": "adopt", "index": 3}; {"do": "adopt"}
struct Adopt { int index = -1; };
// Files. The window performs them (viewer/session.hpp); apply() records what came of it.
struct SaveTrack { std::string path; };          // {"do": "save_track", "path": "event.track.json"}
struct LoadTrack { std::string path; };          // {"do": "load_track", "path": "event.track.json"}
// {"do": "export", "dir": "out"}: what `occulta measure EVENT --track T --out DIR` writes,
// T being the window's points, saved first as DIR/analyst.track.json.
struct Export { std::string dir; };
struct TrackRead {  // a track file's points and ties replace the lists
  std::vector<MarkedPoint> points;
  std::string path;
  std::vector<TiePoint> ties;
};
struct Saved { std::string path; };             // the points are in that file now
struct Note { std::string message; };           // a file action's outcome or fault
struct QuitAnyway {};                           // quit, leaving unsaved points (the autosave keeps them)
struct KeepWorking {};                          // the quit question answered "no"
struct Help { bool shown = true; };             // {"do": "help", "shown": true}: the keys

// The PA the height–time panels follow (a right click on a frame picks it); NaN or
// {"do": "height_time_pa"} with no pa_deg: back to the points' mean direction.
// {"do": "height_time_pa", "pa_deg": 265}
struct HeightTimePa { double pa_deg = std::numeric_limits<double>::quiet_NaN(); };

struct SetShell {
  std::optional<bool> shown{};
  std::optional<double> lon_deg{}, lat_deg{}, tilt_deg{}, half_angle_deg{}, aspect_ratio{}, ref_utc_s{},
      apex_height_rs{}, speed_km_s{}, accel_m_s2{};
};

}  // namespace occulta::viewer::action

namespace occulta::viewer {

using Action = std::variant<action::Frame, action::Step, action::ShowDisplay, action::Focus, action::Contrast,
                            action::Colours, action::Play, action::Pause, action::Resize, action::HoverAt,
                            action::Leave, action::Quit, action::Timeline, action::ViewFrames, action::AddPoint,
                            action::MovePoint, action::EndDrag, action::SelectPoint, action::DeletePoint,
                            action::Undo, action::Redo, action::Click, action::SetShell,
                            action::TieMode, action::TieFirst, action::AddTie, action::Tie, action::ClearTies,
                            action::Fit, action::FitDone, action::Adopt, action::SaveTrack, action::LoadTrack,
                            action::Export, action::TrackRead, action::Saved, action::Note, action::QuitAnyway,
                            action::KeepWorking, action::Help, action::HeightTimePa, action::PickCme>;

void apply(WindowState& state, const Action& action);

// The smallest and largest window the state accepts (Resize clamps to them).
inline constexpr int kMinWindowPx = 320, kMaxWindowPx = 8192;

// Heights a marked point may have (R☉): what the track file accepts, from the limb to far
// beyond any coronagraph (common practice).
inline constexpr double kPointHeightRangeRs[2] = {1.0, 300.0};

// How many undo steps are kept (the oldest go first).
inline constexpr std::size_t kUndoSteps = 1000;

}  // namespace occulta::viewer
