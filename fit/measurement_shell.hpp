// fit/measurement_shell.hpp — the shell fit inside the measurement (fit/measurement.hpp):
// which points go in (each view's bright rim just inside its front's leading edge per PA
// per frame, or the analyst's points), the fit itself, and what the data leave open —
// the direction's basis, the keys not constrained, a failure the numbers do not show,
// whether an arrival may be made from it, and the views that miss the CME.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "fit/measurement.hpp"

namespace occulta::fit {

// Fits the shell over the views that found a CME (or have analyst points); appends its
// sentences to `problems`. `source_deg`: the event's source region (lon, lat), which
// fixes the direction of a one-view fit. `apex_law` as MeasurementOptions::apex_law.
ShellMeasurement measure_shell(const std::vector<ViewMeasurement>& views,
                               const std::optional<std::array<double, 2>>& source_deg, const std::string& apex_law,
                               std::vector<std::string>& problems);

}  // namespace occulta::fit
