// fit/truth.hpp — what a view should measure of a synthetic event, from its truth file
// (fit/synth.hpp): the values `measure` is compared with, in the demo and the tests.
//
// [lo, hi] are the plane-of-sky heights (R☉) where the view can see the CME's front: the
// heights its front finder examines (imaging::FrontOptions: occulter edge + inner margin
// to field stop − outer margin), so that truth and measurement count the same sky.
#pragma once

#include <string>

#include <nlohmann/json.hpp>

namespace occulta::fit {

struct ViewTruth {
  double apex_pa_deg = 0.0;           // PA of the projected apex (last frame)
  // The CME's span on the sky as this view can see it: the position angles (1° bins of
  // the projected shell, fit/shell.hpp sky_outline) at which the shell's front — its
  // largest plane-of-sky height at that PA — lies within [lo, hi] in at least one frame
  // of the sequence, i.e. where the front crossed the view's field. The span is the arc
  // that covers all such PAs (360° less the largest gap); pa_from_deg in [0, 360),
  // pa_to_deg = pa_from_deg + width_deg (it may pass 360 across north), its middle
  // span_middle_pa_deg. central_pa_deg, in [0, 360), is where the CME is centred on this
  // view's sky: the PA of the centroid of the sky its front swept through in the field —
  // at each such PA the area from lo up to the highest the front reached there (at most
  // hi) — the quantity imaging::find_front measures as central_pa_deg. The shell is
  // re-projected here from the truth file's shell and observers, as synth projects it.
  // All NaN when the front never lies in [lo, hi].
  double pa_from_deg = 0.0, pa_to_deg = 0.0;
  double central_pa_deg = 0.0;
  double span_middle_pa_deg = 0.0;
  double width_deg = 0.0;
  // Sky-plane speed of the leading edge (the largest plane-of-sky height of the shell)
  // from a straight-line least-squares fit over the frames where it lies in [lo, hi] R☉.
  double sky_speed_km_s = 0.0;
  // When the sky-plane leading edge left 1 R☉: the same frames' edge heights fitted with
  // the truth's own law — a straight line when the apex moves at constant speed, a
  // quadratic when the scenario accelerates it — and that fit's time at 1 R☉. The shell
  // expands self-similarly, so its sky-plane edge is (very nearly) its apex law scaled by
  // a constant, and the fit of the law's own order is the extrapolation that law makes.
  double sky_onset_utc_s = 0.0;
  bool accelerating = false;          // the truth's apex law has a ≠ 0
  int frames_in_field = 0;
  // The first frame whose leading edge is beyond `lo`: when the CME becomes visible.
  double first_visible_utc_s = 0.0;
};

// `cme`: which CME of a truth with several (`shells`, in the scenario's order). The view's
// frame times are its own clock's where the truth lists them (observers[].frame_times).
ViewTruth view_truth(const nlohmann::json& truth, const std::string& view, double lo_rs, double hi_rs, int cme = 0);

// The shell's front seen from `view` at a time and PA: its largest plane-of-sky height (R☉)
// in the 1° PA bin holding pa_deg (an empty bin of the sampled mesh takes its nearest
// neighbours within 2°), re-projected from the truth file's shell; NaN where the
// projection does not reach that PA.
double sky_front_rs(const nlohmann::json& truth, const std::string& view, double utc_s, double pa_deg, int cme = 0);

}  // namespace occulta::fit
