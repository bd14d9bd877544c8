// viewer/ui.hpp — the analyst's window drawn from plain state: draw_window() draws a
// WindowState and the views' pictures with Dear ImGui and returns the actions the person
// asked for (buttons, sliders, keys, the cursor over a panel); it changes nothing
// (STYLE.md "The window is a function of plain state"; actions.hpp applies them).
//
// Layout, in the order an analyst works: the display and contrast controls at the top (find
// the event: which difference, how much contrast), the views side by side in the middle,
// north up about Sun centre (see it), the readout under the cursor, and the timeline at the
// bottom (see it move: play, step, slide).
//
// Keys (characters, so any keyboard layout): → / ← step a frame, space play/pause,
// 1–5 the displays (calibrated, running difference, base difference, NRGF, polar),
// c the next colour table, v the next view alone (then all), [ and ] narrow and widen the
// contrast, Home / End the first and last frame, q quit; u undo, r redo, x (or Delete,
// Backspace) delete the selected point, t tie features across views (clicks tie, again:
// clicks mark). The left button on a frame marks a point, or
// selects the point under it; dragging moves the selected point. Each gives the same
// action a script does.
#pragma once

#include <limits>
#include <span>
#include <string>
#include <vector>

#include "viewer/actions.hpp"
#include "viewer/headless.hpp"
#include "viewer/image_panel.hpp"
#include "viewer/pictures.hpp"
#include "viewer/window_cache.hpp"

namespace occulta::viewer {

// One shown view's image, coloured as the state says, and the shell's outline on it: made
// before the frame is drawn, because the renderer needs every texture the frame uses.
struct ShownView {
  const ViewPictures* view = nullptr;
  int frame = -1;  // index into view->frames: the frame nearest the displayed time; −1: none yet
  ImagePanel panel;
  // The height–time panel (viewer/height_time.hpp) along this PA; NaN: none to show yet.
  double time_height_pa_deg = std::numeric_limits<double>::quiet_NaN();
  ImagePanel time_height;
  std::optional<fit::HeightTimeFit> height_fit;  // the kinematic fit drawn on it (height_time.hpp)
  OutlineRuns outline;  // the shell as this frame's observer sees it (when the shell is shown)
};

// With a cache (window_cache.hpp), what the last frames already coloured or outlined is
// taken from it; the pictures are the same either way.
std::vector<ShownView> shown_views(const WindowState& state, const std::vector<ViewPictures>& views,
                                   WindowCache* cache = nullptr);

// The textures of shown_views, for the renderer.
std::vector<Texture> textures_of(const std::vector<ShownView>& shown);

struct LoadingShown {
  bool done = true;
  int view = 0, views = 0, frame = 0, frames = 0;
  std::string loading;
};

// Keys that are not characters, pressed (or repeated) since the last frame. The window
// collects them from GLFW itself: Dear ImGui 1.86 keeps only whether a key is down, so a
// press and release between two frames (a quick tap, xdotool) would be lost.
enum class Key { left, right, home, end, erase };  // erase: Delete or Backspace

// Where a shown view's image lies in the window: its plot frame (data ↔ window pixels).
struct PanelPlace {
  std::string view;
  Display display = Display::running_difference;
  PlotFrame frame;
};

// Draws the whole window (DisplaySize = state's size) between NewFrame and Render; where
// the images were laid out goes to `placed` when given.
std::vector<Action> draw_window(const WindowState& state, const std::vector<ShownView>& shown,
                                const std::vector<ViewPictures>& views, const LoadingShown& loading = {},
                                std::span<const Key> pressed = {}, std::vector<PanelPlace>* placed = nullptr);

// Where the images lie in the window the state draws (no pixels are drawn): for scripts
// and tests that click on a sky position.
std::vector<PanelPlace> panel_places(const WindowState& state, const std::vector<ViewPictures>& views,
                                     const HeadlessOptions& options = {});

// The window with no display: the state drawn by viewer/headless at its size.
Framebuffer draw_window_headless(const WindowState& state, const std::vector<ViewPictures>& views,
                                 const HeadlessOptions& options = {});

// A click at a window pixel: the window is drawn as the state stands (draw_window, no
// pixels) with the left button pressed at that pixel, then let go, and what those frames
// ask for is applied (viewer/session.hpp perform, run_script).
void click_window(WindowState& state, const std::vector<ViewPictures>& views, const action::Click& click,
                  const HeadlessOptions& options = {});

// The sky position under a panel pixel: the plot's inverse mapping (for the polar display,
// its (PA, height) turned into a sky position).
DataPoint sky_at(const PlotFrame& frame, Display display, ImVec2 pixel);

}  // namespace occulta::viewer
