// fit/measurement_shell.cpp — the shell fit inside the measurement (see measurement_shell.hpp).
#include "fit/measurement_shell.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <future>

#include "fit/kinematics.hpp"
#include "imaging/constants.hpp"
#include "imaging/front_ridge.hpp"
#include "imaging/polar.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {

namespace {

// The automatic points: the bright ridge just inside the front's leading edge in every
// PA column of every frame of the front's chain (imaging/front_ridge.hpp says why the
// ridge), imaging::front_ridge. The fit thins them to max_points_per_frame per frame.

// The outer edges: the leading edge per PA column of every frame of the front's chain
// (the outermost pixel above the detection threshold, imaging/front.hpp).
void add_leading_edge(const ViewMeasurement& v, int view_index, std::vector<EdgePoint>& points) {
  const imaging::Front& f = v.front;
  for (int frame = std::max(0, f.onset_frame); frame <= f.last_frame && frame < int(f.leading_edge_rs.size()); ++frame)
    for (int c = 0; c < v.polar.polar.pa_count; ++c) {
      const float h = f.leading_edge_rs[static_cast<std::size_t>(frame)][static_cast<std::size_t>(c)];
      if (std::isfinite(h)) points.push_back({view_index, v.polar.utc_s[static_cast<std::size_t>(frame)], v.polar.polar.pa_deg(c), h});
    }
}

double deg(double rad) { return rad * kDegPerRad; }

// What the data leave open, and whether the fit failed in a way that its numbers do not
// show (issues 11 and 13): machine-readable marks in the shell block, sentences in the
// problems, and the basis on which an arrival estimate may (or may not) be made.
void judge_shell(const ShellFit& fit, const std::vector<EdgePoint>& points, std::size_t view_count,
                 ShellMeasurement& report, std::vector<std::string>& problems) {
  std::vector<std::string>& open = report.not_constrained;
  std::vector<std::string> failures;
  if (fit.direction_held) {
    report.direction_basis = "source region";
    report.arrival_condition = "the CME's direction is taken from the event's source region (held fixed, σ " +
                               std::to_string(static_cast<int>(std::lround(deg(fit.sigma[kLon])))) +
                               "° assumed), not measured: one view cannot fix it";
  } else if (fit.direction_constrained) {
    report.direction_basis = "views";
  } else {
    report.direction_basis = "none";
    open.push_back("lon_deg");
    open.push_back("lat_deg");
    report.arrival_withheld = view_count >= 2
                                  ? "the views do not constrain the CME's direction (see shell.notes)"
                                  : "one view and no source region: the CME's direction is not constrained by the data";
  }
  if (view_count < 2) {
    // One view sees the width only across its own sky: the shell's tilt, and with it how
    // the width splits between the face-on and edge-on extents, is not measured.
    for (const char* key : {"tilt_deg", "face_on_width_deg", "edge_on_width_deg"}) open.push_back(key);
  }
  if (!fit.covariance_ok) failures.push_back("the shell fit's covariance is singular, so its σ are unknown");
  for (std::size_t k = 0; k < kShellParams; ++k)
    if (fit.covariance_ok && k != kAccel && !std::isfinite(fit.sigma[k])) {
      failures.push_back("the shell fit's covariance gives no finite σ for every parameter");
      break;
    }
  if (!fit.at_bound.empty()) {
    std::string keys;
    for (const std::string& k : fit.at_bound) keys += (keys.empty() ? "" : ", ") + k;
    failures.push_back("the shell fit left " + keys + " on the solver's bound, so the fit did not find a minimum there");
  }
  if (report.boundary && !points.empty()) {
    double first = points.front().time_s;
    for (const EdgePoint& p : points) first = std::min(first, p.time_s);
    // The crossing as result.json states it, to the millisecond.
    const std::string time = imaging::iso_from_utc_seconds(report.boundary->time_s, 3);
    const double crossing = imaging::utc_seconds_from_iso(time);
    if (crossing < first - 1.0)
      failures.push_back("the fitted apex law passes 21.5 R☉ before the first frame with points, at " + time);
  }
  report.status = failures.empty() ? "ok" : "partial";
  for (const std::string& f : failures) problems.push_back("shell fit failed: " + f + ".");
  if (!failures.empty() && report.arrival_withheld.empty())
    report.arrival_withheld = "the shell fit failed (" + failures.front() + ")";
  if (!report.arrival_withheld.empty())
    problems.push_back("no arrival estimate: " + report.arrival_withheld + ".");
}

// A view that sees no CME while another does is a problem, with its likely reason: its
// frames miss the time the others saw the CME (outside the window); the fitted shell
// stays inside the view's lowest height with data all that time (behind the occulter);
// or else the CME was there but too faint (below the detection threshold).
void name_views_without_cme(const std::vector<ViewMeasurement>& views, const std::vector<const ViewMeasurement*>& used,
                            const std::vector<EdgePoint>& points, const ShellFit* fit, ShellMeasurement& report,
                            std::vector<std::string>& problems) {
  if (used.empty() || points.empty()) return;
  double first = points.front().time_s, last = first;
  for (const EdgePoint& p : points) first = std::min(first, p.time_s), last = std::max(last, p.time_s);
  for (const ViewMeasurement& v : views) {
    if (std::find(used.begin(), used.end(), &v) != used.end() || v.polar.utc_s.empty()) continue;
    ++report.views_without_cme;
    const double t0 = v.polar.utc_s.front(), t1 = v.polar.utc_s.back();
    std::string reason;
    if (t1 < first || t0 > last) {
      reason = "outside the window: its frames (" + imaging::iso_from_utc_seconds(t0, 0) + " to " +
               imaging::iso_from_utc_seconds(t1, 0) + ") miss the time the other views saw the CME";
    } else if (fit && fit->direction_constrained) {
      // The lowest height with data in the view's last frame, against the fitted shell's
      // largest sky height there.
      const cv::Mat& frame = v.polar.frames.back();
      int lowest = -1;
      for (int r = 0; r < frame.rows && lowest < 0; ++r)
        for (int c = 0; c < frame.cols; ++c)
          if (std::isfinite(frame.at<float>(r, c))) {
            lowest = r;
            break;
          }
      const ShellParams shell = shell_at(*fit, t1);
      const SkyOutline outline = sky_outline(make_mesh(shell, {16, 96, 72}), shell, v.observer, 1.0);
      double highest = 0.0;
      for (const double h : outline.max_height_rs)
        if (std::isfinite(h)) highest = std::max(highest, h);
      const double inner = lowest >= 0 ? v.polar.polar.height_rs(lowest) : 0.0;
      if (highest < inner + imaging::FrontOptions{}.inner_margin_rs) {
        char text[200];
        std::snprintf(text, sizeof text,
                      "behind the occulter: the fitted shell reaches only %.1f R☉ on its sky by the last frame, inside the "
                      "lowest height with data (%.1f R☉)", highest, inner);
        reason = text;
      }
    }
    if (reason.empty()) {
      std::string why = v.front.why_not;
      while (!why.empty() && why.back() == '.') why.pop_back();
      // Without a shell whose direction the data fix, where it would show cannot be said.
      reason = fit && fit->direction_constrained
                   ? "below the detection threshold (" + why + ")"
                   : "below the detection threshold, or behind the occulter — with no constrained shell, which cannot be told (" +
                         why + ")";
    }
    problems.push_back("view " + v.name + " sees no CME while another view does: " + reason + ".");
  }
}

// What the shell fit is given, gathered over the views: the fitted views, the points
// (rims or the analyst's) and the outer edges, and the views' own height–time choices.
struct ShellInputs {
  std::vector<ShellView> fit_views;
  std::vector<const ViewMeasurement*> used;
  std::vector<EdgePoint> points, edge_points;  // rims (or the analyst's), and outer edges
  bool automatic = false;                      // some view's points are the finder's
  int quadratic = 0, fitted = 0;
};

// `ridges[k]`: view k's rim (front_ridge) when it has a found front and no analyst points.
// Without `ridges`, every found front is taken to have a rim and `points` gets none of
// them: what the outer-edge fit needs is then known before the rims are (measure_shell).
ShellInputs gather_shell_inputs(const std::vector<ViewMeasurement>& views,
                                const std::vector<std::vector<imaging::RidgePoint>>* ridges) {
  ShellInputs in;
  std::vector<ShellView>& fit_views = in.fit_views;
  std::vector<EdgePoint>& points = in.points;
  for (std::size_t k = 0; k < views.size(); ++k) {
    const ViewMeasurement& v = views[k];
    const int index = static_cast<int>(fit_views.size());
    const std::size_t before = points.size(), edges_before = in.edge_points.size();
    bool has_points = false;
    if (v.by_analyst && !v.points.empty()) {  // the analyst's points replace the automatic ones
      for (const TrackPoint& p : v.points) {
        points.push_back({index, p.utc_s, p.pa_deg, p.height_rs});
        in.edge_points.push_back(points.back());
      }
      has_points = true;
    } else if (v.front.found) {
      if (ridges)
        for (const imaging::RidgePoint& p : (*ridges)[k]) points.push_back({index, p.utc_s, p.pa_deg, p.height_rs});
      add_leading_edge(v, index, in.edge_points);
      has_points = ridges ? points.size() > before : true;
      in.automatic = in.automatic || has_points;
    }
    if (!has_points) {
      // Not fitted: its outer edges go too, or they would be counted as the next fitted
      // view's (numbered `index`), or as a view that does not exist.
      in.edge_points.resize(edges_before);
      continue;
    }
    ShellView sv;
    sv.name = v.name;
    sv.observer = v.observer;
    if (v.front.found) {
      sv.central_pa_deg = v.front.central_pa_deg;
      // A front round the occulter on both sides of the Sun has no single PA: a halo for
      // the fit's start (fit/shell_fit.hpp, width ≥ 300°).
      sv.width_deg = v.front.encircles ? 360.0 : v.front.width_deg;
    } else {  // analyst points only: their mean PA and extent
      double ss = 0.0, sc = 0.0, lo = 360.0, hi = -360.0;
      for (std::size_t i = before; i < points.size(); ++i) {
        ss += std::sin(points[i].pa_deg * kRadPerDeg), sc += std::cos(points[i].pa_deg * kRadPerDeg);
      }
      const double mean = std::atan2(ss, sc) * kDegPerRad;
      for (std::size_t i = before; i < points.size(); ++i) {
        const double rel = std::remainder(points[i].pa_deg - mean, 360.0);
        lo = std::min(lo, rel), hi = std::max(hi, rel);
      }
      sv.central_pa_deg = std::fmod(mean + 360.0, 360.0);
      sv.width_deg = hi - lo;
    }
    fit_views.push_back(sv);
    in.used.push_back(&v);
    // The view's own height–time choice, for the apex law "auto".
    if (v.kinematics_ok()) ++in.fitted, in.quadratic += v.kinematics->model == HeightTimeModel::quadratic;
  }
  return in;
}

ShellFitOptions shell_options(const ShellInputs& in, const std::optional<std::array<double, 2>>& source_deg,
                              const std::string& apex_law) {
  ShellFitOptions options;
  options.source_lon_lat_deg = source_deg;
  // auto: a quadratic apex law only when every view's own height–time fit chose one
  // (AICc); otherwise the straight line, whose speed is the mean over the frames.
  if (apex_law == "quadratic" || (apex_law == "auto" && in.fitted > 0 && in.quadratic == in.fitted))
    options.law = ApexLawKind::quadratic;
  else if (apex_law == "free")
    options.law = ApexLawKind::free_per_time;
  return options;
}

}  // namespace

ShellMeasurement measure_shell(const std::vector<ViewMeasurement>& views,
                               const std::optional<std::array<double, 2>>& source_deg, const std::string& apex_law,
                               std::vector<std::string>& problems) {
  ShellMeasurement report;
  // The fit to the fronts' outer edges (the threshold edge of imaging/front) needs nothing
  // of the rim fit, and of the rims only which views have one, so it starts on a second
  // thread before the rims are found, taking every found front to have one; the rims,
  // then the rim fit, run on this thread beside it. The same inputs give the same fit on
  // any thread (fit_shell's only state is a per-thread cache of values it would compute
  // the same way). Should a front have no rim, the views fitted differ from those taken:
  // that outer fit is dropped and made again from the real inputs. It is used only when
  // the rim fit succeeds.
  const ShellInputs taken = gather_shell_inputs(views, nullptr);
  const ShellFitOptions taken_options = shell_options(taken, source_deg, apex_law);
  std::future<ShellFit> outer_fit;
  if (taken.automatic)
    outer_fit = std::async(std::launch::async, [&] { return fit_shell(taken.fit_views, taken.edge_points, taken_options); });
  std::vector<std::vector<imaging::RidgePoint>> ridges(views.size());
  for (std::size_t k = 0; k < views.size(); ++k)
    if (!(views[k].by_analyst && !views[k].points.empty()) && views[k].front.found)
      ridges[k] = imaging::front_ridge(views[k].polar, views[k].front);
  const ShellInputs in = gather_shell_inputs(views, &ridges);
  const std::vector<ShellView>& fit_views = in.fit_views;
  const std::vector<const ViewMeasurement*>& used = in.used;
  const std::vector<EdgePoint>& points = in.points;
  const bool automatic = in.automatic;
  const ShellFitOptions options = shell_options(in, source_deg, apex_law);
  if (fit_views.empty()) {
    problems.push_back("no shell fit: no view found a CME or has analyst points.");
    return report;
  }
  if (automatic && in.used != taken.used) {
    outer_fit.wait();
    // Its own copies: this thread may return (the rim fit failed) before it ends.
    outer_fit = std::async(std::launch::async, [fit_views, edge_points = in.edge_points, options] {
      return fit_shell(fit_views, edge_points, options);
    });
  }
  ShellFit fit = fit_shell(fit_views, points, options);
  if (!fit.ok) {
    problems.push_back("no shell fit: " + fit.problem + ".");
    name_views_without_cme(views, used, points, nullptr, report, problems);
    return report;
  }
  // The reported shell joins the two (fit/shell_fit.hpp merge_edge_fits says how).
  if (automatic) {
    const ShellFit outer = outer_fit.get();
    merge_edge_fits(fit, outer);
    if (outer.ok)
      fit.notes.push_back("shape from the fronts' bright rims, apex law the mean of the rim and outer-edge fits; σ include half their difference");
  }
  for (const auto* v : used) report.views.push_back(v->name);
  report.points = points;
  // The inner boundary of heliospheric models (21.5 R☉ ≈ 0.1 au, common practice): when
  // the apex passes it, how fast, and how wide the CME is there (half the face-on width,
  // α + δ — the widest extent of the shell from its axis).
  const ApexCrossing crossing = apex_crossing(fit, kBoundaryHeightRs);
  if (crossing.found) {
    report.boundary = crossing;
    report.boundary_half_width_deg = 0.5 * deg(face_on_width(fit.shell.half_angle, fit.shell.aspect_ratio));
    report.boundary_half_width_sigma_deg = 0.5 * deg(face_on_width_sigma_rad(fit));
  } else {
    problems.push_back("the fitted apex law never reaches 21.5 R☉: no boundary values.");
  }
  judge_shell(fit, points, used.size(), report, problems);
  name_views_without_cme(views, used, points, &fit, report, problems);
  report.fit = std::move(fit);
  return report;
}

}  // namespace occulta::fit
