// viewer/cme_list.cpp — see cme_list.hpp.
#include "viewer/cme_list.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "fit/measurement.hpp"

namespace occulta::viewer {

const fit::CmeMeasurement* shown_cme(const WindowState& state) {
  if (!state.measured || state.measured->cmes.empty()) return nullptr;
  return &state.measured->cmes[std::size_t(std::clamp(state.cme, 0, int(state.measured->cmes.size()) - 1))];
}

const fit::ViewMeasurement* shown_sighting(const WindowState& state, const std::string& view) {
  const fit::CmeMeasurement* cme = shown_cme(state);
  if (!cme) return nullptr;
  for (const fit::ViewMeasurement& v : cme->views)
    if (v.name == view) return &v;
  return nullptr;
}

std::vector<CmeRow> cme_rows(const WindowState& state) {
  std::vector<CmeRow> rows;
  if (!state.measured) return rows;
  const fit::Measurement& m = *state.measured;
  const fit::CmeMeasurement* shown = shown_cme(state);
  constexpr double deg = 180.0 / std::numbers::pi;
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t k = 0; k < m.cmes.size(); ++k) {
    const fit::CmeMeasurement& c = m.cmes[k];
    CmeRow row;
    row.number = c.index;
    row.primary = int(k) == m.primary;
    row.shown = &c == shown;
    row.association = c.association;
    row.status = c.status;
    row.onset_utc_s = std::isfinite(c.onset_utc_s) ? c.onset_utc_s : c.first_seen_utc_s;
    for (const fit::ViewMeasurement& v : c.views) {
      row.by_analyst = row.by_analyst || v.by_analyst;
      if ((v.front.found || v.by_analyst) && std::isfinite(v.central_pa_deg)) row.central_pa.push_back({v.name, v.central_pa_deg});
    }
    row.speed_km_s = row.speed_sigma_km_s = row.lon_deg = row.lon_sigma_deg = row.lat_deg = row.lat_sigma_deg = nan;
    if (const auto& fit = c.shell.fit) {
      row.speed_km_s = fit->law.speed_km_s;
      row.speed_sigma_km_s = fit->sigma[fit::kSpeed];
      row.lon_deg = fit->shell.lon * deg;
      row.lon_sigma_deg = fit->sigma[fit::kLon] * deg;
      row.lat_deg = fit->shell.lat * deg;
      row.lat_sigma_deg = fit->sigma[fit::kLat] * deg;
    }
    rows.push_back(std::move(row));
  }
  return rows;
}

}  // namespace occulta::viewer
