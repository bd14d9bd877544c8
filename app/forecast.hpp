// app/forecast.hpp — `occulta forecast RESULT.json [--target T]... [--members N] [--seed S]
// [--wind LO,HI] [--drag LO,HI] [--event FILE] [--out DIR]`: the drag-based arrival
// estimate (fit/arrival) of a measured CME at each target, from the result's `shell` and
// `boundary` blocks. Prints a table with the caution; with --out writes DIR/arrival.json
// (schemas/arrival.schema.json) and DIR/arrival_<target>.png (histogram of arrival times).
//
// Targets: --target earth | l1 | NAME:LON,LAT,AU (repeatable); else those of --event's
// `forecast` block; else earth. Wind and drag ranges: --wind / --drag, else --event's,
// else the defaults of fit::DragPriors. RESULT.json is only read.
#pragma once

#include <cstdint>
#include <iosfwd>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::app {

struct ForecastOptions {
  std::string result;                 // result.json to read
  std::vector<std::string> targets;   // as parse_target reads them
  int members = 10000;
  std::uint64_t seed = 1;
  std::string wind;                   // "LO,HI" km/s, empty: not given
  std::string drag;                   // "LO,HI" per km, empty: not given
  std::string event;                  // event file whose `forecast` block to use, empty: none
  std::string out_dir;                // empty: print only
};

// The arrival document (what DIR/arrival.json holds): schema "occulta.arrival/1",
// event_id, result, boundary_time, spread_from, members, seed, caution, arrival[],
// provenance (app/provenance.hpp: the result and event files' SHA-256, the options).
nlohmann::json run_forecast(const ForecastOptions& options, std::ostream& err);

// The verb: run_forecast, the table, the files. Exit 0 (faults are InputErrors: an
// option's → usage, a file's → input problem; app/cli.hpp).
int forecast(const ForecastOptions& options, std::ostream& out, std::ostream& err);

// The table of an `arrival[]` block (result.json's or arrival.json's), then the caution.
void print_arrival_table(const nlohmann::json& arrival, std::ostream& out);

}  // namespace occulta::app
