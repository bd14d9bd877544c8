// fit/scenario.hpp — the synthetic-event scenario: who observes, what erupts, how the
// detector records it. The scenario file (`*.scenario.json`) is occulta's own format,
// documented in README.md ("Scenario file"); read_scenario checks every field and says
// which one is wrong.
//
// Units as named: degrees and R☉ at the interface, seconds for durations, UTC ISO 8601
// for times (seconds since 2000-01-01 inside, imaging/time.hpp). Brightness in units of
// the mean solar brightness B☉ (fit/thomson.hpp); the detector turns it into DN.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

#include "fit/shell.hpp"

namespace occulta::fit {

// Below this apex height a scenario's CME is not launched yet (not drawn).
inline constexpr double kLaunchHeightRs = 0.1;

// Apex height against time: h(t) = h₀ + v (t − t₀) + ½ a (t − t₀)² (linear when a = 0).
struct ApexLaw {
  double ref_time_s = 0.0;    // t₀
  double height_rs = 0.0;     // h₀ at t₀
  double speed_km_s = 0.0;    // v at t₀
  double accel_m_s2 = 0.0;    // a
  double height_at(double t_s) const;
  double speed_at(double t_s) const;  // km/s
};

struct ScenarioObserver {
  std::string name;           // also the view's folder name: fit::is_safe_name
  double lon_deg = 0.0, lat_deg = 0.0, dist_au = 1.0;  // Stonyhurst
  double roll_deg = 0.0;      // as imaging::ImageGeometry::roll_deg
  // The view's own clock: its first frame at the scenario's start + start_offset_s, then
  // one every cadence_s, `frames` of them. read_scenario fills them from the scenario's
  // `start`, `cadence_s` and `frames` where the observer does not give its own.
  double start_offset_s = 0.0;
  double cadence_s = 600.0;
  int frames = 16;
};

// A bright point (a planet, a star, a comet's head) that drifts across one view's field in
// a straight line on the sky, from `from` at the view's first frame to `to` at its last.
// Positions as (PA, plane-of-sky height): PA in degrees counter-clockwise from solar north
// through east, height in R☉ from Sun centre at the Sun's distance. Its light is
// `brightness_bsun` (B☉ over one pixel) before the telescope's point-spread function.
struct PointSource {
  std::string view;
  double from_pa_deg = 0.0, from_height_rs = 0.0;
  double to_pa_deg = 0.0, to_height_rs = 0.0;
  double brightness_bsun = 0.0;
};

struct ScenarioShell {
  double lon_deg = 0.0, lat_deg = 0.0, tilt_deg = 0.0;  // fit/shell.hpp conventions
  double half_angle_deg = 20.0, aspect_ratio = 0.3;
  ApexLaw apex;
  // Electron density in the sheath when the apex is at 5 R☉; it falls as (5 R☉ / h)²
  // as the shell expands, so the shell's brightness drops with distance as a real
  // ejection's does (mass conserved over a sheath that grows as h² — common practice).
  double density_cm3 = 1.0e5;
  double sheath_fraction = 0.08;  // sheath thickness / apex height (self-similar)

  ShellParams at(double t_s) const;  // the shell at time t
  // Whether the CME exists at time t: its apex has risen past kLaunchHeightRs. Before
  // that it is not drawn (not launched yet), so a window can hold a CME that starts late.
  bool launched(double t_s) const;
};

struct ScenarioBackground {
  std::string k_corona = "saito";  // "saito", "baumbach-allen" or "none"
  double f_corona = 1.0;           // scale of the smooth F-corona model (0 = none)
};

struct ScenarioDetector {
  double dn_per_s_per_bsun = 1.0e12;  // DN per second for a brightness of 1 B☉
  double electrons_per_dn = 4.0;      // gain: photon (shot) noise from the collected electrons
  double read_noise_dn = 2.0;         // Gaussian read noise per pixel
  std::string pixels = "int16";       // "int16" (scaled) or "float32"
  bool compress = true;               // Rice tile compression
};

struct MissingBlock {
  std::string view;
  int frame = 0;                      // 0-based frame index
  int x = 0, y = 0, width = 0, height = 0;  // pixels (0-based, FITS row order)
};

struct Scenario {
  std::string id;
  std::filesystem::path source;       // the scenario file, for messages
  double start_s = 0.0;
  double cadence_s = 600.0;           // the views' clock unless an observer gives its own
  int frames = 16;
  int size_px = 512;                  // square frames
  double half_width_rs = 15.0;        // field of view: ±half_width at the Sun's distance
  double occulter_inner_rs = 2.5, occulter_outer_rs = 14.5;
  double exposure_s = 6.0;
  std::vector<ScenarioObserver> observers;
  // The CMEs: the file's `shell` (one) or `shells` (a list, one or more). They are drawn
  // together; where sheaths overlap, their densities add.
  std::vector<ScenarioShell> shells;
  ScenarioBackground background;
  ScenarioDetector detector;
  double jitter_px = 0.0;             // pointing jitter, standard deviation per axis
  int cosmic_rays_per_frame = 0;
  std::vector<MissingBlock> missing_blocks;
  std::vector<PointSource> point_sources;
  std::uint64_t seed = 1;

  // Frame i of view v, UTC seconds.
  double frame_time(int view, int i) const {
    const ScenarioObserver& o = observers.at(std::size_t(view));
    return start_s + o.start_offset_s + o.cadence_s * i;
  }
  // Whether every view keeps the scenario's own clock (start, cadence, frames).
  bool shared_clock() const;
};

// Reads and checks a scenario file strictly; InputError(path, "…") names the key at
// fault: unknown keys (with the nearest known one), types, ranges, unsafe names.
Scenario read_scenario(const std::filesystem::path& path);

}  // namespace occulta::fit
