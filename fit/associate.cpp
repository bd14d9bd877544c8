// fit/associate.cpp — see associate.hpp for the checks and the decision.
#include "fit/associate.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <functional>
#include <map>

#include "imaging/constants.hpp"

namespace occulta::fit {
namespace {

double pa_distance_deg(double a, double b) {
  const double d = std::fmod(std::abs(a - b), 360.0);
  return std::min(d, 360.0 - d);
}

bool is_halo(const Sighting& s) { return s.width_deg >= 300.0; }

std::string minutes(double s) {
  char text[32];
  std::snprintf(text, sizeof text, "%.0f min", s / 60.0);
  return text;
}

// When the sky-plane law passes a height, going up.
HeightCrossing onset_of(const Sighting& s, double sky_height_rs) {
  if (s.law.status != FitStatus::ok) return {};
  return time_at_height(s.law, sky_height_rs);
}

}  // namespace

PairCheck check_pair(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& sightings, int a,
                     int b, const AssociationOptions& o) {
  PairCheck check;
  check.a = a;
  check.b = b;
  const Sighting& sa = sightings.at(std::size_t(a));
  const Sighting& sb = sightings.at(std::size_t(b));
  const imaging::Observer& oa = observers.at(std::size_t(sa.view));
  const imaging::Observer& ob = observers.at(std::size_t(sb.view));

  // Geometry: is there a direction that both views would see within central_pa_tolerance_deg
  // of their central PAs — each on the side of the Sun where it sees the CME — and not
  // within line_of_sight_deg of either view's line of sight (there its PA means nothing)?
  // Searched over the sphere on a 2° grid. Not the line where the two central-PA planes
  // meet (Inhester 2006) alone: when the planes are a few degrees apart, a central PA off
  // by a few degrees swings that line anywhere in them (measure_test's 900 km/s event under
  // clang: planes 8.6° apart, one PA 12° off, and the line fell on the far side of the Sun
  // in one view). The planes' angle is kept for the record.
  if (!is_halo(sa) && !is_halo(sb)) {
    const auto normal = [](const imaging::Observer& obs, double pa_deg) {
      // The plane holds Sun centre, the observer and the sky point 1 R☉ out at pa_deg.
      const double r = std::atan(kSolarRadiusKm / obs.dist_km);
      const Eigen::Vector2d hpc(-r * std::sin(pa_deg * kRadPerDeg), r * std::cos(pa_deg * kRadPerDeg));
      const Eigen::Vector3d sky = imaging::heeq_from_hpc(obs, hpc, obs.dist_km);
      return obs.heeq_p_obs_km().normalized().cross(sky).normalized();
    };
    check.planes_angle_deg =
        std::acos(std::clamp(std::abs(normal(oa, sa.central_pa_deg).dot(normal(ob, sb.central_pa_deg))), 0.0, 1.0)) *
        kDegPerRad;
    check.geometry_informs = true;
    check.geometry_ok = false;
    const Eigen::Vector3d heeq_u_a = oa.heeq_p_obs_km().normalized(), heeq_u_b = ob.heeq_p_obs_km().normalized();
    const double off_sight = std::sin(o.line_of_sight_deg * kRadPerDeg);
    const auto seen_near = [&](const imaging::Observer& obs, const Eigen::Vector3d& heeq_u_obs,
                               const Eigen::Vector3d& heeq_u_dir, double pa_deg) {
      const double along = heeq_u_dir.dot(heeq_u_obs);
      if (std::sqrt(std::max(0.0, 1.0 - along * along)) < off_sight) return false;
      const double seen = imaging::position_angle_deg(imaging::hpc_from_heeq(obs, 5.0 * kSolarRadiusKm * heeq_u_dir));
      return pa_distance_deg(seen, pa_deg) <= o.central_pa_tolerance_deg;
    };
    for (int lat = -89; lat <= 89 && !check.geometry_ok; lat += 2)
      for (int lon = 0; lon < 360 && !check.geometry_ok; lon += 2) {
        const double la = lat * kRadPerDeg, lo = lon * kRadPerDeg;
        const Eigen::Vector3d heeq_u_dir(std::cos(la) * std::cos(lo), std::cos(la) * std::sin(lo), std::sin(la));
        check.geometry_ok = seen_near(oa, heeq_u_a, heeq_u_dir, sa.central_pa_deg) &&
                            seen_near(ob, heeq_u_b, heeq_u_dir, sb.central_pa_deg);
      }
    if (!check.geometry_ok) {
      char text[200];
      std::snprintf(text, sizeof text,
                    "no direction appears within %.0f° of both views' central PAs, on the side of the Sun where each "
                    "sees it",
                    o.central_pa_tolerance_deg);
      check.why = text;
    }
  }

  // Timing: where each law meets Sun centre (h = 0) — the same time for any projection of
  // a self-similar expansion, whose sky heights are its true heights × a constant.
  const HeightCrossing ta = onset_of(sa, 0.0);
  const HeightCrossing tb = onset_of(sb, 0.0);
  check.onset_a_s = ta.time_s;
  check.onset_b_s = tb.time_s;
  if (ta.found && tb.found && std::isfinite(ta.sigma_s) && std::isfinite(tb.sigma_s)) {
    check.timing_informs = true;
    check.onset_gap_s = std::abs(ta.time_s - tb.time_s);
    check.onset_allowed_s = std::max(o.onset_sigmas * std::hypot(ta.sigma_s, tb.sigma_s), std::max(sa.cadence_s, sb.cadence_s));
    check.timing_ok = check.onset_gap_s <= check.onset_allowed_s;
    if (!check.timing_ok && check.why.empty())
      check.why = "their laws' origins are " + minutes(check.onset_gap_s) + " apart, more than the " +
                  minutes(check.onset_allowed_s) + " their uncertainties and cadences allow";
  }
  return check;
}

Association associate(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& sightings,
                      const AssociationOptions& o, const GroupResidual& residual) {
  Association out;
  const int n = int(sightings.size());
  std::vector<std::vector<int>> compatible(std::size_t(n), std::vector<int>(std::size_t(n), 0));
  for (int a = 0; a < n; ++a)
    for (int b = a + 1; b < n; ++b) {
      if (sightings[std::size_t(a)].view == sightings[std::size_t(b)].view) continue;
      out.checks.push_back(check_pair(observers, sightings, a, b, o));
      compatible[std::size_t(a)][std::size_t(b)] = compatible[std::size_t(b)][std::size_t(a)] =
          out.checks.back().compatible() ? 1 : 0;
    }

  // Residuals of multi-view groups, asked once each; a refused group never forms.
  std::map<std::vector<int>, double> residual_of;
  const auto group_ok = [&](const std::vector<int>& group) {
    if (!residual || group.size() < 2) return true;
    auto it = residual_of.find(group);
    if (it == residual_of.end()) {
      it = residual_of.emplace(group, residual(group)).first;
      if (!(it->second <= o.max_group_residual_rs)) {
        char text[200];
        std::snprintf(text, sizeof text, "a shell over %zu views' sightings (%s) fits with %.2f R☉ rms, more than one CME's (%.2f R☉): not one CME",
                      group.size(), [&] {
                        std::string ids;
                        for (int s : group) ids += (ids.empty() ? "" : ", ") + std::to_string(s);
                        return ids;
                      }().c_str(), it->second, o.max_group_residual_rs);
        out.notes.push_back(text);
      }
    }
    return it->second <= o.max_group_residual_rs;
  };

  // Every grouping (each sighting in one group, one per view, pairwise compatible), by
  // recursion over the sightings; the best associate the most (Σ size − 1).
  std::vector<std::vector<std::vector<int>>> best;
  int best_links = -1, visited = 0;
  std::vector<std::vector<int>> groups;
  std::function<void(int)> place = [&](int i) {
    if (++visited > o.max_groupings) return;
    if (i == n) {
      for (const auto& g : groups)
        if (!group_ok(g)) return;
      int links = 0;
      for (const auto& g : groups) links += int(g.size()) - 1;
      if (links > best_links) best_links = links, best.clear();
      if (links == best_links) best.push_back(groups);
      return;
    }
    // By index: deeper calls add groups (and remove them again before returning).
    for (std::size_t gi = 0; gi < groups.size(); ++gi) {
      bool fits = true;
      for (int m : groups[gi])
        fits = fits && sightings[std::size_t(m)].view != sightings[std::size_t(i)].view &&
               compatible[std::size_t(m)][std::size_t(i)];
      if (!fits) continue;
      groups[gi].push_back(i);
      place(i + 1);
      groups[gi].pop_back();
    }
    groups.push_back({i});
    place(i + 1);
    groups.pop_back();
  };
  place(0);
  if (visited > o.max_groupings) out.notes.push_back("too many sightings to weigh every grouping; the first ones were weighed");

  const auto as_group = [&](const std::vector<int>& g) {
    CmeGroup group;
    group.sightings = g;
    if (const auto it = residual_of.find(g); it != residual_of.end()) group.residual_rs = it->second;
    return group;
  };
  if (best.empty()) {  // nothing valid (every grouping refused): each sighting alone
    for (int i = 0; i < n; ++i) out.cmes.push_back(as_group({i}));
    return out;
  }
  // Groups common to every best grouping are decided; the others are not.
  for (const auto& g : best.front()) {
    bool everywhere = true;
    for (const auto& other : best) everywhere = everywhere && std::find(other.begin(), other.end(), g) != other.end();
    if (everywhere) out.cmes.push_back(as_group(g));
  }
  out.decided = best.size() == 1;
  if (!out.decided) {
    std::vector<int> decided_members;
    for (const auto& g : out.cmes) decided_members.insert(decided_members.end(), g.sightings.begin(), g.sightings.end());
    for (int i = 0; i < n; ++i)
      if (std::find(decided_members.begin(), decided_members.end(), i) == decided_members.end()) out.undecided.push_back(i);
    for (const auto& grouping : best) {
      std::vector<CmeGroup> rest;
      for (const auto& g : grouping)
        if (std::none_of(out.cmes.begin(), out.cmes.end(), [&](const CmeGroup& c) { return c.sightings == g; }))
          rest.push_back(as_group(g));
      out.candidates.push_back(rest);
    }
    out.notes.push_back(std::to_string(best.size()) + " ways of pairing " + std::to_string(out.undecided.size()) +
                        " sightings fit the geometry and timing equally well: their CMEs are left undecided");
  }
  return out;
}

bool doubtful_stands_alone(const std::vector<imaging::Observer>& observers, const std::vector<Sighting>& firm,
                           const Sighting& doubtful, const AssociationOptions& o) {
  const Association association = associate(observers, firm, o);
  std::vector<Sighting> with = firm;
  with.push_back(doubtful);
  const int d = int(with.size()) - 1;
  for (const CmeGroup& g : association.cmes) {
    const bool claimed = std::any_of(g.sightings.begin(), g.sightings.end(),
                                     [&](int s) { return firm[std::size_t(s)].view == doubtful.view; });
    if (claimed) continue;
    for (int s : g.sightings)
      if (check_pair(observers, with, s, d, o).compatible()) return true;
  }
  return false;
}

}  // namespace occulta::fit
