// viewer/actions.hpp — every change the analyst can make to the window, by mouse, key or
// script, as a named action, and apply(): the only place the window's state changes.
//
// The script form of each action (viewer/script.hpp) is given beside it. Arguments out
// of range are clamped (a frame index past the end shows the last frame), so an action
// can never leave the state inconsistent.
#pragma once

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
struct Quit {};                                  // {"do": "quit"}
// Not a person's action: the loader's frame times, when a view has finished loading.
struct Timeline { std::vector<double> utc_s; };

}  // namespace occulta::viewer::action

namespace occulta::viewer {

using Action = std::variant<action::Frame, action::Step, action::ShowDisplay, action::Focus, action::Contrast,
                            action::Colours, action::Play, action::Pause, action::Resize, action::HoverAt,
                            action::Leave, action::Quit, action::Timeline>;

void apply(WindowState& state, const Action& action);

// The smallest and largest window the state accepts (Resize clamps to them).
inline constexpr int kMinWindowPx = 320, kMaxWindowPx = 8192;

}  // namespace occulta::viewer
