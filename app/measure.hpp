// app/measure.hpp — `occulta measure EVENT|DIR --out DIR [--track FILE]`: per view, where
// the CME is (central PA, PA span, sky width), how its leading edge moves on the sky
// (speed, acceleration, with σ), when it started (onset at 1 R☉) and when it passes
// 21.5 R☉ on the sky plane. Writes DIR/result.json (schemas/result.schema.json),
// DIR/result.csv (one row), DIR/track.json (the points used) and per view quicklooks
// DIR/<view>/time_height.png (track and fit over the data) and
// DIR/<view>/front.png (the last running difference with the front and the PA span).
//
// Input: an event file, or a folder of FITS frames grouped into views by observer
// (OBSRVTRY, else TELESCOP, else the observer's position to 1°). The event's window is
// applied (frames outside it named in each view's frames_outside_window); a track given
// with --track must match the event (fit/track.hpp check_track_matches) or nothing runs.
//
// The science is fit/measurement.hpp (the one measurement the window and the catalogue
// run call too) and the files' contents fit/result_file.hpp; this verb checks where its
// outputs go, calls them, draws the pictures (app/measure_pictures.hpp), adds the
// provenance and writes the files.
#pragma once

#include <iosfwd>
#include <string>

#include <nlohmann/json.hpp>

#include "fit/measurement.hpp"

namespace occulta::app {

struct MeasureOptions {
  std::string input;      // event file or folder
  std::string out_dir;
  std::string track;      // optional track file: its points replace the automatic ones
  fit::MeasurementOptions measurement;  // median filter, apex law, … (fit/measurement.hpp)
  bool quiet = false;     // no summary table
};

// Runs the measurement; returns the result document it wrote (also for the demo).
nlohmann::json run_measure(const MeasureOptions& options, std::ostream& err);

// The verb: run_measure, then a summary table (unmeasured values as "—"). Exit 0 for
// status "ok" with no problem reported, 1 otherwise.
int measure(const MeasureOptions& options, std::ostream& out, std::ostream& err);

// The summary table of a result (one line per view).
void print_result_table(const nlohmann::json& result, std::ostream& out);

}  // namespace occulta::app
