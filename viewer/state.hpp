// viewer/state.hpp — everything the analyst's window shows, and nothing it computes
// (STYLE.md "The window is a function of plain state"). Only viewer/actions.cpp changes it.
//
// Conventions: times are UTC seconds since 2000-01-01 (imaging/time.hpp); sky positions are
// in R☉ from Sun centre, x to solar west and y to solar north (Thompson 2006's θx, θy
// directions, as on the imaging chain's registered grid); contrast limits are in σ of the
// displayed image (what every display holds, see viewer/pictures.hpp); sizes in pixels.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "viewer/colour_table.hpp"

namespace occulta::viewer {

// What each view's panel shows of its frame.
enum class Display { calibrated, running_difference, base_difference, nrgf, polar };

std::span<const Display> displays();                 // every display, in the order of the enum
std::string_view display_name(Display display);      // "calibrated", "running_difference", …
std::string_view display_label(Display display);     // for people: "running difference"
std::optional<Display> display_named(std::string_view name);

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
};

// The displayed time, or NaN while the timeline is empty.
double displayed_time(const WindowState& state);

}  // namespace occulta::viewer
