// app/event.hpp — the event file (`*.event.json`, DESIGN.md "File contracts"): which
// frames make up each view of one event, and what the analyst knows besides.
//
//   id          text
//   views[]     name, files (globs, relative to the event file), optional observer
//               {lon_deg, lat_deg, dist_au} and occulter_rs [inner, outer]
//   window      optional {start, end}: only frames in this UTC interval are used
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

namespace occulta::app {

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

// Reads and checks an event file; InputError(path, …) names the field at fault. A view
// whose globs match nothing is kept with no files (the caller reports it, the other
// views go on).
Event read_event(const std::filesystem::path& path);

// A folder of frames as an event: views grouped by who observed (OBSRVTRY, else TELESCOP,
// else the observer's Stonyhurst position rounded to 1°), named by that. InputError when
// the folder holds no FITS files.
Event event_from_folder(const std::filesystem::path& dir);

// What the event file says about a view, as options of the imaging chain: its observer,
// its occulter radii, the event's base time; median filter size as given.
imaging::ChainOptions chain_options(const Event& event, const EventView& view, int median_filter);

}  // namespace occulta::app
