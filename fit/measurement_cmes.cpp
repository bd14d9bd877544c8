// fit/measurement_cmes.cpp — the CMEs of a measurement (measurement_cmes.hpp).
#include "fit/measurement_cmes.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "fit/arrival_json.hpp"
#include "fit/measurement_shell.hpp"
#include "fit/result_file.hpp"
#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {

namespace {

// partial: a view could not be read, a view sees no CME while another does, the shell
// fit failed in a way its numbers do not show, or no arrival may be made from it.
std::string status_of(int measured, std::size_t listed, const ShellMeasurement& shell) {
  const bool weak =
      shell.views_without_cme > 0 || !shell.arrival_withheld.empty() || (shell.fit && shell.status != "ok");
  return measured == 0                                              ? "failed"
         : measured < static_cast<int>(listed) || weak              ? "partial"
                                                                    : "ok";
}

// A sighting: which listed view, which of its sightings.
struct Seen {
  std::size_t listed = 0;
  std::size_t index = 0;
};

std::string degrees(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.0f°", value);
  return text;
}

// "view left's CME at PA 58°"
std::string named(const ViewMeasurement& s) {
  return "view " + s.name + "'s CME at PA " + degrees(s.central_pa_deg);
}

// The median spacing of a view's frames, s.
double cadence_of(const imaging::PolarSequence& polar) {
  std::vector<double> steps;
  for (std::size_t k = 1; k < polar.utc_s.size(); ++k) steps.push_back(polar.utc_s[k] - polar.utc_s[k - 1]);
  if (steps.empty()) return 0.0;
  std::nth_element(steps.begin(), steps.begin() + std::ptrdiff_t(steps.size() / 2), steps.end());
  return steps[steps.size() / 2];
}

// A listed view as seen by one CME that it does not see: its chain's outputs, no front.
ViewMeasurement unseen(const ViewMeasurement& base, const std::string& why) {
  ViewMeasurement v = base;
  v.front = imaging::Front{};
  v.front.why_not = why;
  v.front.leading_edge_rs.assign(base.polar.frames.size(), std::vector<float>(std::size_t(base.polar.polar.pa_count),
                                                                               std::numeric_limits<float>::quiet_NaN()));
  v.by_analyst = false;
  v.points.clear();
  v.censored = {};
  v.front_contrast_sigma = v.central_pa_deg = v.track_pa_deg = kUnmeasured;
  v.kinematics.reset();
  return v;
}

// The angle between two directions (lon, lat in degrees), degrees.
double angle_between_deg(double lon1, double lat1, double lon2, double lat2) {
  const double c = std::sin(lat1 * kRadPerDeg) * std::sin(lat2 * kRadPerDeg) +
                   std::cos(lat1 * kRadPerDeg) * std::cos(lat2 * kRadPerDeg) * std::cos((lon1 - lon2) * kRadPerDeg);
  return std::acos(std::clamp(c, -1.0, 1.0)) * kDegPerRad;
}

// The primary CME: the event's source region picks the CME whose fitted direction (from
// its views, not held at the source) lies nearest it; else the earliest onset. (The
// event's window does not pick: a fast CME already in the field in the window's first
// frame is as often the one it was set for — measure_test's fast event.)
void choose_primary(const Event& event, Measurement& m) {
  m.primary = 0;  // cmes are by first sighting
  if (m.cmes.size() < 2) {
    m.primary_reason = "the only CME found";
    return;
  }
  m.primary_reason = "the earliest onset: first seen at " + imaging::iso_from_utc_seconds(m.cmes[0].first_seen_utc_s, 0);
  if (event.source_deg) {
    const auto [lon, lat] = *event.source_deg;
    int best = -1;
    double nearest = 1e9;
    for (std::size_t k = 0; k < m.cmes.size(); ++k) {
      const ShellMeasurement& shell = m.cmes[k].shell;
      if (!shell.fit || shell.direction_basis != "views") continue;
      const double d = angle_between_deg(lon, lat, shell.fit->shell.lon * kDegPerRad, shell.fit->shell.lat * kDegPerRad);
      if (d < nearest) nearest = d, best = int(k);
    }
    if (best >= 0) {
      m.primary = best;
      m.primary_reason = "the event's source region (" + degrees(lon) + ", " + degrees(lat) +
                         "): its fitted direction lies nearest it, " + degrees(nearest) + " away";
      return;
    }
  }
}

}  // namespace

Sighting sighting_of(const ViewMeasurement& s, int view) {
  Sighting sighting;
  sighting.view = view;
  sighting.central_pa_deg = s.central_pa_deg;
  sighting.width_deg = s.front.encircles ? 360.0 : s.front.width_deg;
  if (s.kinematics) sighting.law = *s.kinematics;
  sighting.cadence_s = cadence_of(s.polar);
  return sighting;
}

void measure_cmes(const Event& event, const MeasurementOptions& o, const std::vector<ViewMeasurement>& measured,
                  const std::vector<ViewSightings>& parts, Measurement& m) {
  // The sightings that saw something: a front, or the analyst's points.
  std::vector<Seen> seen;
  std::vector<Sighting> sightings;
  std::vector<int> marked;  // indices into seen: the analyst's, one CME by the analyst's word
  std::vector<imaging::Observer> observers;
  for (const ViewMeasurement& v : measured) observers.push_back(v.observer);
  std::vector<std::size_t> marked_views;
  bool marked_missed = false;  // the analyst's points lie away from the CMEs found in their view
  for (std::size_t i = 0; i < parts.size(); ++i) {
    const bool view_found = std::any_of(parts[i].sightings.begin(), parts[i].sightings.end(),
                                        [](const ViewMeasurement& s) { return s.front.found; });
    for (const ViewMeasurement& s : parts[i].sightings)
      if (s.by_analyst) marked_views.push_back(i), marked_missed = marked_missed || (view_found && !s.front.found);
  }
  for (std::size_t i = 0; i < parts.size(); ++i) {
    int found = 0;
    for (const ViewMeasurement& s : parts[i].sightings) found += s.front.found || s.by_analyst;
    for (std::size_t j = 0; j < parts[i].sightings.size(); ++j) {
      const ViewMeasurement& s = parts[i].sightings[j];
      if (!s.front.found && !s.by_analyst) continue;
      // The analyst's CME: their points, and the one CME of a view they marked nothing in
      // (the automatic track completes their measurement there, as it always did) — unless
      // their points lie away from the CMEs their view found (one the finder missed): the
      // other view's CME is then as likely another, and left to the association.
      const bool view_marked = std::find(marked_views.begin(), marked_views.end(), i) != marked_views.end();
      if (s.by_analyst || (!marked_missed && !marked_views.empty() && !view_marked && found == 1))
        marked.push_back(int(seen.size()));
      seen.push_back({i, j});
    }
  }
  // Associate the automatic sightings (fit/associate.hpp); the analyst's are one CME.
  std::vector<int> automatic;
  for (int k = 0; k < int(seen.size()); ++k)
    if (std::find(marked.begin(), marked.end(), k) == marked.end()) {
      const ViewMeasurement& s = parts[seen[std::size_t(k)].listed].sightings[seen[std::size_t(k)].index];
      Sighting sighting = sighting_of(s, parts[seen[std::size_t(k)].listed].measured);
      sighting.front = k;
      sightings.push_back(sighting);
      automatic.push_back(k);
    }
  const Association association = associate(observers, sightings);
  struct Group {
    std::vector<int> members;  // indices into seen
    std::string association;
    std::vector<int> pick;     // per listed view: the sighting it sees this CME in, −1 none
  };
  std::vector<Group> groups;
  if (!marked.empty()) groups.push_back({marked, marked.size() > 1 ? "views" : "one view", {}});
  for (const CmeGroup& g : association.cmes) {
    Group group{{}, g.one_view() ? "one view" : "views", {}};
    for (int s : g.sightings) group.members.push_back(automatic[std::size_t(s)]);
    groups.push_back(group);
  }
  for (int s : association.undecided) groups.push_back({{automatic[std::size_t(s)]}, "undecided", {}});

  // Each CME's views: its sightings; elsewhere the view's own sighting when it saw nothing
  // (its sentence says why), else its chain's outputs without a front.
  const bool several = groups.size() > 1;
  for (Group& g : groups) {
    g.pick.assign(parts.size(), -1);
    for (int k : g.members) g.pick[seen[std::size_t(k)].listed] = int(seen[std::size_t(k)].index);
    CmeMeasurement cme;
    cme.association = g.association;
    for (std::size_t i = 0; i < parts.size(); ++i) {
      const ViewSightings& part = parts[i];
      if (part.measured < 0) continue;
      const ViewMeasurement& first = part.sightings.front();
      if (g.pick[i] >= 0) cme.views.push_back(part.sightings[std::size_t(g.pick[i])]);
      else if (!first.front.found && !first.by_analyst) cme.views.push_back(first);
      else cme.views.push_back(unseen(measured[std::size_t(part.measured)], "no CME found: the CMEs this view sees are others."));
    }
    for (const ViewMeasurement& v : cme.views) {
      if (v.front.found) cme.first_seen_utc_s = std::fmin(cme.first_seen_utc_s, v.front.onset_utc_s);
      else if (v.by_analyst && !v.points.empty()) cme.first_seen_utc_s = std::fmin(cme.first_seen_utc_s, v.points.front().utc_s);
      if (v.kinematics_ok() && v.kinematics->onset.found)
        cme.onset_utc_s = std::fmin(cme.onset_utc_s, v.kinematics->onset.time_s);
    }
    m.cmes.push_back(std::move(cme));
  }
  // By first sighting, the groups' picks alongside.
  std::vector<std::size_t> order(groups.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return m.cmes[a].first_seen_utc_s < m.cmes[b].first_seen_utc_s;
  });
  {
    std::vector<CmeMeasurement> cmes;
    std::vector<Group> sorted;
    for (std::size_t k : order) cmes.push_back(std::move(m.cmes[k])), sorted.push_back(groups[k]);
    m.cmes = std::move(cmes);
    groups = std::move(sorted);
  }
  for (std::size_t k = 0; k < m.cmes.size(); ++k) m.cmes[k].index = int(k) + 1;

  int measured_count = 0;
  for (const ViewSightings& part : parts) measured_count += part.measured >= 0;
  std::vector<std::string>& problems = m.problems;
  const auto said_once = [](std::vector<std::string>& sentences) {
    for (size_t i = 0; i < sentences.size(); ++i)
      for (size_t j = sentences.size(); j-- > i + 1;)
        if (sentences[j] == sentences[i]) sentences.erase(sentences.begin() + static_cast<std::ptrdiff_t>(j));
  };
  // A view's sentences about the sighting a CME uses there (its own when it saw nothing).
  const auto sighting_sentences = [&](std::size_t i, const Group* g) -> const std::vector<std::string>* {
    const ViewSightings& part = parts[i];
    if (part.measured < 0) return nullptr;
    if (g && g->pick[i] >= 0) return &part.sighting_problems[std::size_t(g->pick[i])];
    const ViewMeasurement& first = part.sightings.front();
    return !first.front.found && !first.by_analyst ? &part.sighting_problems.front() : nullptr;
  };

  if (!several) {
    // One CME (or none): the one-CME measurement, its sentences in the order they always came.
    const Group* g = groups.empty() ? nullptr : &groups.front();
    for (std::size_t i = 0; i < parts.size(); ++i) {
      problems.insert(problems.end(), parts[i].problems.begin(), parts[i].problems.end());
      if (const auto* own = sighting_sentences(i, g)) problems.insert(problems.end(), own->begin(), own->end());
      if (!g && parts[i].measured >= 0) m.views.push_back(parts[i].sightings.front());
    }
    if (g) m.views = m.cmes.front().views;
    m.shell = measure_shell(m.views, event.source_deg, o.apex_law, problems);
    said_once(problems);
    m.status = status_of(measured_count, event.views.size(), m.shell);
    if (g) {
      CmeMeasurement& cme = m.cmes.front();
      cme.shell = m.shell;
      cme.status = m.status;
      cme.problems = problems;
      choose_primary(event, m);
    }
    return;
  }

  // Several CMEs: the views' own sentences (and those of a view that saw none), then each
  // CME's, prefixed.
  for (std::size_t i = 0; i < parts.size(); ++i) {
    problems.insert(problems.end(), parts[i].problems.begin(), parts[i].problems.end());
    if (const auto* own = sighting_sentences(i, nullptr)) problems.insert(problems.end(), own->begin(), own->end());
  }
  bool weak = false;
  for (std::size_t k = 0; k < m.cmes.size(); ++k) {
    CmeMeasurement& cme = m.cmes[k];
    for (std::size_t i = 0; i < parts.size(); ++i)
      if (parts[i].measured >= 0 && groups[k].pick[i] >= 0) {
        const auto& own = parts[i].sighting_problems[std::size_t(groups[k].pick[i])];
        cme.problems.insert(cme.problems.end(), own.begin(), own.end());
      }
    // Its shell over its own views' points only: never another CME's.
    std::vector<ViewMeasurement> own;
    for (const ViewMeasurement& v : cme.views)
      if (v.front.found || v.by_analyst) own.push_back(v);
    if (cme.association == "one view" && measured_count > 1)
      cme.problems.push_back("seen by view " + own.front().name +
                             " only: no other view's CME pairs with it in direction and timing, so its direction rests "
                             "on that view alone.");
    if (cme.association == "undecided")
      cme.problems.push_back("seen by view " + own.front().name +
                             "; which CME of the other views it is could not be decided (see the candidate pairings), "
                             "so it is measured from this view alone.");
    cme.shell = measure_shell(own, event.source_deg, o.apex_law, cme.problems);
    said_once(cme.problems);
    cme.status = status_of(measured_count, event.views.size(), cme.shell);
    if (cme.association != "views" && measured_count > 1) cme.status = "partial";
    weak = weak || cme.status != "ok";
    for (const std::string& p : cme.problems) problems.push_back("CME " + std::to_string(cme.index) + ": " + p);
  }
  if (!association.decided) {
    // The candidate pairings, named: never guessed.
    std::string text = "which CME is which across views could not be decided; the candidate pairings are ";
    for (std::size_t c = 0; c < association.candidates.size(); ++c) {
      text += c == 0 ? "" : (c + 1 == association.candidates.size() ? " or " : "; ");
      std::string grouping;
      for (const CmeGroup& g : association.candidates[c]) {
        std::string members;
        for (int s : g.sightings) {
          const Seen& at = seen[std::size_t(automatic[std::size_t(s)])];
          members += (members.empty() ? "" : " with ") + named(parts[at.listed].sightings[at.index]);
        }
        grouping += (grouping.empty() ? "" : ", ") + ("{" + members + "}");
      }
      text += grouping;
    }
    problems.push_back(text + ".");
    weak = true;
  }
  said_once(problems);
  m.status = measured_count == 0 ? "failed" : (measured_count < int(event.views.size()) || weak) ? "partial" : "ok";
  choose_primary(event, m);
  m.views = m.cmes[std::size_t(m.primary)].views;
  m.shell = m.cmes[std::size_t(m.primary)].shell;
}

void make_arrival(const Event& event, const MeasurementOptions& o, Measurement& m, CmeMeasurement& cme) {
  if (!cme.shell.arrival_withheld.empty() || !cme.shell.boundary) return;
  // From the fit's boundary values and covariance as result.json holds them
  // (fit/arrival_json): model estimates with stated uncertainty.
  Measurement one;
  one.event_id = m.event_id;
  one.views = cme.views;
  one.shell = cme.shell;
  try {
    const ArrivalInput arrival_in = read_arrival_input(result_json(one), o.result_name);
    const ForecastSettings settings =
        read_forecast_block(event.forecast, arrival_in.launch.boundary_utc_s, event.path.string());
    m.ensemble = EnsembleOptions{};
    m.ensemble.priors = settings.priors;
    cme.arrivals = forecast_arrivals(arrival_in.launch, arrival_in.covariance, settings.targets, m.ensemble);
    cme.arrival_made = true;
  } catch (const imaging::InputError& e) {
    const std::string sentence = std::string("no arrival estimate: ") + e.what();
    cme.problems.push_back(sentence);
    m.problems.push_back(m.cmes.size() > 1 ? "CME " + std::to_string(cme.index) + ": " + sentence : sentence);
  }
}

}  // namespace occulta::fit
