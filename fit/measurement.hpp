// fit/measurement.hpp — the one measurement of an event (DESIGN.md "One measurement,
// three faces"): event (or folder) + options + optional analyst points → a plain result
// struct. `occulta measure`, the analyst's window and the catalogue run call it; they
// print, draw and write what it returns and compute nothing of their own.
//
// Per view: the imaging chain over the frames inside the event's window (polar running
// differences in σ), every CME's region and leading edge (imaging/front find_fronts),
// each one's track (the analyst's points for the view when given — they go to the CME
// nearest them in PA — else the automatic one along the PA where the front reaches
// highest, kept under any other front above it), the height–time fit (fit/kinematics).
// Across views: which CME is which (fit/associate: geometry and timing; an undecided
// pairing is not guessed — each of its CMEs is measured from its own view and the
// candidate pairings are named in a problem). Per CME: one shell fit over its own views'
// points (fit/shell_fit), its values at 21.5 R☉ (the boundary) and the drag-based
// arrival for the event's targets (fit/arrival), or why it is withheld. With one CME the
// measurement is the one-CME measurement it always was.
//
// Units: degrees, km/s, m/s², R☉ at this interface; times in UTC seconds since
// 2000-01-01 (imaging/time.hpp); NaN where a value was not measured. PAs counter-clockwise
// from solar north through east. fit/result_file.hpp writes the struct as result.json and
// a result.csv row.
//
// Threads: measure_event touches no global state but the FITS checksum policy, and only
// when options.checksum_policy is set (imaging/fits.hpp; it is guarded by a mutex). It
// writes nothing and prints nothing: call it from a worker thread (as the window's loader
// already runs the imaging chain) and show `progress`. The arrival ensemble is seeded
// (EnsembleOptions::seed): the same input gives the same struct.
// Memory: each view keeps its polar running differences (frames × heights × PAs floats),
// what front finding, tracking, the pictures and the window read: in memory, or in a
// temporary file when options.polar_scratch_dir is set (then flat in frames: what grows
// is a few floats per frame and PA); the Cartesian frames are not kept.
// Bad input: imaging::InputError (one sentence naming the file and the fault) from
// load_measurement_input; a view that cannot be used is a problem, the others go on.
#pragma once

#include <array>
#include <filesystem>
#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "fit/arrival.hpp"
#include "fit/event.hpp"
#include "fit/kinematics.hpp"
#include "fit/shell_fit.hpp"
#include "fit/track.hpp"
#include "imaging/chain.hpp"
#include "imaging/fits.hpp"
#include "imaging/front.hpp"
#include "imaging/register.hpp"
#include "imaging/timeheight.hpp"

namespace occulta::fit {

inline constexpr double kUnmeasured = std::numeric_limits<double>::quiet_NaN();

// The options of a measurement: the same as `occulta measure` has.
struct MeasurementOptions {
  int median = 5;                  // median filter against cosmic-ray tracks (0, 3, 5)
  // The shell's apex law: "auto" (quadratic when every view's own height–time fit chose
  // a quadratic, else linear), "linear", "quadratic" or "free" (one apex height per time).
  std::string apex_law = "auto";
  // When set, made the process-wide policy before any frame is read (imaging/fits.hpp);
  // unset: the policy in force is kept (the command line sets it once).
  std::optional<imaging::ChecksumPolicy> checksum_policy;
  // How sentences about the result document name it (measure: the path of its
  // result.json); the arrival reader quotes it when it refuses the boundary values.
  std::string result_name = "result.json";
  // Where each view's polar running differences are kept (imaging/polar_frames.hpp): unset,
  // in memory (the window, which shows every frame); set, in an unlinked temporary file in
  // this folder, written as frames finish and read back frame by frame as the steps need
  // them, so memory stays flat in frames (`measure` and `batch`: TMPDIR). The results are
  // the same either way: the frames read back are the same floats.
  std::optional<std::filesystem::path> polar_scratch_dir;
};

// What a measurement starts from: the event, the analyst's points, each view's frames
// split by the event's window (same order as event.views).
struct MeasurementInput {
  Event event;
  bool from_folder = false;               // event made from a folder of frames (no event file)
  std::optional<Track> analyst;           // checked against the event (check_track_matches)
  std::filesystem::path track_file;       // where `analyst` was read from ("" when given in memory)
  std::vector<WindowSplit> windows;       // per event view
};

// Reads the event file or folder and the optional track file (empty path: none), splits
// each view by the window and checks the track against the event and its frames' times.
// InputError: the event or track file is bad (read_event, read_track), the file given is
// another kind of occulta file ("`measure` needs an event file or a folder of frames"),
// or the track does not match the event.
MeasurementInput load_measurement_input(const std::filesystem::path& event_or_folder,
                                        const std::filesystem::path& track_file = {});

// Where a measurement is, for a progress display. Stages run in this order: chain once
// per view, then front and kinematics once per view (view_index counts the event's views
// from 0, also those skipped), then shell and arrival once.
enum class MeasurementStage { chain, front, kinematics, shell, arrival, done };
const char* to_string(MeasurementStage stage);  // "chain", "front", …

struct MeasurementProgress {
  MeasurementStage stage = MeasurementStage::chain;
  std::string view;           // "" for the shell, arrival and done stages
  int view_index = -1, view_count = 0;
  int frame = 0, frame_count = 0;  // chain: frames through the chain so far, of the view's frames in the window
};
using MeasurementProgressCallback = std::function<void(const MeasurementProgress&)>;

// One measured view.
struct ViewMeasurement {
  std::string name;
  int frames_used = 0;                                   // frames through the chain
  std::vector<std::filesystem::path> frames_outside_window;

  // The chain's outputs the faces draw: where the view looked from, its registered
  // north-up grid, and the polar running differences (σ units) with their times.
  imaging::Observer observer;
  imaging::RegisteredGrid grid;
  imaging::PolarSequence polar;

  imaging::Front front;                                  // the CME's region and leading edge in this view

  // The track: the points used (censored ones left out) and where they came from.
  bool by_analyst = false;                               // the analyst's points, else the automatic track
  std::vector<TrackPoint> points;
  imaging::TrackCensoring censored;                      // points left out, by why (imaging/front.hpp)
  double front_contrast_sigma = kUnmeasured;            // largest band-median σ on the automatic track
  double central_pa_deg = kUnmeasured;                  // the front's, else the mean of the analyst's PAs
  double track_pa_deg = kUnmeasured;                    // the first point's PA (the time–height picture's)

  // The height–time fit of the points: present when there were two or more (its status
  // says whether it succeeded), with the leading edge's definition spread added.
  std::optional<HeightTimeFit> kinematics;
  bool kinematics_ok() const { return kinematics && kinematics->status == FitStatus::ok; }
};

// The shell over all views, and what the data leave open.
struct ShellMeasurement {
  // The converged fit (the rim fit merged with the outer-edge fit for automatic points;
  // fit/shell_fit.hpp merge_edge_fits); absent when no view had points or it failed.
  std::optional<ShellFit> fit;
  std::vector<std::string> views;       // the fitted views' names; EdgePoint::view indexes this
  std::vector<EdgePoint> points;        // what was fitted: the fronts' rims or the analyst's points
  std::string direction_basis;          // "views" | "source region" | "none" (with a fit)
  std::vector<std::string> not_constrained;  // result keys the data do not fix
  std::string status;                   // "ok" | "partial" (failed in a way its numbers do not show)
  std::optional<ApexCrossing> boundary; // the apex at 21.5 R☉, when the law reaches it
  double boundary_half_width_deg = kUnmeasured;  // half the face-on width
  double boundary_half_width_sigma_deg = kUnmeasured;
  // Not empty: no arrival may be made from this shell, and why.
  std::string arrival_withheld;
  // Not empty: an arrival holds only under this assumption (one view, direction from the source region).
  std::string arrival_condition;
  int views_without_cme = 0;            // views that see no CME while another does (named in problems)
};

// One CME of the event (a window can hold several, issue 16): its sightings in the views,
// associated across views (fit/associate.hpp), and its own shell, boundary and arrival —
// never fitted over another CME's points.
struct CmeMeasurement {
  int index = 1;                           // 1, 2, … by when it was first seen (earliest first)
  // How its views were put together: "views" (one CME's sightings in several views, the
  // association decided), "one view" (no other view's CME pairs with it) or "undecided"
  // (it could pair with more than one: measured from its own view alone, not guessed).
  std::string association = "views";
  // Every view measured, in the event's order, as Measurement::views: this CME's front,
  // points and kinematics where the view sees it, front.found false elsewhere.
  std::vector<ViewMeasurement> views;
  ShellMeasurement shell;
  bool arrival_made = false;
  std::vector<TargetArrival> arrivals;
  std::string status;                      // as Measurement::status, for this CME alone
  std::vector<std::string> problems;       // its own sentences (in Measurement::problems prefixed "CME k: ")
  double first_seen_utc_s = kUnmeasured;   // the earliest onset frame (or analyst point) over its views
  double onset_utc_s = kUnmeasured;        // the earliest kinematic onset (1 R☉ on the sky) over its views
};

struct Measurement {
  std::string event_id;
  std::string status;                      // "ok" | "partial" | "failed" (README "Outputs")
  std::vector<std::string> problems;       // sentences, each said once
  // The primary CME (below) — all there is when the window holds one: every view measured,
  // in the event's order; the shell; the arrival.
  std::vector<ViewMeasurement> views;      // the views measured, in the event's order
  ShellMeasurement shell;
  // The arrival at each of the event's targets (default Earth) from the shell's boundary
  // values and covariance: model estimates with stated uncertainty (kArrivalCaution).
  bool arrival_made = false;
  std::vector<TargetArrival> arrivals;
  EnsembleOptions ensemble;                // what the arrivals were drawn with
  // Every CME found (one entry when there is one, a copy of the above; none when no view
  // found any), by first sighting; cmes[primary] is the one above, chosen as
  // primary_reason says: the event's source region (the fitted direction nearest it), else
  // the earliest onset.
  std::vector<CmeMeasurement> cmes;
  int primary = 0;                         // index into cmes
  std::string primary_reason;              // one sentence
  // The files the result rests on: the event file, the track file, each view's frames
  // inside the window (what provenance hashes).
  std::vector<std::filesystem::path> inputs;
  MeasurementOptions options;              // as given
  std::filesystem::path track_file;        // as given ("" for none)
};

// The measurement in two parts: the imaging of each view (the chain: what takes the
// time), then the rest (front, track, kinematics, shell, boundary, arrival). A caller that
// holds the views' imaging already (the window, whose loader ran the chain) runs the rest
// only; measure_event runs both.

// One view's imaging as the chain makes it over the view's frames inside the window.
struct ViewImaging {
  std::string name;
  std::vector<std::filesystem::path> files;  // the frames the chain ran over
  // Not empty: why the view cannot be measured (a sentence: no frames, none in the window,
  // the chain refused them); nothing below is set then.
  std::string unusable;
  int frames_used = 0;
  imaging::Observer observer;                // the last frame's
  imaging::RegisteredGrid grid;
  imaging::OcculterRadii radii;              // where the view's data lie
  imaging::PolarSequence polar;              // running differences in σ, one per frame but the first
  std::vector<std::string> problems;         // the chain's sentences (imaging::ViewRun::problems)
};

// Runs the chain over one view's frames; `each_frame` (when given) also sees every frame
// the chain gives (the window makes its pictures from them). The polar running
// differences go to a temporary file in `scratch_dir` when given, else stay in memory.
// InputError when the chain cannot use the frames, or the temporary file cannot be made
// or written.
ViewImaging image_view(const std::string& name, const std::vector<std::filesystem::path>& files,
                       const imaging::ChainOptions& chain,
                       const std::function<void(const imaging::ChainFrame&)>& each_frame = {},
                       const std::optional<std::filesystem::path>& scratch_dir = {});

// The imaging of every view of the event, in the event's order (chain_options(event, view,
// options.median) over input.windows[i].inside); a view that cannot be used has `unusable`.
std::vector<ViewImaging> image_event(const MeasurementInput& input, const MeasurementOptions& options,
                                     const MeasurementProgressCallback& progress = {});

// The rest of the measurement over the views' imaging (one per event view, in order, as
// image_event makes it). Reports the front, kinematics, shell, arrival and done stages.
Measurement measure_imaged(const MeasurementInput& input, const std::vector<ViewImaging>& imaged,
                           const MeasurementOptions& options, const MeasurementProgressCallback& progress = {});

// The measurement: image_event, then measure_imaged. `progress`, when given, is called on
// the calling thread at each stage.
Measurement measure_event(const MeasurementInput& input, const MeasurementOptions& options,
                          const MeasurementProgressCallback& progress = {});

// load_measurement_input, then measure_event.
Measurement measure_event(const std::filesystem::path& event_or_folder, const std::filesystem::path& track_file,
                          const MeasurementOptions& options, const MeasurementProgressCallback& progress = {});

// The points a measurement used, every view's in order: the track file it writes.
Track used_track(const Measurement& measurement);

// Which of a view's fronts the analyst's points for that view (`marked`, not empty) are
// given to: the front whose central PA is nearest their circular mean PA, when that mean
// lies within the front's PA span widened by 20° on each side (the association's PA
// tolerance, our choice). None (nullopt): the points are a CME the finder missed, and
// stand alone. The measurement's rule; the window asks it too, so that it never fits one
// CME's points with another's.
std::optional<std::size_t> marked_front(const std::vector<const imaging::Front*>& fronts,
                                        const std::vector<TrackPoint>& marked);

}  // namespace occulta::fit
