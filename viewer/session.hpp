// viewer/session.hpp — what the window's actions need beyond its state: the event as
// `measure` reads it (for the fit, which is fit/measurement.hpp's one measurement), the
// track file, and the export, which the command line's face supplies (app/view.cpp: the
// viewer does not write `measure`'s pictures itself; DESIGN.md, nothing below app knows
// the command line).
//
// perform() is apply() for the actions that reach outside the state — clicks and ties
// (drawn or triangulated on the views), fits, files — and apply() for every other.
// Scripts (run_script) and the window's loop go through it; faults of files become the
// state's message (one sentence naming the file), never an exception, so that no action
// of the analyst's can close the window.
#pragma once

#include <filesystem>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "fit/measurement.hpp"
#include "fit/track.hpp"
#include "viewer/actions.hpp"
#include "viewer/headless.hpp"
#include "viewer/pictures.hpp"

namespace occulta::viewer {

struct Session {
  std::optional<fit::MeasurementInput> input;  // the event as `measure` reads it; none: no fit, no export
  fit::MeasurementOptions options;             // what `measure` would run with
  // Writes what `occulta measure EVENT --track TRACK --out DIR` writes (app/view.cpp gives
  // it; InputError for a fault, naming the file).
  std::function<void(const std::filesystem::path& track, const std::filesystem::path& dir)> export_result;
};

// The window's points as a track file (origin "analyst" or "auto").
fit::Track track_of(const WindowState& state);

// The views' imaging as the loader made it (ViewPictures::imaging), held apart from the
// pictures so that a fit on a worker keeps it while the loader adds views.
using ViewImagings = std::vector<std::shared_ptr<const fit::ViewImaging>>;
ViewImagings imaging_of(const std::vector<ViewPictures>& views);

// The measurement over the chosen points ("analyst", "auto" or "both": the analyst's and
// the automatic track's), as `measure --track` makes it; FitDone with its time, or with
// a message and no measurement when it cannot be made. Callable from a worker thread.
// When `imaged` holds every view's imaging over the frames `measure` uses (those inside
// the event's window), only the rest of the measurement runs (fit::measure_imaged: same
// code, same result); else the chain runs again (fit::measure_event).
action::FitDone run_fit(const WindowState& state, const Session& session, const std::string& points,
                        const ViewImagings& imaged = {});

// Applies one action, performing what reaches outside the state (see above).
void perform(WindowState& state, const std::vector<ViewPictures>& views, const Session& session, const Action& action,
             const HeadlessOptions& options = {});

}  // namespace occulta::viewer

namespace occulta::viewer {

// Applies a script's actions in order through perform() (a click as the window would take
// it, a fit run to the end before the next action).
void run_script(WindowState& state, const std::vector<ViewPictures>& views, std::span<const Action> script,
                const Session& session = {}, const HeadlessOptions& options = {});

}  // namespace occulta::viewer
