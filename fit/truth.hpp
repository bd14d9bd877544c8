// fit/truth.hpp — what a view should measure of a synthetic event, from its truth file
// (fit/synth.hpp): the values `measure` is compared with, in the demo and the tests.
#pragma once

#include <string>

#include <nlohmann/json.hpp>

namespace occulta::fit {

struct ViewTruth {
  double apex_pa_deg = 0.0;           // PA of the projected apex
  // The span of the shell where it shows above the occulter, in the last frame whose
  // leading edge is still in [lo, hi] (unwrapped about the apex PA), its middle in
  // [0, 360) and its width: what a view can measure as the CME's extent.
  double pa_from_deg = 0.0, pa_to_deg = 0.0;
  double central_pa_deg = 0.0;
  double width_deg = 0.0;
  // Sky-plane speed of the leading edge (the largest plane-of-sky height of the shell)
  // from a straight-line least-squares fit over the frames where it lies in [lo, hi] R☉.
  double sky_speed_km_s = 0.0;
  double sky_onset_utc_s = 0.0;       // that line's time at 1 R☉
  int frames_in_field = 0;
  // The first frame whose leading edge is beyond `lo`: when the CME becomes visible.
  double first_visible_utc_s = 0.0;
};

// lo, hi: the heights where a view can see the edge (occulter + margin, field stop − margin).
ViewTruth view_truth(const nlohmann::json& truth, const std::string& view, double lo_rs, double hi_rs);

}  // namespace occulta::fit
