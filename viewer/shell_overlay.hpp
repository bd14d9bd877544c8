// viewer/shell_overlay.hpp — the shell of the window's controls as each view sees it: the
// geometry `measure`'s shell picture draws (fit/shell.hpp: the mesh projected through the
// frame's observer, its largest plane-of-sky height per 1° of PA, fit::sky_outline), on a
// finer mesh, {24, 144, 108}: measure's {16, 96, 72} falls up to 1.6 window pixels inside
// the true outline at 1280 × 800 (tests/viewer/shell_overlay_test.cpp), this one 0.53.
//
// Conventions: PA counter-clockwise from solar north through east (deg), heights in R☉ in
// the plane of the sky; sky positions x west, y north in R☉ (viewer/state.hpp); times UTC
// seconds since 2000.
#pragma once

#include <vector>

#include "fit/scenario.hpp"
#include "fit/shell.hpp"
#include "imaging/geometry.hpp"
#include "viewer/state.hpp"

namespace occulta::viewer {

// The controls' shell at utc_s (degrees → radians; apex height from the law; a law
// without a reference time counts from utc_s itself).
fit::ShellParams shell_params(const ShellControls& controls, double utc_s);

// One point of an outline: PA (deg, each bin's centre, (i + ½)·1°) and plane-of-sky height.
struct OutlinePoint {
  double pa_deg = 0.0, height_rs = 0.0;
};

// The leading edge the observer sees at utc_s, as runs of neighbouring 1° PA bins (a run
// crossing north continues past 360°: PA may exceed 360 within a run). Empty when the
// shell is invalid there (apex height ≤ 0). Made anew at each call: the window keeps its
// outlines in its cache (window_cache.hpp), keyed by controls, observer and time.
std::vector<std::vector<OutlinePoint>> shell_outline(const ShellControls& controls, const imaging::Observer& observer,
                                                     double utc_s);

}  // namespace occulta::viewer
