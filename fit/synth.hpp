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

#include <cstdint>
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

// The TELESCOP every synthetic frame carries: how synth knows its own frames again.
inline constexpr const char* kSynthTelescope = "occulta synth";

// Most bytes one synth run writes (16 GB): a stated bound of our own, far above what the
// tests and the sample need (a few MB), below what fills a working disk unawares.
inline constexpr std::uintmax_t kMaxSynthBytes = 16'000'000'000;

// Bytes the scenario's frames take at most (uncompressed pixels and headers).
std::uintmax_t synth_output_bytes(const Scenario& scenario);

// Refuses (InputError) a scenario whose frames exceed kMaxSynthBytes or the free space of
// out_dir's disk — before anything is written.
void check_synth_fits(const Scenario& scenario, const std::filesystem::path& out_dir);

// Removes what an earlier synth run wrote in out_dir — its event file first, its truth
// file, frames <view>/<view>_NNN.fits whose TELESCOP is kSynthTelescope, and the
// temporaries of a killed run — and nothing else, so that a view's glob then matches
// only this run's frames.
void clear_previous_synth(const std::filesystem::path& out_dir, const std::string& id);

// Writes everything under out_dir (made if missing): out_dir/<view>/<view>_NNN.fits,
// out_dir/<id>.truth.json, then out_dir/<id>.event.json last (check_synth_fits and
// clear_previous_synth first). Files are written whole or not at all.
SynthResult synthesize(const Scenario& scenario, const std::filesystem::path& out_dir,
                       const SynthProgress& progress = {});

}  // namespace occulta::fit
