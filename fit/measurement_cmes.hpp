// fit/measurement_cmes.hpp — the CMEs inside the measurement (fit/measurement.hpp): each
// view's sightings (one per CME it sees, imaging/front find_fronts) associated across
// views (fit/associate), one shell per CME over its own sightings (measurement_shell),
// the primary CME chosen, and each CME's arrival. A window with one CME gives the
// measurement, problems and status the one-CME measurement always gave; with several,
// each CME's sentences are prefixed "CME k: " (k from 1, by first sighting).
#pragma once

#include <string>
#include <vector>

#include "fit/associate.hpp"
#include "fit/event.hpp"
#include "fit/measurement.hpp"

namespace occulta::fit {

// One listed view of the event: where its chain's outputs are, and what it saw.
struct ViewSightings {
  int measured = -1;                                   // index into the measured views; −1: not measured
  std::vector<std::string> problems;                   // the listing's and the chain's sentences
  // One per CME the view sees (its front, points and kinematics), or one with
  // front.found false and no points when it sees none (front.why_not says why).
  std::vector<ViewMeasurement> sightings;
  std::vector<std::vector<std::string>> sighting_problems;  // each sighting's sentences
};

// One view's CME as the association weighs it (fit/associate.hpp): `view` indexes the
// measured views.
Sighting sighting_of(const ViewMeasurement& seen, int view);

// Associates the sightings, fits each CME's shell and fills m.cmes, m.primary,
// m.primary_reason, m.views, m.shell, m.problems (deduplicated) and m.status.
// `measured`: the chain's outputs of the views measured (observer, polar), in order.
void measure_cmes(const Event& event, const MeasurementOptions& options, const std::vector<ViewMeasurement>& measured,
                  const std::vector<ViewSightings>& parts, Measurement& m);

// The arrival of one CME from its shell's boundary values (fit/arrival), or a problem
// sentence why none was made (also in m.problems, prefixed when m holds several CMEs);
// sets m.ensemble.
void make_arrival(const Event& event, const MeasurementOptions& options, Measurement& m, CmeMeasurement& cme);

}  // namespace occulta::fit
