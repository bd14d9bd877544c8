// viewer/shell_overlay.cpp — see shell_overlay.hpp.
#include "viewer/shell_overlay.hpp"

#include <cmath>

#include "imaging/constants.hpp"

namespace occulta::viewer {
namespace {

constexpr double kRad = std::numbers::pi / 180.0;

// Finer than measure's shell picture ({16, 96, 72}): see the header.
constexpr fit::MeshResolution kOutlineMesh{24, 144, 108};

}  // namespace

fit::ShellParams shell_params(const ShellControls& c, double utc_s) {
  fit::ApexLaw law{std::isfinite(c.ref_utc_s) ? c.ref_utc_s : utc_s, c.apex_height_rs, c.speed_km_s, c.accel_m_s2};
  fit::ShellParams p;
  p.lon = c.lon_deg * kRad;
  p.lat = c.lat_deg * kRad;
  p.tilt = c.tilt_deg * kRad;
  p.apex_height_rs = law.height_at(utc_s);
  p.half_angle = c.half_angle_deg * kRad;
  p.aspect_ratio = c.aspect_ratio;
  return p;
}

std::vector<std::vector<OutlinePoint>> shell_outline(const ShellControls& controls, const imaging::Observer& observer,
                                                     double utc_s) {
  std::vector<std::vector<OutlinePoint>> runs;
  const fit::ShellParams shell = shell_params(controls, utc_s);
  if (fit::is_valid(shell)) {
    const fit::SkyOutline o = fit::sky_outline(fit::make_mesh(shell, kOutlineMesh), shell, observer, 1.0);
    const int bins = int(o.max_height_rs.size());
    // Start after an empty bin, so that a run crossing north stays one run.
    int start = 0;
    while (start < bins && std::isfinite(o.max_height_rs[std::size_t(start)])) ++start;
    const bool all = start == bins;
    if (all) start = 0;
    std::vector<OutlinePoint> run;
    for (int k = 0; k < bins + (all ? 1 : 0); ++k) {
      const int b = (start + k) % bins;
      const double h = o.max_height_rs[std::size_t(b)];
      if (std::isfinite(h)) {
        double pa = (b + 0.5) * o.bin_deg;
        if (!run.empty() && pa < run.back().pa_deg) pa += 360.0;  // continuing past north
        run.push_back({pa, h});
      } else if (!run.empty()) {
        runs.push_back(std::move(run));
        run.clear();
      }
    }
    if (!run.empty()) runs.push_back(std::move(run));
  }
  return runs;
}

}  // namespace occulta::viewer
