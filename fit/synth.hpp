// fit/synth.hpp — a scenario becomes synthetic observations: per view a sequence of
// FITS frames with full headers (DATE-OBS, EXPTIME, HPLN/HPLT-TAN WCS, HGLN_OBS,
// HGLT_OBS, DSUN_OBS, RSUN_ARC), an event file (DESIGN.md's contract) and a truth file.
//
// What a frame holds, in order: the Thomson-scattered brightness of the background K
// corona, the smooth F corona and the shell's sheath (B☉, fit/render.hpp) → DN by the
// detector's response × exposure → photon (shot) noise from the collected electrons and
// Gaussian read noise → occulter and field stop as no data → cosmic-ray hits → missing
// blocks. Pointing jitter moves the Sun centre in the header and the scene with it.
// Every random draw comes from the scenario's seed, so the same scenario gives the same
// files.
#pragma once

#include <filesystem>
#include <functional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "fit/scenario.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

// The frame geometry of view `v`, frame `i`, jitter included (what its header says).
imaging::GeometrySpec frame_geometry(const Scenario& scenario, int view, int frame);

// What a view sees of the truth at one time: from the projected shell mesh.
struct SkyTruth {
  double apex_pa_deg = 0.0;              // PA of the projected apex
  double pa_from_deg = 0.0, pa_to_deg = 0.0;  // extreme PAs of the projection (unwrapped)
  double leading_edge_rs = 0.0;          // largest plane-of-sky height of the projection
  double leading_edge_at_apex_pa_rs = 0.0;  // the same within ±1° of the apex PA
  // The PAs where some of the shell shows above the occulter (sky height ≥ visible_from_rs),
  // unwrapped about the apex PA like pa_from/pa_to; NaN when none does. What a view can
  // measure as the CME's span.
  double visible_pa_from_deg = 0.0, visible_pa_to_deg = 0.0;
};
SkyTruth sky_truth(const ShellParams& shell, const imaging::Observer& observer, double visible_from_rs);

struct SynthResult {
  std::filesystem::path event_file, truth_file;
  std::vector<std::filesystem::path> frames;
};

// Called after each frame is written: (frames done, frames in all).
using SynthProgress = std::function<void(int, int)>;

// Writes everything under out_dir (made if missing): out_dir/<view>/<view>_NNN.fits,
// out_dir/<id>.event.json, out_dir/<id>.truth.json. Files are written whole or not at all.
SynthResult synthesize(const Scenario& scenario, const std::filesystem::path& out_dir,
                       const SynthProgress& progress = {});

}  // namespace occulta::fit
