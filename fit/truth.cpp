#include "fit/truth.hpp"

#include <cmath>

#include "fit/kinematics.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {

ViewTruth view_truth(const nlohmann::json& truth, const std::string& view, double lo_rs, double hi_rs) {
  ViewTruth t;
  std::vector<HeightTimePoint> edge;
  bool seen = false;
  for (const auto& frame : truth.at("frames")) {
    const auto& v = frame.at("views").at(view);
    const double time = imaging::utc_seconds_from_iso(frame.at("time").get<std::string>());
    const double h = v.at("sky_leading_edge_rs").get<double>();
    t.apex_pa_deg = v.at("apex_pa_deg").get<double>();
    if (!seen && h > lo_rs) seen = true, t.first_visible_utc_s = time;
    if (h >= lo_rs && h <= hi_rs) {
      edge.push_back({time, h, 0.0});
      if (v.contains("visible_pa_span_deg") && v["visible_pa_span_deg"].is_array()) {
        t.pa_from_deg = v["visible_pa_span_deg"][0].get<double>();
        t.pa_to_deg = v["visible_pa_span_deg"][1].get<double>();
      }
    }
  }
  t.width_deg = t.pa_to_deg - t.pa_from_deg;
  t.central_pa_deg = std::fmod(0.5 * (t.pa_from_deg + t.pa_to_deg) + 720.0, 360.0);
  t.frames_in_field = int(edge.size());
  const HeightTimeFit fit = fit_height_time(edge);
  t.sky_speed_km_s = fit.status == FitStatus::ok ? fit.law.speed_km_s : NAN;
  t.sky_onset_utc_s = fit.status == FitStatus::ok && fit.onset.found ? fit.onset.time_s : NAN;
  return t;
}

}  // namespace occulta::fit
