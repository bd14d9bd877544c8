// fit/associate.hpp — which CME seen in one view is which CME seen in another, when a
// window holds more than one (imaging/front.hpp find_fronts gives each view's list).
//
// A sighting is one CME found in one view: its central PA, sky width and the sky-plane
// height–time law of its track (fit/kinematics). Two sightings in different views may be
// one CME when both of these hold (each pair is checked, and the checks are kept):
//  - Geometry (after Inhester 2006, shared/REFERENCES.md): each view's CME lies near the
//    plane through that observer and Sun centre at its central PA, on its side of the Sun.
//    Some direction must appear within central_pa_tolerance_deg of both views' central
//    PAs (each view's PA of the direction, 0–360°, so the side counts), away from both
//    lines of sight (within line_of_sight_deg of one, its PA means nothing). A tolerance,
//    not the planes' exact line: two planes a few degrees apart meet in a line that a
//    central PA off by a few degrees swings anywhere. When a view sees the CME as a halo
//    (no central PA), the geometry says nothing and the pair passes this check.
//  - Timing: the laws' origins — where each view's straight or quadratic law meets Sun
//    centre, h = 0 — agree within onset_sigmas × their combined σ (kinematics'
//    crossing σ), and never closer than the longer cadence of the two views demands (an
//    onset is known to a frame at best). Not the onsets at 1 R☉ on each sky: a view sees
//    the front's sky height as its true height × a factor set by the projection
//    (cos ε for the nose, more where a flank leads), so each view's law reaches 1 R☉ at
//    a different time, while all of them meet h = 0 together for a self-similar
//    expansion (our construction; self-similarity as fit/shell_fit assumes it,
//    Thernisien 2011). Measured on tests/fit/associate_test.cpp's synth window: one CME's
//    two views' 1 R☉ onsets 13 min apart with 3σ = 8 min. A law without that crossing
//    or its σ leaves the timing unchecked, and the check says so.
// Then the groupings: each sighting joins at most one CME, with at most one sighting per
// view, and every two sightings of a CME must be compatible. Among all such groupings, the
// ones that associate the most sightings are the candidates. When the caller gives a
// shell-fit residual for a group (GroupResidual: fit/shell_fit over that group's points
// only, never over two CMEs'), a group whose residual is above max_group_residual_rs is
// not one CME, and groupings holding it drop out first. One candidate left: decided.
// Several: the groups common to all are decided, the rest are undecided and reported with
// the candidate groupings — never guessed. A sighting with no partner is a one-view CME.
#pragma once

#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "fit/kinematics.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

struct Sighting {
  int view = 0;                  // index into the observers given to associate()
  int front = 0;                 // the caller's index of this CME among the view's fronts
  double central_pa_deg = 0.0;   // imaging::Front::central_pa_deg
  double width_deg = 0.0;        // sky width; ≥ 300 counts as a halo (no central PA), as fit/shell_fit
  HeightTimeFit law;             // the track's sky-plane height–time fit
  double cadence_s = 0.0;        // the view's frame spacing (median), s
};

struct AssociationOptions {
  double onset_sigmas = 3.0;          // onsets agree within this × combined σ (our choice)
  double line_of_sight_deg = 10.0;    // a direction this close to a view's line of sight has no PA there
  // A view's central PA of one CME may be this far off its direction's projected PA (our
  // choice): measured 12° off when the threshold split an inner structure from the front
  // (measure_test's 900 km/s event under clang); the single-CME tolerance is 5°.
  double central_pa_tolerance_deg = 20.0;
  // A group's shell-fit residual above this is not one CME (our choice). Measured on
  // tests/fit/associate_test.cpp's two-CME window: the true pairs fit with 0.09 and
  // 0.49 R☉ rms, the wrong pairs with 0.18 and 0.33 — there the residual does not tell
  // them apart (the geometry does); it refuses only shells that fit no CME at all.
  double max_group_residual_rs = 1.0;
  int max_groupings = 20000;          // enumeration bound (a handful of CMEs per view)
};

// One pair of sightings in different views, checked.
struct PairCheck {
  int a = 0, b = 0;                   // indices into the sightings
  bool geometry_informs = false;      // neither view saw a halo: the directions were searched
  bool geometry_ok = true;
  double planes_angle_deg = 0.0;      // between the two central-PA planes (for the record)
  bool timing_informs = false;        // both origins known, with σ
  bool timing_ok = true;
  // The laws' origins (h = 0), UTC s, and how far apart they are.
  double onset_a_s = std::numeric_limits<double>::quiet_NaN(), onset_b_s = std::numeric_limits<double>::quiet_NaN();
  double onset_gap_s = std::numeric_limits<double>::quiet_NaN();      // |onset_a − onset_b|
  double onset_allowed_s = std::numeric_limits<double>::quiet_NaN();  // what the σ and cadences allow
  std::string why;                    // one sentence when not compatible, else empty
  bool compatible() const { return geometry_ok && timing_ok; }
};

struct CmeGroup {
  std::vector<int> sightings;         // indices into the sightings, by view
  double residual_rs = std::numeric_limits<double>::quiet_NaN();  // shell fit over the group (multi-view, when given)
  bool one_view() const { return sightings.size() == 1; }
};

struct Association {
  bool decided = true;
  std::vector<CmeGroup> cmes;         // decided CMEs (all of them when decided), one-view ones included
  std::vector<int> undecided;         // sightings whose CME could not be decided
  std::vector<std::vector<CmeGroup>> candidates;  // when undecided: the equally good groupings of those
  std::vector<PairCheck> checks;      // every pair in different views
  std::vector<std::string> notes;     // sentences: groups refused by their residual, why undecided
};

// The residual (R☉ rms) of a shell fitted over the sightings' points alone; NaN when the
// fit failed (the group is then refused).
using GroupResidual = std::function<double(const std::vector<int>& sightings)>;

PairCheck check_pair(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& sightings, int a,
                     int b, const AssociationOptions& options = {});

Association associate(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& sightings,
                      const AssociationOptions& options = {}, const GroupResidual& residual = {});

// A doubtful chain (imaging/front.hpp FrontSet::doubtful: in one view, a chain in a
// front's wake that the view cannot tell from a slower CME launched later under it) is a
// CME of its own when another view sees a CME that explains it: one that the firm
// sightings' association leaves without a sighting in the doubtful one's view, and that
// pairs with the doubtful one (check_pair). Otherwise it is the front's wake — also when
// only one view sees the sky it is in (one view cannot tell; README "Limits").
bool doubtful_stands_alone(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& firm,
                           const Sighting& doubtful, const AssociationOptions& options = {});

}  // namespace occulta::fit
