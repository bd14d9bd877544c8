// imaging/chain.hpp — one view's whole imaging chain, streamed frame by frame:
//   read (fits) → optional median filter on the raw frame (difference) → register AND
//   unwrap onto the polar grid in one remap from the raw frame, occulter/field-stop mask
//   folded in (register, polar, calibrate) → DN/s (calibrate) → optional background, taken
//   on the polar grid too (calibrate) → running difference, and optionally base
//   difference, in σ per ring of height (difference).
// Frames on the Cartesian registered grid (for quicklooks) are made only when asked for
// (ChainOptions::cartesian): they cost about as much again as the polar chain.
//
// Memory does not grow with the number of frames: the chain holds the previous raw frame,
// the two frames it reads ahead (each read on its own thread while the chain works on the
// current one), the base frame, the remap tables and a few polar images; what the caller keeps
// from each ChainFrame (e.g. the polar running differences, polar_running_differences())
// is the only part that grows (maps writes them to its cube's file as they come:
// fits.hpp FitsCubeWriter; measure to a temporary file: polar_frames.hpp). Exception: a
// low-percentile background needs one extra pass over all frames before the differences
// start (each frame is then read twice).
//
// Conventions: see register.hpp (grid: north up, west +x, east −x, row 0 = bottom as
// displayed) and polar.hpp (rows = heights in R☉, columns = PA in degrees CCW from north
// through east). Times are UTC seconds since 2000-01-01 (time.hpp).
#pragma once

#include <filesystem>
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/calibrate.hpp"
#include "imaging/polar.hpp"
#include "imaging/register.hpp"
#include "imaging/sequence.hpp"
#include "imaging/timeheight.hpp"

namespace occulta::imaging {

struct ChainOptions {
  std::optional<Observer> observer;                     // event file; else the headers'
  std::optional<std::pair<double, double>> occulter_rs;  // event file [inner, outer]; else OCC_IN/OCC_OUT; else the data
  enum class Background { None, BaseFrame, LowPercentile };
  Background background = Background::None;
  double background_percentile = 5.0;
  std::optional<double> base_time_utc_s;  // the pre-event frame is the last at or before it; default the first
  bool base_difference = false;           // also compute base differences (costs a second polar MAD per frame)
  double pa_step_deg = 0.5;
  double height_step_rs = 0.0;            // 0: the grid's R☉ per pixel
  double common_step_s = 0.0;             // > 0: running differences scaled to this time step
  int median_filter = 0;                  // 0 (off), 3 or 5: against cosmic-ray hits
  int noise_smooth_rings = 2;             // ring σ̂ smoothed over ±this many height rows
  // Frames on the registered grid: None; Last — ViewRun::last_registered/last_previous_registered
  // for the last running difference only; Every — ChainFrame::registered/previous_registered
  // for each one.
  enum class Cartesian { None, Last, Every };
  Cartesian cartesian = Cartesian::None;
};

// What a caller sees for each running difference (every usable frame but the first). The
// images belong to the chain and are valid during the call only: copy what you keep.
struct ChainFrame {
  const SequenceFrame& frame;
  double step_s = 0.0;                      // time since the previous usable frame
  const cv::Mat& registered;                // this frame: DN/s (background subtracted) on the grid, NaN = no data
                                            // (empty unless ChainOptions::cartesian is Every)
  const cv::Mat& previous_registered;       // the previous usable frame, same form
  const cv::Mat& polar_running;             // running difference / σ̂(height)
  const std::vector<float>& running_sigma;  // σ̂ per height row, DN/s (after the time-step scaling)
  const cv::Mat* polar_base = nullptr;      // base difference / σ̂(height), when asked for
  const PolarGrid& polar;                   // the grid of polar_running (ViewRun::polar, known from the first frame)
};

struct ViewRun {
  std::string view;
  RegisteredGrid grid;
  OcculterRadii radii;
  PolarGrid polar;
  double base_utc_s = 0.0;
  int frames_used = 0;                     // frames read and registered
  int registration_builds = 0;             // how often remap tables were built (1 when the pointing is fixed)
  std::vector<std::string> problems;       // sentences: skipped frames, duplicates, …
  std::vector<std::string> notes;          // sentences: where the occulter radii came from, fit residuals
  cv::Mat last_registered, last_previous_registered;  // ChainOptions::cartesian Last: the last difference's two
                                                      // frames, in ChainFrame::registered's form
};

// Runs the chain over `paths` (any order) and calls on_frame for each running difference,
// oldest first. Throws InputError for a view that cannot be used (two observers, fewer than
// three usable frames — also when frames turn out unreadable on the way).
ViewRun run_view(const std::string& view, const std::vector<std::filesystem::path>& paths,
                 const ChainOptions& options, const std::function<void(const ChainFrame&)>& on_frame);

// The same, keeping the polar running differences (the only part that grows).
struct PolarRun {
  ViewRun run;
  PolarSequence running;  // utc_s of each frame (the later frame of each difference)
};
PolarRun polar_running_differences(const std::string& view, const std::vector<std::filesystem::path>& paths,
                                   const ChainOptions& options = {});

// For the quicklook of a Cartesian running difference: (current − previous) · scale,
// divided by its robust σ (difference.hpp).
cv::Mat sigma_difference(const cv::Mat& current, const cv::Mat& previous, double scale = 1.0);

}  // namespace occulta::imaging
