// fit/result_json.cpp — the measurement as result.json (see result_file.hpp).
#include <cmath>

#include "fit/arrival_json.hpp"
#include "fit/result_file.hpp"
#include "imaging/constants.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
using nlohmann::json;

namespace {

json number_or_null(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }
json time_or_null(const HeightCrossing& c) {
  return c.found && std::isfinite(c.time_s) ? json(imaging::iso_from_utc_seconds(c.time_s, 3)) : json(nullptr);
}

double deg(double rad) { return rad * kDegPerRad; }

json shell_block(const ShellFit& fit) {
  const ShellParams& s = fit.shell;
  const auto& sg = fit.sigma;
  const double face = face_on_width(s.half_angle, s.aspect_ratio), edge = edge_on_width(s.aspect_ratio);
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
       {{"lon_deg", deg(sg[kLon])},
        {"lat_deg", deg(sg[kLat])},
        {"tilt_deg", deg(sg[kTilt])},
        {"half_angle_deg", deg(sg[kHalfAngle])},
        {"aspect_ratio", sg[kAspect]},
        {"apex_height_rs", sg[kHeight]},
        {"speed_km_s", sg[kSpeed]},
        {"accel_m_s2", sg[kAccel]},
        {"face_on_width_deg", deg(face_on_width_sigma_rad(fit))},
        {"edge_on_width_deg", deg(edge_on_width_sigma_rad(fit))}}},
      {"residual_rms_rs", fit.residual_rms_rs},
      {"law", to_string(fit.law_kind)},
      {"points_used", fit.points_used},
      {"direction_constrained", fit.direction_constrained},
      {"design_effect", fit.covariance_inflation},
      {"notes", fit.notes},
  };
  // The covariance in the keys' units (deg for angles), for the arrival ensemble. Held
  // or unconstrained directions carry their stated σ on the diagonal, uncorrelated.
  const std::vector<std::string> keys = {"lon_deg",        "lat_deg",        "tilt_deg",   "half_angle_deg",
                                         "aspect_ratio",   "apex_height_rs", "speed_km_s", "accel_m_s2"};
  const double unit[kShellParams] = {kDegPerRad, kDegPerRad, kDegPerRad, kDegPerRad, 1.0, 1.0, 1.0, 1.0};
  const bool direction_fitted = fit.direction_constrained && fit.covariance(kLon, kLon) > 0.0;
  json matrix = json::array();
  for (int i = 0; i < kShellParams; ++i) {
    json row = json::array();
    for (int j = 0; j < kShellParams; ++j) {
      double c = fit.covariance(i, j);
      if (!direction_fitted && (i <= kLat || j <= kLat))
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


// The apex at the inner boundary of heliospheric models (21.5 R☉ ≈ 0.1 au, common
// practice): when, how fast, where the CME points and how wide it is there.
json boundary_block(const ShellMeasurement& shell) {
  if (!shell.fit || !shell.boundary) return nullptr;
  const ShellFit& fit = *shell.fit;
  const ApexCrossing& c = *shell.boundary;
  return {{"height_rs", kBoundaryHeightRs},
          {"time", imaging::iso_from_utc_seconds(c.time_s, 3)},
          {"speed_km_s", c.speed_km_s},
          {"lon_deg", deg(fit.shell.lon)},
          {"lat_deg", deg(fit.shell.lat)},
          {"half_width_deg", shell.boundary_half_width_deg},
          {"sigma",
           {{"time_s", c.time_sigma_s},
            {"speed_km_s", c.speed_sigma_km_s},
            {"lon_deg", deg(fit.sigma[kLon])},
            {"lat_deg", deg(fit.sigma[kLat])},
            {"half_width_deg", shell.boundary_half_width_sigma_deg}}}};
}

json view_json(const ViewMeasurement& m) {
  const imaging::Front& front = m.front;
  json v = {{"name", m.name}, {"frames_used", m.frames_used}, {"found", front.found},
            {"central_pa_deg", nullptr}, {"pa_span_deg", nullptr}, {"sky_width_deg", nullptr},
            {"sky_speed_km_s", nullptr}, {"sky_speed_km_s_sigma", nullptr}, {"sky_accel_m_s2", nullptr},
            {"sky_accel_m_s2_sigma", nullptr}, {"kinematic_model", nullptr}, {"onset_time", nullptr},
            {"onset_time_sigma_s", nullptr}, {"first_seen_time", nullptr}, {"time_at_21_5_rs", nullptr},
            {"track_points", 0}, {"residual_rms_rs", nullptr}};
  v["track_origin"] = m.by_analyst ? "analyst" : "auto";
  v["front_contrast_sigma"] = std::isnan(m.front_contrast_sigma) ? json(nullptr) : json(m.front_contrast_sigma);
  v["censored_points"] = {{"at_field_stop", m.censored.at_field_stop},
                          {"at_data_gap", m.censored.at_data_gap},
                          {"behind_occulter", m.censored.behind_occulter}};
  if (front.found) {
    v["pa_span_deg"] = {front.pa_from_deg, front.pa_to_deg};
    v["sky_width_deg"] = front.width_deg;
    v["first_seen_time"] = imaging::iso_from_utc_seconds(front.onset_utc_s, 3);
  }
  if (front.found || m.by_analyst) v["central_pa_deg"] = m.central_pa_deg;
  v["law_ref_time"] = nullptr;
  v["sigma_missing_why"] = nullptr;
  if (m.kinematics) {
    const HeightTimeFit& k = *m.kinematics;
    v["track_points"] = int(m.points.size());
    if (k.status == FitStatus::ok) {
      v["kinematic_model"] = to_string(k.model);
      v["law_ref_time"] = imaging::iso_from_utc_seconds(k.law.ref_time_s, 3);
      v["sky_speed_km_s"] = k.law.speed_km_s;
      v["sky_speed_km_s_sigma"] = number_or_null(k.speed_sigma_km_s);
      v["sky_accel_m_s2"] = k.law.accel_m_s2;
      v["sky_accel_m_s2_sigma"] =
          k.model == HeightTimeModel::quadratic ? number_or_null(k.accel_sigma_m_s2) : json(nullptr);
      v["onset_time"] = time_or_null(k.onset);
      v["onset_time_sigma_s"] = k.onset.found ? number_or_null(k.onset.sigma_s) : json(nullptr);
      v["time_at_21_5_rs"] = time_or_null(k.boundary);
      v["residual_rms_rs"] = k.residual_rms_rs;
      if (!k.sigmas_known) v["sigma_missing_why"] = k.problem;
    }
  }
  if (!m.points.empty()) v["track_pa_deg"] = m.track_pa_deg;
  json outside = json::array();
  for (const auto& f : m.frames_outside_window) outside.push_back(f.generic_string());
  v["frames_outside_window"] = outside;
  return v;
}

json views_json(const std::vector<ViewMeasurement>& views) {
  json out = json::array();
  for (const ViewMeasurement& v : views) out.push_back(view_json(v));
  return out;
}

json shell_json(const ShellMeasurement& s) {
  if (!s.fit) return nullptr;
  json shell = shell_block(*s.fit);
  shell["views"] = s.views;
  shell["direction_basis"] = s.direction_basis;
  shell["not_constrained"] = s.not_constrained;
  shell["at_bound"] = s.fit->at_bound;
  shell["status"] = s.status;
  return shell;
}

// The arrival members beside a shell (the document's or a CME's).
void add_arrival(json& block, const ShellMeasurement& shell, bool made, const std::vector<TargetArrival>& arrivals,
                 const EnsembleOptions& ensemble) {
  if (!shell.arrival_withheld.empty()) {
    block["arrival_withheld"] = shell.arrival_withheld;
  } else if (made) {
    block["arrival"] = arrival_block(arrivals, ensemble);
    // An estimate that rests on an assumption the data do not test says so, beside it.
    if (!shell.arrival_condition.empty()) block["arrival_conditional_on"] = shell.arrival_condition;
    block["caution"] = std::string(kArrivalCaution);
  }
}

}  // namespace

json result_json(const Measurement& m) {
  json result = {{"schema", "occulta.result/1"},
                 {"event_id", m.event_id},
                 {"status", m.status},
                 {"problems", m.problems},
                 {"views", views_json(m.views)},
                 {"shell", shell_json(m.shell)},
                 {"boundary", boundary_block(m.shell)}};
  add_arrival(result, m.shell, m.arrival_made, m.arrivals, m.ensemble);
  // Several CMEs (issue 16): each with the blocks the document has for the primary one
  // (above), and which is primary and why. One CME: the document as it always was.
  if (m.cmes.size() > 1) {
    json cmes = json::array();
    for (const CmeMeasurement& c : m.cmes) {
      json cme = {{"index", c.index},           {"association", c.association}, {"status", c.status},
                  {"problems", c.problems},     {"views", views_json(c.views)}, {"shell", shell_json(c.shell)},
                  {"boundary", boundary_block(c.shell)}};
      add_arrival(cme, c.shell, c.arrival_made, c.arrivals, m.ensemble);
      cmes.push_back(cme);
    }
    result["cmes"] = cmes;
    result["primary"] = m.cmes[std::size_t(m.primary)].index;
    result["primary_reason"] = m.primary_reason;
  }
  return result;
}

}  // namespace occulta::fit
