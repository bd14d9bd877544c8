#include "fit/truth.hpp"

#include <cmath>
#include <vector>

#include "fit/kinematics.hpp"
#include "fit/scenario.hpp"
#include "fit/shell.hpp"
#include "imaging/constants.hpp"
#include "imaging/geometry.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
namespace {

// The truth file's shell block as the scenario's shell (its apex law included).
ScenarioShell shell_of(const nlohmann::json& s) {
  ScenarioShell shell;
  shell.lon_deg = s.at("lon_deg").get<double>();
  shell.lat_deg = s.at("lat_deg").get<double>();
  shell.tilt_deg = s.at("tilt_deg").get<double>();
  shell.half_angle_deg = s.at("half_angle_deg").get<double>();
  shell.aspect_ratio = s.at("aspect_ratio").get<double>();
  shell.apex.ref_time_s = imaging::utc_seconds_from_iso(s.at("ref_time").get<std::string>());
  shell.apex.height_rs = s.at("apex_height_rs").get<double>();
  shell.apex.speed_km_s = s.at("speed_km_s").get<double>();
  shell.apex.accel_m_s2 = s.at("accel_m_s2").get<double>();
  return shell;
}

// CME `cme`'s shell block: `shells[cme]` where the truth lists several, else `shell`.
const nlohmann::json& shell_block(const nlohmann::json& truth, int cme) {
  if (truth.contains("shells")) return truth.at("shells").at(std::size_t(cme));
  if (cme != 0) throw std::out_of_range("the truth file has one CME, not " + std::to_string(cme + 1));
  return truth.at("shell");
}

// The view's frame times: its own clock (observers[].frame_times) or the shared frames'.
std::vector<double> view_times(const nlohmann::json& truth, const std::string& view) {
  std::vector<double> times;
  for (const auto& o : truth.at("observers"))
    if (o.at("name").get<std::string>() == view && o.contains("frame_times")) {
      for (const auto& t : o.at("frame_times")) times.push_back(imaging::utc_seconds_from_iso(t.get<std::string>()));
      return times;
    }
  for (const auto& frame : truth.at("frames"))
    times.push_back(imaging::utc_seconds_from_iso(frame.at("time").get<std::string>()));
  return times;
}

imaging::Observer observer_of(const nlohmann::json& truth, const std::string& view) {
  for (const auto& o : truth.at("observers"))
    if (o.at("name").get<std::string>() == view)
      return imaging::observer_from_degrees(o.at("lon_deg").get<double>(), o.at("lat_deg").get<double>(),
                                            o.at("dist_au").get<double>() * kAuKm);
  throw std::out_of_range("the truth file has no observer named " + view);
}

}  // namespace

ViewTruth view_truth(const nlohmann::json& truth, const std::string& view, double lo_rs, double hi_rs, int cme) {
  ViewTruth t;
  const ScenarioShell shell = shell_of(shell_block(truth, cme));
  const imaging::Observer observer = observer_of(truth, view);
  t.accelerating = shell.apex.accel_m_s2 != 0.0;
  std::vector<HeightTimePoint> edge;
  std::vector<unsigned char> crossed;  // per 1° PA bin: the front lay in [lo, hi] in some frame
  std::vector<double> top;             // per bin: the highest the front reached there, at most hi
  bool seen = false;
  for (const double time : view_times(truth, view)) {
    if (!shell.launched(time)) continue;  // not drawn yet (fit/scenario.hpp)
    // The mesh resolution synth uses for its truth (fit/synth.cpp sky_truth); the leading
    // edge and apex PA as sky_truth takes them from this outline.
    const ShellParams at = shell.at(time);
    const SkyOutline outline = sky_outline(make_mesh(at, MeshResolution{24, 96, 48}), at, observer, 1.0);
    double h = 0.0;
    for (const double front : outline.max_height_rs)
      if (!std::isnan(front)) h = std::max(h, front);
    t.apex_pa_deg = outline.apex_pa_deg;
    if (!seen && h > lo_rs) seen = true, t.first_visible_utc_s = time;
    if (h >= lo_rs && h <= hi_rs) edge.push_back({time, h, 0.0});
    crossed.resize(outline.max_height_rs.size(), 0);
    top.resize(outline.max_height_rs.size(), -1.0);
    for (size_t i = 0; i < outline.max_height_rs.size(); ++i) {
      const double front = outline.max_height_rs[i];
      if (std::isfinite(front) && front >= lo_rs && front <= hi_rs) crossed[i] = 1;
      if (std::isfinite(front)) top[i] = std::max(top[i], std::min(front, hi_rs));
    }
  }

  // The covering arc: start after the largest run of bins never crossed (round the circle).
  const int bins = int(crossed.size());
  int first_on = -1;
  for (int i = 0; i < bins && first_on < 0; ++i)
    if (crossed[i]) first_on = i;
  if (first_on < 0) {
    t.pa_from_deg = t.pa_to_deg = t.central_pa_deg = t.span_middle_pa_deg = t.width_deg = NAN;
  } else {
    int gap = 0, gap_end = first_on, run = 0;
    for (int k = 1; k <= bins; ++k) {
      const int i = (first_on + k) % bins;
      if (!crossed[i]) {
        ++run;
      } else {
        if (run > gap) gap = run, gap_end = i;
        run = 0;
      }
    }
    const double bin_deg = 360.0 / bins;
    t.width_deg = (bins - gap) * bin_deg;
    t.pa_from_deg = gap_end * bin_deg;
    t.pa_to_deg = t.pa_from_deg + t.width_deg;
    t.span_middle_pa_deg = std::fmod(t.pa_from_deg + 0.5 * t.width_deg, 360.0);
    // The PA of the centroid of the swept sky, as imaging/front.cpp central_pa measures it.
    double sx = 0.0, sy = 0.0;
    for (int j = 0; j < bins - gap; ++j) {
      const int i = (gap_end + j) % bins;
      if (!crossed[i]) continue;
      const double w = std::pow(top[i], 3) - std::pow(lo_rs, 3), pa = (i + 0.5) * bin_deg * kRadPerDeg;
      sx += w * std::cos(pa);
      sy += w * std::sin(pa);
    }
    t.central_pa_deg = std::fmod(std::atan2(sy, sx) * kDegPerRad + 360.0, 360.0);
  }

  t.frames_in_field = int(edge.size());
  const HeightTimeFit line = fit_height_time(edge);
  t.sky_speed_km_s = line.status == FitStatus::ok ? line.law.speed_km_s : NAN;
  HeightTimeOptions own;
  own.model = t.accelerating ? HeightTimeModel::quadratic : HeightTimeModel::linear;
  const HeightTimeFit law = t.accelerating ? fit_height_time(edge, own) : line;
  t.sky_onset_utc_s = law.status == FitStatus::ok && law.onset.found ? law.onset.time_s : NAN;
  return t;
}

double sky_front_rs(const nlohmann::json& truth, const std::string& view, double utc_s, double pa_deg, int cme) {
  const ScenarioShell shell = shell_of(shell_block(truth, cme));
  if (!shell.launched(utc_s)) return NAN;
  const ShellParams at = shell.at(utc_s);
  const SkyOutline outline =
      sky_outline(make_mesh(at, MeshResolution{24, 96, 48}), at, observer_of(truth, view), 1.0);
  const int bins = int(outline.max_height_rs.size());
  const int bin = int(std::floor(std::fmod(pa_deg + 360.0, 360.0) / outline.bin_deg)) % bins;
  // The mesh is sampled, not continuous: a bin inside the projection may hold no point
  // (as sky_truth bridges gaps of up to 2 bins); then the nearest bins on both sides.
  for (int d = 0; d <= 2; ++d) {
    const double below = outline.max_height_rs[(bin - d + bins) % bins], above = outline.max_height_rs[(bin + d) % bins];
    if (std::isfinite(below) && std::isfinite(above)) return 0.5 * (below + above);
    if (d > 0 && (std::isfinite(below) || std::isfinite(above))) return std::isfinite(below) ? below : above;
  }
  return NAN;
}

}  // namespace occulta::fit
