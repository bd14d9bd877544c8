// viewer/cme_list.hpp — the window's list of the CMEs the last measurement found (issue 16),
// and which one the window shows as "the CME": the picked one (WindowState::cme). Plain
// rows read off fit::Measurement::cmes — nothing is computed here that the measurement
// does not hold; the work column draws the rows, tests read them.
//
// Conventions: a CME's number is result.json's `index` (1, 2, … by first sighting); angles
// in degrees (PA counter-clockwise from solar north through east, Stonyhurst lon/lat);
// speeds km/s; times UTC seconds since 2000-01-01; NaN where not measured.
#pragma once

#include <string>
#include <vector>

#include "viewer/state.hpp"

namespace occulta::fit {
struct CmeMeasurement;  // fit/measurement.hpp
struct ViewMeasurement;
}

namespace occulta::viewer {

// One CME of the measurement, as the list shows it.
struct CmeRow {
  int number = 1;                 // result.json's index, from 1
  bool primary = false;           // the measurement's primary (what measure's top level shows)
  bool shown = false;             // the one the window shows
  bool by_analyst = false;        // measured from the analyst's points (in at least one view)
  std::string association;        // "views" | "one view" | "undecided"
  std::string status;             // "ok" | "partial" | "failed"
  double onset_utc_s = 0.0;       // kinematic onset (1 R☉), else first sighting; NaN: neither
  struct ViewPa {
    std::string view;
    double central_pa_deg = 0.0;
  };
  std::vector<ViewPa> central_pa;  // the views that see it
  double speed_km_s = 0.0, speed_sigma_km_s = 0.0;  // the shell's apex speed at its t₀
  double lon_deg = 0.0, lon_sigma_deg = 0.0, lat_deg = 0.0, lat_sigma_deg = 0.0;  // its direction
};

// Every CME of state.measured, in its order (empty: no measurement, or none found).
std::vector<CmeRow> cme_rows(const WindowState& state);

// The CME the window shows: measured->cmes[state.cme] (clamped), or null when there is
// no measurement or it found none.
const fit::CmeMeasurement* shown_cme(const WindowState& state);

// The shown CME's sighting in one view (null: none shown, or the view not among its views).
const fit::ViewMeasurement* shown_sighting(const WindowState& state, const std::string& view);

}  // namespace occulta::viewer
