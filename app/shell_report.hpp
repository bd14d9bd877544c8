// app/shell_report.hpp — the shell fit as `measure` runs and reports it: which points go
// in (each view's automatic leading edge per PA per frame, or the analyst's points), the
// `shell` and `boundary` blocks of result.json (DESIGN.md "File contracts"), and the
// quicklook <view>/shell.png: the fitted shell's outline over the running difference at
// three times.
//
// Units at this interface: degrees, km/s, m/s², R☉, ISO 8601 UTC; σ under `sigma` with
// the same keys. What the data leave open is marked: `shell.direction_basis` ("views",
// "source region" or "none"), `shell.not_constrained` (the keys of quantities the data do
// not fix), `shell.at_bound` (keys left on a solver bound) and `shell.status` ("ok", or
// "partial" when the fit failed in a way its numbers do not show). `shell.covariance` {keys, matrix} is the fit's covariance in those keys'
// units — what the arrival ensemble (fit/arrival) draws from.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "app/track.hpp"
#include "fit/shell_fit.hpp"
#include "imaging/front.hpp"
#include "imaging/register.hpp"
#include "imaging/timeheight.hpp"

namespace occulta::app {

// What one measured view hands to the shell fit.
struct ViewForShell {
  std::string name;
  imaging::Observer observer;
  imaging::RegisteredGrid grid;
  imaging::PolarSequence polar;        // the view's polar running differences (σ units)
  imaging::Front front;
  std::vector<TrackPoint> analyst;     // the analyst's points for this view (replace the automatic ones)
  std::string kinematic_model;         // the view's own height–time choice ("linear" | "quadratic" | "")
};

struct ShellReport {
  std::optional<fit::ShellFit> fit;    // when it ran and converged
  nlohmann::json shell;                // null when there is no fit
  nlohmann::json boundary;             // null when there is no fit or the apex never reaches 21.5 R☉
  std::vector<std::string> problems;   // sentences for result.json
  // Not empty: no arrival estimate may be made from this shell, and why (a direction the
  // data do not constrain, or a failed fit: singular covariance, a parameter on its
  // bound, a boundary crossing before the data).
  std::string arrival_withheld;
  // Not empty: an arrival estimate holds only under this assumption (one view, the
  // direction taken from the source region).
  std::string arrival_condition;
  int views_without_cme = 0;           // views that see no CME while another does (each named in problems)
};

// Fits the shell over the views that found a CME (or have analyst points), writes each
// such view's shell.png under out_dir/<view>/, and returns the blocks. `source_deg`: the
// event's source region (lon, lat), which fixes the direction of a one-view fit.
// `apex_law`: "linear", "quadratic", "free" (one apex height per time), or "auto" —
// quadratic when every view's own height–time fit chose a quadratic, else linear.
ShellReport fit_and_report_shell(const std::vector<ViewForShell>& views,
                                 const std::optional<std::array<double, 2>>& source_deg, const std::string& apex_law,
                                 const std::filesystem::path& out_dir);

}  // namespace occulta::app
