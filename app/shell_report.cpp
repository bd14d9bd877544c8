// app/shell_report.cpp — the shell fit inside `measure` (see shell_report.hpp).
#include "app/shell_report.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "app/quicklook.hpp"
#include "fit/kinematics.hpp"
#include "imaging/constants.hpp"
#include "imaging/front_ridge.hpp"
#include "imaging/polar.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;

namespace {

// The automatic points: the bright ridge just inside the front's leading edge in every
// PA column of every frame of the front's chain (imaging/front_ridge.hpp says why the
// ridge). The fit thins them to max_points_per_frame per frame.
void add_front_ridge(const ViewForShell& v, int view_index, std::vector<fit::EdgePoint>& points) {
  for (const imaging::RidgePoint& p : imaging::front_ridge(v.polar, v.front))
    points.push_back({view_index, p.utc_s, p.pa_deg, p.height_rs});
}

// The outer edges: the leading edge per PA column of every frame of the front's chain
// (the outermost pixel above the detection threshold, imaging/front.hpp).
void add_leading_edge(const ViewForShell& v, int view_index, std::vector<fit::EdgePoint>& points) {
  const imaging::Front& f = v.front;
  for (int frame = std::max(0, f.onset_frame); frame <= f.last_frame && frame < int(f.leading_edge_rs.size()); ++frame)
    for (int c = 0; c < v.polar.polar.pa_count; ++c) {
      const float h = f.leading_edge_rs[static_cast<std::size_t>(frame)][static_cast<std::size_t>(c)];
      if (std::isfinite(h)) points.push_back({view_index, v.polar.utc_s[static_cast<std::size_t>(frame)], v.polar.polar.pa_deg(c), h});
    }
}

double deg(double rad) { return rad * kDegPerRad; }

json shell_block(const fit::ShellFit& fit) {
  const fit::ShellParams& s = fit.shell;
  const auto& sg = fit.sigma;
  const double face = fit::face_on_width(s.half_angle, s.aspect_ratio), edge = fit::edge_on_width(s.aspect_ratio);
  json block = {
      {"lon_deg", deg(s.lon)},
      {"lat_deg", deg(s.lat)},
      {"tilt_deg", deg(s.tilt)},
      {"half_angle_deg", deg(s.half_angle)},
      {"aspect_ratio", s.aspect_ratio},
      {"ref_time", imaging::iso_from_utc_seconds(fit.law.ref_time_s, 3)},
      {"apex_height_rs", fit.law.height_rs},
      {"speed_km_s", fit.law.speed_km_s},
      {"accel_m_s2", fit.law.accel_m_s2},
      {"face_on_width_deg", deg(face)},
      {"edge_on_width_deg", deg(edge)},
      {"sigma",
       {{"lon_deg", deg(sg[fit::kLon])},
        {"lat_deg", deg(sg[fit::kLat])},
        {"tilt_deg", deg(sg[fit::kTilt])},
        {"half_angle_deg", deg(sg[fit::kHalfAngle])},
        {"aspect_ratio", sg[fit::kAspect]},
        {"apex_height_rs", sg[fit::kHeight]},
        {"speed_km_s", sg[fit::kSpeed]},
        {"accel_m_s2", sg[fit::kAccel]},
        {"face_on_width_deg", deg(fit::face_on_width_sigma_rad(fit))},
        {"edge_on_width_deg", deg(fit::edge_on_width_sigma_rad(fit))}}},
      {"residual_rms_rs", fit.residual_rms_rs},
      {"law", fit::to_string(fit.law_kind)},
      {"points_used", fit.points_used},
      {"direction_constrained", fit.direction_constrained},
      {"design_effect", fit.covariance_inflation},
      {"notes", fit.notes},
  };
  // The covariance in the keys' units (deg for angles), for the arrival ensemble. Held
  // or unconstrained directions carry their stated σ on the diagonal, uncorrelated.
  const std::vector<std::string> keys = {"lon_deg",        "lat_deg",        "tilt_deg",   "half_angle_deg",
                                         "aspect_ratio",   "apex_height_rs", "speed_km_s", "accel_m_s2"};
  const double unit[fit::kShellParams] = {kDegPerRad, kDegPerRad, kDegPerRad, kDegPerRad, 1.0, 1.0, 1.0, 1.0};
  const bool direction_fitted = fit.direction_constrained && fit.covariance(fit::kLon, fit::kLon) > 0.0;
  json matrix = json::array();
  for (int i = 0; i < fit::kShellParams; ++i) {
    json row = json::array();
    for (int j = 0; j < fit::kShellParams; ++j) {
      double c = fit.covariance(i, j);
      if (!direction_fitted && (i <= fit::kLat || j <= fit::kLat))
        c = i == j ? sg[static_cast<std::size_t>(i)] * sg[static_cast<std::size_t>(i)] : 0.0;
      row.push_back(std::isfinite(c) ? c * unit[i] * unit[j] : 0.0);
    }
    matrix.push_back(row);
  }
  block["covariance"] = {{"keys", keys}, {"matrix", matrix}};
  if (!fit.free_heights.empty()) {
    json heights = json::array();
    for (const auto& [t, h] : fit.free_heights) heights.push_back({{"time", imaging::iso_from_utc_seconds(t, 3)}, {"apex_height_rs", h}});
    block["free_heights"] = heights;
  }
  return block;
}

// The inner boundary of heliospheric models (21.5 R☉ ≈ 0.1 au, common practice): when
// the apex passes it, how fast, where the CME points and how wide it is (half the face-on
// width, α + δ — the widest extent of the shell from its axis).
json boundary_block(const fit::ShellFit& fit) {
  const fit::ApexCrossing c = fit::apex_crossing(fit, fit::kBoundaryHeightRs);
  if (!c.found) return nullptr;
  const double half = 0.5 * fit::face_on_width(fit.shell.half_angle, fit.shell.aspect_ratio);
  return {{"height_rs", fit::kBoundaryHeightRs},
          {"time", imaging::iso_from_utc_seconds(c.time_s, 3)},
          {"speed_km_s", c.speed_km_s},
          {"lon_deg", deg(fit.shell.lon)},
          {"lat_deg", deg(fit.shell.lat)},
          {"half_width_deg", deg(half)},
          {"sigma",
           {{"time_s", c.time_sigma_s},
            {"speed_km_s", c.speed_sigma_km_s},
            {"lon_deg", deg(fit.sigma[fit::kLon])},
            {"lat_deg", deg(fit.sigma[fit::kLat])},
            {"half_width_deg", 0.5 * deg(fit::face_on_width_sigma_rad(fit))}}}};
}

// Quicklook: three running differences (first, middle and last frame with points) with
// the fitted shell's outline (cyan: its largest sky height per 1° of PA) and the points
// the fit used there (yellow), north up, side by side on axes in R☉ about Sun centre.
void draw_shell(const ViewForShell& v, const fit::ShellFit& fit, const std::vector<fit::EdgePoint>& points,
                int view_index, const fs::path& path) {
  std::vector<int> frames;
  for (std::size_t k = 0; k < v.polar.utc_s.size(); ++k)
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - v.polar.utc_s[k]) < 1.0) {
        frames.push_back(static_cast<int>(k));
        break;
      }
  if (frames.empty()) return;
  const std::vector<int> shown = {frames.front(), frames[frames.size() / 2], frames.back()};
  std::vector<QuicklookPanel> panels;
  for (const int k : shown) {
    const double t = v.polar.utc_s[static_cast<std::size_t>(k)];
    const fit::ShellParams shell = fit::shell_at(fit, t);
    const fit::SkyOutline outline = fit::sky_outline(fit::make_mesh(shell, {16, 96, 72}), shell, v.observer, 1.0);
    char title[160];
    std::snprintf(title, sizeof title, "%s · %s UTC · apex %.1f R☉", v.name.c_str(),
                  imaging::iso_from_utc_seconds(t, 0).substr(11, 5).c_str(), shell.apex_height_rs);
    QuicklookPanel panel{Plane::sky,
                         cartesian_from_polar(v.polar.frames[static_cast<std::size_t>(k)], v.grid, v.polar.polar),
                         viewer::sky_extent(v.grid),
                         sigma_scale(4.0, "running difference (σ)"),
                         title,
                         polar_radii(v.polar.polar),
                         {}};
    Overlay fitted{Overlay::Shape::dots, {}, kPointMark, "points fitted"};
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - t) < 1.0) fitted.points.push_back(sky_point(p.pa_deg, p.height_rs));
    // The outline through the middle of each PA bin, around through north, broken where a
    // bin has no height.
    Overlay edge{Overlay::Shape::line, {}, kShellMark, "shell outline"};
    const std::size_t bins = outline.max_height_rs.size();
    for (std::size_t b = 0; b <= bins && bins > 0; ++b) {
      const double h = outline.max_height_rs[b % bins];
      edge.points.push_back(std::isfinite(h) ? sky_point((double(b % bins) + 0.5) * outline.bin_deg, h)
                                             : viewer::DataPoint{NAN, NAN});
    }
    panel.overlays.push_back(std::move(fitted));
    panel.overlays.push_back(std::move(edge));
    panels.push_back(std::move(panel));
  }
  write_quicklook(path, panels, v.name + ": the fitted shell's outline over three running differences, with the points it fits");
}

// What the data leave open, and whether the fit failed in a way that its numbers do not
// show (issues 11 and 13): machine-readable marks in the shell block, sentences in the
// problems, and the basis on which an arrival estimate may (or may not) be made.
void judge_shell(const fit::ShellFit& fit, const std::vector<fit::EdgePoint>& points, std::size_t view_count,
                 ShellReport& report) {
  json& shell = report.shell;
  json open = json::array();
  std::vector<std::string> failures;
  if (fit.direction_held) {
    shell["direction_basis"] = "source region";
    report.arrival_condition = "the CME's direction is taken from the event's source region (held fixed, σ " +
                               std::to_string(static_cast<int>(std::lround(deg(fit.sigma[fit::kLon])))) +
                               "° assumed), not measured: one view cannot fix it";
  } else if (fit.direction_constrained) {
    shell["direction_basis"] = "views";
  } else {
    shell["direction_basis"] = "none";
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
  shell["not_constrained"] = open;
  shell["at_bound"] = fit.at_bound;
  if (!fit.covariance_ok) failures.push_back("the shell fit's covariance is singular, so its σ are unknown");
  for (std::size_t k = 0; k < fit::kShellParams; ++k)
    if (fit.covariance_ok && k != fit::kAccel && !std::isfinite(fit.sigma[k])) {
      failures.push_back("the shell fit's covariance gives no finite σ for every parameter");
      break;
    }
  if (!fit.at_bound.empty()) {
    std::string keys;
    for (const std::string& k : fit.at_bound) keys += (keys.empty() ? "" : ", ") + k;
    failures.push_back("the shell fit left " + keys + " on the solver's bound, so the fit did not find a minimum there");
  }
  if (report.boundary.is_object() && !points.empty()) {
    double first = points.front().time_s;
    for (const fit::EdgePoint& p : points) first = std::min(first, p.time_s);
    const double crossing = imaging::utc_seconds_from_iso(report.boundary["time"].get<std::string>());
    if (crossing < first - 1.0)
      failures.push_back("the fitted apex law passes 21.5 R☉ before the first frame with points, at " +
                         report.boundary["time"].get<std::string>());
  }
  shell["status"] = failures.empty() ? "ok" : "partial";
  for (const std::string& f : failures) report.problems.push_back("shell fit failed: " + f + ".");
  if (!failures.empty() && report.arrival_withheld.empty())
    report.arrival_withheld = "the shell fit failed (" + failures.front() + ")";
  if (!report.arrival_withheld.empty())
    report.problems.push_back("no arrival estimate: " + report.arrival_withheld + ".");
}

// A view that sees no CME while another does is a problem, with its likely reason: its
// frames miss the time the others saw the CME (outside the window); the fitted shell
// stays inside the view's lowest height with data all that time (behind the occulter);
// or else the CME was there but too faint (below the detection threshold).
void name_views_without_cme(const std::vector<ViewForShell>& views, const std::vector<const ViewForShell*>& used,
                            const std::vector<fit::EdgePoint>& points, const fit::ShellFit* fit, ShellReport& report) {
  if (used.empty() || points.empty()) return;
  double first = points.front().time_s, last = first;
  for (const fit::EdgePoint& p : points) first = std::min(first, p.time_s), last = std::max(last, p.time_s);
  for (const ViewForShell& v : views) {
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
      const fit::ShellParams shell = fit::shell_at(*fit, t1);
      const fit::SkyOutline outline = fit::sky_outline(fit::make_mesh(shell, {16, 96, 72}), shell, v.observer, 1.0);
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
    report.problems.push_back("view " + v.name + " sees no CME while another view does: " + reason + ".");
  }
}

}  // namespace

ShellReport fit_and_report_shell(const std::vector<ViewForShell>& views,
                                 const std::optional<std::array<double, 2>>& source_deg, const std::string& apex_law,
                                 const fs::path& out_dir) {
  ShellReport report;
  report.shell = nullptr;
  report.boundary = nullptr;
  std::vector<fit::ShellView> fit_views;
  std::vector<const ViewForShell*> used;
  std::vector<fit::EdgePoint> points, edge_points;  // rims (or the analyst's), and outer edges
  bool automatic = false;                            // some view's points are the finder's
  int quadratic = 0, fitted = 0;
  for (const ViewForShell& v : views) {
    const int index = static_cast<int>(fit_views.size());
    const std::size_t before = points.size();
    if (!v.analyst.empty()) {
      for (const TrackPoint& p : v.analyst) {
        points.push_back({index, p.utc_s, p.pa_deg, p.height_rs});
        edge_points.push_back(points.back());
      }
    } else if (v.front.found) {
      add_front_ridge(v, index, points);
      add_leading_edge(v, index, edge_points);
      automatic = true;
    }
    if (points.size() == before) continue;
    fit::ShellView sv;
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
    used.push_back(&v);
    if (!v.kinematic_model.empty()) ++fitted, quadratic += v.kinematic_model == "quadratic";
  }
  if (fit_views.empty()) {
    report.problems.push_back("no shell fit: no view found a CME or has analyst points.");
    return report;
  }
  fit::ShellFitOptions options;
  options.source_lon_lat_deg = source_deg;
  // auto: a quadratic apex law only when every view's own height–time fit chose one
  // (AICc); otherwise the straight line, whose speed is the mean over the frames.
  if (apex_law == "quadratic" || (apex_law == "auto" && fitted > 0 && quadratic == fitted))
    options.law = fit::ApexLawKind::quadratic;
  else if (apex_law == "free")
    options.law = fit::ApexLawKind::free_per_time;
  fit::ShellFit fit = fit::fit_shell(fit_views, points, options);
  if (!fit.ok) {
    report.problems.push_back("no shell fit: " + fit.problem + ".");
    name_views_without_cme(views, used, points, nullptr, report);
    return report;
  }
  // The same fit to the fronts' outer edges (the threshold edge of imaging/front): the
  // reported shell joins the two (fit/shell_fit.hpp merge_edge_fits says how).
  if (automatic) {
    const fit::ShellFit outer = fit::fit_shell(fit_views, edge_points, options);
    fit::merge_edge_fits(fit, outer);
    if (outer.ok)
      fit.notes.push_back("shape from the fronts' bright rims, apex law the mean of the rim and outer-edge fits; σ include half their difference");
  }
  report.shell = shell_block(fit);
  json names = json::array();
  for (const auto* v : used) names.push_back(v->name);
  report.shell["views"] = names;
  report.boundary = boundary_block(fit);
  if (report.boundary.is_null())
    report.problems.push_back("the fitted apex law never reaches 21.5 R☉: no boundary values.");
  judge_shell(fit, points, used.size(), report);
  name_views_without_cme(views, used, points, &fit, report);
  for (std::size_t i = 0; i < used.size(); ++i) {
    fs::create_directories(out_dir / used[i]->name);
    draw_shell(*used[i], fit, points, static_cast<int>(i), out_dir / used[i]->name / "shell.png");
  }
  report.fit = fit;
  return report;
}

}  // namespace occulta::app
