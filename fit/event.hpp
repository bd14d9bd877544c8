// fit/event.hpp — the event file (`*.event.json`, DESIGN.md "File contracts"): which
// frames make up each view of one event, and what the analyst knows besides.
//
//   id          text
//   views[]     name, files (globs, relative to the event file), optional observer
//               {lon_deg, lat_deg, dist_au} and occulter_rs [inner, outer]
//   window      optional {start, end}: only frames in this UTC interval are used (apply_window)
//   base_time   optional: the pre-event frame for base differences
//   source      optional {lon_deg, lat_deg}: a known source region
//   forecast    optional {targets, wind_km_s [lo, hi], drag_per_km [lo, hi]}
// Times are ISO 8601 UTC in the file, seconds since 2000-01-01 here (imaging/time.hpp).
#pragma once

#include <array>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "imaging/chain.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

struct EventView {
  std::string name;
  std::vector<std::string> globs;             // as written, relative to the event file
  std::vector<std::filesystem::path> files;   // what they match, sorted, duplicates removed
  std::optional<imaging::Observer> observer;  // overrides the headers' observer keywords
  std::optional<std::array<double, 2>> occulter_rs;
};

struct Event {
  std::filesystem::path path;
  std::string id;
  std::vector<EventView> views;
  std::optional<std::array<double, 2>> window_s;  // [start, end]
  std::optional<double> base_time_s;
  std::optional<std::array<double, 2>> source_deg;  // lon, lat
  nlohmann::json forecast;                          // passed on as written (null when absent)
};

// Reads and checks an event file strictly; InputError(path, …) names the key at fault:
// unknown keys (with the nearest known one), wrong types, values outside the allowed
// ranges (observer lon −180–360°, lat ±90°, dist 0.05–100 au; occulter 1–300 R☉; source
// lon −180–360°, lat ±90°; forecast block as read_forecast_block), id and view names
// outside the safe set of fit/strict_json.hpp, another kind of occulta file. A view
// whose globs match nothing is kept with no files (the caller reports it, the other
// views go on).
Event read_event(const std::filesystem::path& path);

// A view's files split by the event's window (all inside when there is none), from each
// frame's header time (imaging::read_frame_time). A file whose time cannot be read stays
// inside: the imaging chain reports it. first/last: the span of the inside frames' times,
// known when `with_span` or when the event has a window. Without a window and without
// `with_span` no header is read (the chain reads them again: serial work before the
// stream) and every file is inside.
struct WindowSplit {
  std::vector<std::filesystem::path> inside, outside;
  std::optional<double> first_utc_s, last_utc_s;
};
WindowSplit apply_window(const Event& event, const EventView& view, bool with_span = false);

// A folder of frames as an event: views grouped by who observed (OBSRVTRY, else TELESCOP,
// else the observer's Stonyhurst position rounded to 1°), named by that. InputError when
// the folder holds no FITS files.
Event event_from_folder(const std::filesystem::path& dir);

// FITS files under `paths`: each path that is a file as given; each folder walked
// recursively for names ending .fits, .fit, .fts, .fz or .fits.gz (any case); sorted. A
// path that does not exist is kept, so that it is reported.
std::vector<std::filesystem::path> collect_fits_paths(const std::vector<std::string>& paths);

// What the event file says about a view, as options of the imaging chain: its observer,
// its occulter radii, the event's base time; median filter size as given.
imaging::ChainOptions chain_options(const Event& event, const EventView& view, int median_filter);

}  // namespace occulta::fit
