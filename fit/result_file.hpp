// fit/result_file.hpp — the measurement (fit/measurement.hpp) as occulta's result files:
// the result.json document (schemas/result.schema.json; DESIGN.md "File contracts") and
// its result.csv (a row per CME). The one place either is written; every face calls these.
//
// result.json at this interface: degrees, km/s, m/s², R☉, ISO 8601 UTC (milliseconds);
// σ under `sigma` with the same keys, or as `K_sigma` / `T_sigma_s` beside a value
// (README "Outputs"); null where nothing was measured. The shell block marks what the
// data leave open: `direction_basis` ("views", "source region" or "none"),
// `not_constrained` (keys the data do not fix), `at_bound` (keys left on a solver bound)
// and `status` ("ok", or "partial" when the fit failed in a way its numbers do not show);
// `shell.covariance` {keys, matrix} is the fit's covariance in those keys' units — what
// the arrival ensemble (fit/arrival) draws from.
#pragma once

#include <string>

#include <nlohmann/json.hpp>

#include "fit/measurement.hpp"

namespace occulta::fit {

// The result document, all but `provenance` (what the files were, their hashes and the
// time taken: the face that writes the file adds it, app/provenance.hpp).
nlohmann::json result_json(const Measurement& measurement);

// result.csv: a header line and one row per CME, from the same document — the event's
// keys, each view's keys prefixed by its name, the shell and boundary values with their
// σ. With several CMEs (the document's `cmes`) a `cme` column after event_id holds each
// row's CME index; with one the file is the one-row file it always was.
// Text fields quoted ("" for a quote), arrays joined by ';', nothing measured empty.
std::string result_csv(const nlohmann::json& result);
std::string result_csv(const Measurement& measurement);

}  // namespace occulta::fit
