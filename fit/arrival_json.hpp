// fit/arrival_json.hpp — the arrival model's files: what it reads from result.json
// (`shell`, `boundary`) and from an event file's `forecast` block, and the `arrival[]`
// entries it writes (DESIGN.md "File contracts"; schemas/arrival.schema.json).
//
// Reading is at the edge: every fault is an imaging::InputError naming the source and the
// field in one sentence. Degrees, ISO 8601 UTC and the keys' own units in the files; the
// units of fit/arrival.hpp inside.
#pragma once

#include <array>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "fit/arrival.hpp"

namespace occulta::fit {

// The launch and its uncertainty, from a result document. Refused (InputError): another
// kind of file, a `schema` other than "occulta.result/1", status "failed", a boundary
// speed outside kSpeedRangeKmS.
//   boundary {time, speed_km_s, lon_deg, lat_deg}: the apex at 21.5 R☉ — the nominal launch;
//   shell {tilt_deg, half_angle_deg, aspect_ratio}: the shape (required);
//   shell.covariance {keys, matrix} in the keys' units, else shell.sigma {key: σ}
//   (independent), else no spread. Keys used: speed_km_s, lon_deg, lat_deg, tilt_deg,
//   half_angle_deg, aspect_ratio, apex_height_rs, accel_m_s2; others (the widths, derived
//   from α and κ) are ignored.
// The fit's law h(t) = h₀ + v (t − t_ref) + ½ a (t − t_ref)² is carried to the boundary to
// first order: with Δt = t_b − t_ref and h(t_b) = 21.5 R☉ held,
//   δt_b = −(δh₀ + Δt δv + ½ Δt² δa) / v_b,   δv_b = δv + Δt δa + a δt_b
// (h₀ in km, a in km/s²). Without shell.ref_time, Δt = 0: the speed's uncertainty passes
// unchanged and the acceleration's is not used.
// The ranges a practitioner accepts (common practice, not a physical limit): CME speeds
// 50–5000 km/s (the boundary speed; also the ambient wind range), and drag parameters
// 1e-10–1e-5 per km (Vršnak et al. 2013 fit γ ≈ 0.1–2 × 10⁻⁷ per km; a wide margin kept).
inline constexpr std::array<double, 2> kSpeedRangeKmS{50.0, 5000.0};
inline constexpr std::array<double, 2> kWindRangeKmS{50.0, 5000.0};
inline constexpr std::array<double, 2> kDragRangePerKm{1e-10, 1e-5};

struct ArrivalInput {
  std::string event_id;
  Launch launch;
  LaunchCovariance covariance = LaunchCovariance::Zero();
  std::string spread_from;  // "covariance", "sigma" or "none": what the covariance came from
};
ArrivalInput read_arrival_input(const nlohmann::json& result, const std::string& source);

// An event file's `forecast` block (null: the defaults): targets (strings as
// parse_target reads them, or objects {name, lon_deg, lat_deg, dist_au}; default earth),
// wind_km_s [lo, hi] and drag_per_km [lo, hi] (within kWindRangeKmS and kDragRangePerKm, lo ≤ hi; defaults DragPriors); unknown keys refused.
// Targets are placed at utc_s (the boundary time).
struct ForecastSettings {
  std::vector<Target> targets;
  DragPriors priors;
};
ForecastSettings read_forecast_block(const nlohmann::json& forecast, double utc_s, const std::string& source);

// A target's position as written in the files: Stonyhurst lon_deg, lat_deg, dist_au.
nlohmann::json position_json(const Target& target);

// One `arrival[]` entry: target, hit_probability, time_p05/p50/p95 (ISO UTC, null when
// no member hits), speed_km_s_p50, and ours: speed_km_s_p05/p95, position, members,
// hits, seed, wind_km_s and drag_per_km (the priors' ranges), caution.
nlohmann::json arrival_entry(const TargetArrival& arrival, const EnsembleOptions& options);
// The `arrival[]` block: one entry per target, in order.
nlohmann::json arrival_block(const std::vector<TargetArrival>& arrivals, const EnsembleOptions& options);

}  // namespace occulta::fit
