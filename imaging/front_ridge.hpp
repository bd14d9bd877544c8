// imaging/front_ridge.hpp — where a CME's bright front lies in each PA, for fitting a
// surface to it (fit/shell_fit): the ridge of the running difference just inside the
// front's leading edge (imaging/front.hpp).
//
// Why the ridge and not the leading edge: the leading edge is the outermost pixel above
// the detection threshold, which for a bright front lies in the outer wing of its rim —
// farther out the brighter the CME, and wider in PA at the flanks, where the rim's wing
// spills past the legs. A thin sheath of electrons seen edge-on is brightest where the
// line of sight grazes it (the longest path through it — common practice for Thomson-
// scattering shells), so the ridge marks the surface itself, independent of brightness.
//
// Method (ours): each frame smoothed over 3 × 3 polar pixels (no-data pixels left out);
// in each PA column with a leading edge, the largest value from the edge inward over
// ridge_depth_fraction × the edge's height, refined by a parabola through its neighbours;
// then, from each end of the front's PA span inward, columns are dropped until one's ridge
// reaches flank_fraction × the brightest ridge within flank_window_deg further in (what is
// dropped is the rim's wing spilling past the flanks; 0.7 lies between the half-maximum
// edge, which keeps some of the wing, and the rim's own peak, which noise moves — our
// choice, tuned on tests/app/shell_measure_test.cpp), and columns fainter
// than min_relative_peak × the frame's median ridge (noise) go too.
#pragma once

#include <vector>

#include "imaging/front.hpp"
#include "imaging/timeheight.hpp"

namespace occulta::imaging {

struct RidgeOptions {
  double ridge_depth_fraction = 0.12;  // how far inward from the edge to look, × height
  double flank_fraction = 0.7;         // of the nearby peak: between the half-maximum edge and the rim itself
  double flank_window_deg = 10.0;      // how far inward the flank's reference peak is sought
  double min_relative_peak = 0.2;      // of the frame's median ridge value
};

struct RidgePoint {
  int frame = 0;
  double utc_s = 0.0, pa_deg = 0.0, height_rs = 0.0;
  double value = 0.0;  // the smoothed running difference at the ridge, σ
};

// Frames front.onset_frame..front.last_frame; nothing when the front was not found.
std::vector<RidgePoint> front_ridge(const PolarSequence& sequence, const Front& front, const RidgeOptions& options = {});

}  // namespace occulta::imaging
