// fit/measurement.cpp — the measurement per view and over the event (measurement.hpp);
// the shell over the views is measurement_shell.cpp.
#include "fit/measurement.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <future>

#include "fit/arrival_json.hpp"
#include "fit/json_file.hpp"
#include "fit/measurement_cmes.hpp"
#include "fit/measurement_shell.hpp"
#include "fit/result_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/chain.hpp"
#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
namespace fs = std::filesystem;

namespace {

void report(const MeasurementProgressCallback& progress, MeasurementStage stage, const std::string& view, int view_index,
            int view_count, int frame = 0, int frame_count = 0) {
  if (progress) progress({stage, view, view_index, view_count, frame, frame_count});
}

// A view's imaging as a measured view: the chain's outputs, no CME yet; its sentences go
// to `problems`.
ViewMeasurement measure_view(const ViewImaging& imaged, std::vector<std::string>& problems) {
  ViewMeasurement m;
  m.name = imaged.name;
  m.observer = imaged.observer;
  m.grid = imaged.grid;
  m.polar = imaged.polar;
  m.frames_used = imaged.frames_used;
  for (const auto& p : imaged.problems) problems.push_back("view " + m.name + ": " + p);
  return m;
}

// One CME in a measured view: its front (not found when the view has analyst points only
// for it), the points (the analyst's `analyst` when not empty, else the automatic track
// under `ceiling`, imaging::ceiling_under), the height–time fit. Sentences go to `problems`.
void measure_sighting(ViewMeasurement& m, const imaging::Front& found, const std::vector<TrackPoint>& analyst,
                      const std::vector<double>& ceiling, std::vector<std::string>& problems) {
  const imaging::PolarSequence& polar = m.polar;
  m.front = found;
  const imaging::Front& front = m.front;

  // The points: the analyst's for this view when given, else the automatic track. Either
  // way only edges inside the field count: one at or beyond the field stop, at a data
  // gap or behind the occulter is censored (imaging/front.hpp TrackCensoring), counted
  // and left out (issue 11).
  std::vector<TrackPoint>& points = m.points;
  imaging::TrackCensoring& censored = m.censored;
  const double step_rs = polar.polar.height_step_rs;
  for (const TrackPoint& p : analyst) {
    m.by_analyst = true;
    int frame = -1;  // the frame the point was marked on (within a second)
    for (std::size_t k = 0; k < polar.utc_s.size(); ++k)
      if (std::abs(polar.utc_s[k] - p.utc_s) < 1.0) frame = int(k);
    std::string why;
    if (frame >= 0 && !imaging::height_measurable(polar, frame, p.pa_deg, p.height_rs, step_rs, why)) {
      if (why == "at the field stop") ++censored.at_field_stop;
      else if (why == "at a data gap") ++censored.at_data_gap;
      else ++censored.behind_occulter;
      continue;
    }
    points.push_back(p);
  }
  // The automatic track follows the front where it reaches highest (the leading edge an
  // analyst measures — common practice), not the middle of the span.
  std::vector<imaging::TrackPoint> auto_track;
  if (!m.by_analyst && front.found) {
    auto_track = imaging::follow_track(polar, front.outermost_pa_deg, front.onset_frame, {}, &censored, ceiling);
    for (const imaging::TrackPoint& p : auto_track) points.push_back({m.name, p.utc_s, p.pa_deg, p.height_rs, "auto"});
  }
  // How far above the noise the front stood: the largest band-median running difference
  // on the automatic track, in σ (imaging/front.hpp; the track caps it at 50) — what a
  // detection limit is stated in.
  if (!auto_track.empty()) {
    double contrast = 0.0;
    for (const imaging::TrackPoint& p : auto_track) contrast = std::max(contrast, p.sigma);
    m.front_contrast_sigma = contrast;
  }

  if (front.found) {
    m.central_pa_deg = front.central_pa_deg;
  } else {
    problems.push_back("view " + m.name + ": " + front.why_not);
  }
  if (m.by_analyst && !front.found) {
    double sum_sin = 0.0, sum_cos = 0.0;  // mean direction of the analyst's PAs
    for (const auto& p : points) sum_sin += std::sin(p.pa_deg * kRadPerDeg), sum_cos += std::cos(p.pa_deg * kRadPerDeg);
    m.central_pa_deg = std::fmod(std::atan2(sum_sin, sum_cos) * kDegPerRad + 360.0, 360.0);
  }

  if (points.size() >= 2) {
    std::vector<HeightTimePoint> ht;
    for (const auto& p : points) ht.push_back({p.utc_s, p.height_rs, 0.0});
    // Robust (Huber) fits, linear unless a quadratic is substantially better (AICc). The
    // scale's floor: the height grid's rounding, Δ/√12 (kinematics.hpp).
    const double resolution_rs = step_rs / std::sqrt(12.0);
    HeightTimeFit chosen = choose_height_time_model(ht, true, 2.0, resolution_rs).chosen;
    if (chosen.status == FitStatus::ok && !auto_track.empty()) {
      // The leading edge's definition: the track's band edge (edge_fraction of its peak)
      // against the front's outer threshold edge in the same PA column, frame by frame,
      // both inside the field; half their laws' difference joins the σ (kinematics.hpp).
      const int column = int(std::lround(front.outermost_pa_deg / polar.polar.pa_step_deg)) % polar.polar.pa_count;
      std::vector<HeightTimePoint> outer;
      for (const imaging::TrackPoint& p : auto_track) {
        const float h = front.leading_edge_rs[std::size_t(p.frame)][std::size_t(column)];
        std::string why;
        if (std::isfinite(h) && imaging::height_measurable(polar, p.frame, p.pa_deg, h,
                                                           imaging::FrontOptions{}.outer_margin_rs + step_rs, why))
          outer.push_back({p.utc_s, double(h), 0.0});
      }
      const HeightTimeFit other = fit_height_time(outer, {chosen.model, true, resolution_rs});
      add_definition_spread(chosen, other);
    }
    if (chosen.status == FitStatus::ok) {
      if (!chosen.sigmas_known)
        problems.push_back(m.name + ": no σ for the sky speed and onset: " + chosen.problem + ".");
    } else {
      problems.push_back("view " + m.name + ": the height–time fit failed: " + chosen.problem);
    }
    m.kinematics = std::move(chosen);
  } else if (front.found || m.by_analyst) {
    problems.push_back("view " + m.name + ": too few leading-edge points for a height–time fit.");
  }
  if (!points.empty()) m.track_pa_deg = points.front().pa_deg;
}

// How far outside a front's PA span the mean PA of the analyst's points may lie and still
// be that front's: the association's PA tolerance (fit/associate.hpp, 20°), our choice.
constexpr double kMarkedNearFrontDeg = 20.0;

// The circular mean of the points' PAs, in [0°, 360°).
double mean_pa_deg(const std::vector<TrackPoint>& points) {
  double sum_sin = 0.0, sum_cos = 0.0;
  for (const TrackPoint& p : points) sum_sin += std::sin(p.pa_deg * kRadPerDeg), sum_cos += std::cos(p.pa_deg * kRadPerDeg);
  return std::fmod(std::atan2(sum_sin, sum_cos) * kDegPerRad + 360.0, 360.0);
}

// Whether a PA lies within a front's span widened by `margin_deg` on each side.
bool within_span(const imaging::Front& front, double pa_deg, double margin_deg) {
  if (front.encircles) return true;
  const double span = std::fmod(front.pa_to_deg - front.pa_from_deg + 720.0, 360.0) + 2.0 * margin_deg;
  return span >= 360.0 || std::fmod(pa_deg - (front.pa_from_deg - margin_deg) + 720.0, 360.0) <= span;
}

// Every CME a measured view sees: one sighting per front, each tracked under the other
// fronts above it (imaging::ceiling_under). The analyst's points for the view go to the
// front nearest their mean PA (and replace its automatic track) when that mean lies within
// the front's span (± kMarkedNearFrontDeg); else they are a CME the finder missed and stand
// alone, as they do when the view found none. A view that sees nothing keeps one sighting
// without a front.
void find_sightings(const ViewMeasurement& v, const imaging::FrontSet& set, const Track* analyst, ViewSightings& part) {
  std::vector<TrackPoint> marked;
  if (analyst)
    for (const TrackPoint& p : analyst->points)
      if (p.view == v.name) marked.push_back(p);
  std::vector<const imaging::Front*> fronts;
  for (const imaging::Front& f : set.fronts) fronts.push_back(&f);
  const std::size_t marked_at = marked_front(fronts, marked).value_or(set.fronts.size());
  const auto add = [&](const imaging::Front& front, const std::vector<TrackPoint>& points,
                       const std::vector<double>& ceiling) {
    ViewMeasurement sighting = v;
    part.sighting_problems.emplace_back();
    measure_sighting(sighting, front, points, ceiling, part.sighting_problems.back());
    part.sightings.push_back(std::move(sighting));
  };
  if (set.fronts.empty()) {
    imaging::Front none;
    none.why_not = set.why_none;
    none.leading_edge_rs.assign(v.polar.frames.size(), std::vector<float>(std::size_t(v.polar.polar.pa_count),
                                                                          std::numeric_limits<float>::quiet_NaN()));
    add(none, marked, {});
    return;
  }
  for (std::size_t f = 0; f < set.fronts.size(); ++f) {
    std::vector<const imaging::Front*> others;
    for (std::size_t q = 0; q < set.fronts.size(); ++q)
      if (q != f) others.push_back(&set.fronts[q]);
    const imaging::Front& front = set.fronts[f];
    add(front, f == marked_at ? marked : std::vector<TrackPoint>{},
        imaging::ceiling_under(front, others, v.polar, front.outermost_pa_deg));
  }
  if (!marked.empty() && marked_at == set.fronts.size()) {
    // A CME the finder missed, by the analyst's word: their points, no front.
    imaging::Front none;
    const double mean_pa = mean_pa_deg(marked);
    char why[160];
    std::snprintf(why, sizeof why,
                  "no CME found along the analyst's points (mean PA %.0f°): they are measured as a CME of their own.",
                  mean_pa);
    none.why_not = why;
    none.leading_edge_rs.assign(v.polar.frames.size(), std::vector<float>(std::size_t(v.polar.polar.pa_count),
                                                                          std::numeric_limits<float>::quiet_NaN()));
    add(none, marked, {});
  }
}

// The doubtful chains of each view (imaging/front.hpp FrontSet::doubtful) that another
// view's CME explains (fit/associate.hpp doubtful_stands_alone) become CMEs of their own:
// the view's fronts are found again keeping them, and its sightings made again. The rest
// stay the fronts' wake. Weighed against the firm sightings of all views, once.
void keep_doubtful(const std::vector<ViewMeasurement>& measured, std::vector<imaging::FrontSet>& sets,
                   std::vector<ViewSightings>& parts) {
  std::vector<imaging::Observer> observers;
  for (const ViewMeasurement& v : measured) observers.push_back(v.observer);
  std::vector<Sighting> firm;
  for (const ViewSightings& part : parts)
    for (const ViewMeasurement& s : part.sightings)
      if (part.measured >= 0 && s.front.found) firm.push_back(sighting_of(s, part.measured));
  for (std::size_t i = 0; i < parts.size(); ++i) {
    if (parts[i].measured < 0 || sets[i].doubtful.empty()) continue;
    const ViewMeasurement& v = measured[std::size_t(parts[i].measured)];
    std::vector<const imaging::Front*> fronts;
    for (const imaging::Front& f : sets[i].fronts) fronts.push_back(&f);
    std::vector<int> keep;
    for (std::size_t d = 0; d < sets[i].doubtful.size(); ++d) {
      const imaging::Front& chain = sets[i].doubtful[d];
      ViewMeasurement seen = v;
      std::vector<std::string> unused;
      measure_sighting(seen, chain, {}, imaging::ceiling_under(chain, fronts, v.polar, chain.outermost_pa_deg), unused);
      if (seen.kinematics_ok() && doubtful_stands_alone(observers, firm, sighting_of(seen, parts[i].measured)))
        keep.push_back(int(d));
    }
    if (keep.empty()) continue;
    sets[i] = imaging::find_fronts(v.polar, {}, keep);
    parts[i].sightings.clear();
    parts[i].sighting_problems.clear();
    find_sightings(v, sets[i], nullptr, parts[i]);
  }
}

// One view's fronts and its sightings (find_fronts, find_sightings): what a view's
// measurement needs of no other view, so it may run on any thread as soon as the view's
// imaging is done.
struct ViewFronts {
  imaging::FrontSet set;
  ViewSightings part;  // sightings and sighting_problems only
};

ViewFronts find_view_fronts(const ViewMeasurement& v, const Track* analyst) {
  ViewFronts found;
  found.set = imaging::find_fronts(v.polar);
  find_sightings(v, found.set, analyst, found.part);
  return found;
}

// A measured view (measure_view) of a usable view's imaging, with the frames the window
// left out; the chain's sentences go to `problems`.
ViewMeasurement measured_view(const ViewImaging& imaged, const WindowSplit& split, std::vector<std::string>& problems) {
  ViewMeasurement v = measure_view(imaged, problems);
  v.frames_outside_window = split.outside;
  return v;
}

}  // namespace

const char* to_string(MeasurementStage stage) {
  switch (stage) {
    case MeasurementStage::chain: return "chain";
    case MeasurementStage::front: return "front";
    case MeasurementStage::kinematics: return "kinematics";
    case MeasurementStage::shell: return "shell";
    case MeasurementStage::arrival: return "arrival";
    case MeasurementStage::done: return "done";
  }
  return "?";
}

MeasurementInput load_measurement_input(const fs::path& input, const fs::path& track_file) {
  MeasurementInput in;
  in.from_folder = fs::is_directory(input);
  if (!in.from_folder)
    require_kind(read_json_file(input), "event", input.string(), "`measure` needs an event file or a folder of frames");
  in.event = in.from_folder ? event_from_folder(input) : read_event(input);
  if (!track_file.empty()) {
    in.analyst = read_track(track_file);
    in.track_file = track_file;
  }
  // The event's window, from each frame's header time; the frames' spans check the track
  // (without a window or a track no header is read here). Each view's headers are read on
  // a thread of its own but the first's, which are read on this one: a header read
  // touches only its own file.
  const bool with_span = in.analyst.has_value();
  std::vector<std::future<WindowSplit>> later;
  for (std::size_t i = 1; i < in.event.views.size(); ++i)
    later.push_back(std::async(std::launch::async, apply_window, std::cref(in.event), std::cref(in.event.views[i]),
                               with_span));
  if (!in.event.views.empty()) in.windows.push_back(apply_window(in.event, in.event.views.front(), with_span));
  for (std::future<WindowSplit>& split : later) in.windows.push_back(split.get());
  std::vector<ViewSpan> spans;
  for (std::size_t i = 0; i < in.event.views.size(); ++i)
    spans.push_back({in.event.views[i].name, in.windows[i].first_utc_s, in.windows[i].last_utc_s});
  if (in.analyst) check_track_matches(*in.analyst, track_file.string(), in.event.id, spans);
  return in;
}

ViewImaging image_view(const std::string& name, const std::vector<fs::path>& files, const imaging::ChainOptions& chain,
                       const std::function<void(const imaging::ChainFrame&)>& each_frame,
                       const std::optional<fs::path>& scratch_dir) {
  ViewImaging v;
  v.name = name;
  v.files = files;
  imaging::PolarSequence& polar = v.polar;
  if (scratch_dir) polar.frames = imaging::PolarFrames::in_file(*scratch_dir);
  const imaging::ViewRun run = imaging::run_view(name, files, chain, [&](const imaging::ChainFrame& f) {
    v.observer = f.frame.geometry.observer;
    polar.utc_s.push_back(f.frame.utc_s);
    // The chain's image is valid during the call only: in memory a copy is kept, a file
    // takes its bytes now.
    polar.frames.push_back(polar.frames.in_memory() ? f.polar_running.clone() : f.polar_running);
    if (each_frame) each_frame(f);
  });
  polar.polar = run.polar;
  v.grid = run.grid;
  v.radii = run.radii;
  v.frames_used = run.frames_used;
  v.problems = run.problems;
  return v;
}

namespace {

// View i's imaging as image_event makes it (progress: its chain stage).
ViewImaging image_event_view(const MeasurementInput& in, const MeasurementOptions& o, std::size_t i,
                             const MeasurementProgressCallback& progress) {
  const Event& event = in.event;
  const int view_count = static_cast<int>(event.views.size());
  const EventView& listed = event.views[i];
  const WindowSplit& split = in.windows[i];
  ViewImaging v;
  v.name = listed.name;
  if (listed.files.empty()) {
    v.unusable = "view " + listed.name + ": no files match " + listed.globs.front() + ".";
    return v;
  }
  if (split.inside.empty()) {
    v.unusable = "view " + listed.name + ": none of its " + std::to_string(split.outside.size()) +
                 " frames lies in the event's window " + imaging::iso_from_utc_seconds((*event.window_s)[0], 3) +
                 " to " + imaging::iso_from_utc_seconds((*event.window_s)[1], 3) + ".";
    return v;
  }
  const int view_index = static_cast<int>(i), frame_count = static_cast<int>(split.inside.size());
  report(progress, MeasurementStage::chain, listed.name, view_index, view_count, 0, frame_count);
  int frames = 0;
  try {
    v = image_view(listed.name, split.inside, chain_options(event, listed, o.median), [&](const imaging::ChainFrame&) {
      report(progress, MeasurementStage::chain, listed.name, view_index, view_count, ++frames, frame_count);
    }, o.polar_scratch_dir);
  } catch (const imaging::InputError& e) {
    v.unusable = "view " + listed.name + ": " + e.what();
  }
  return v;
}

// measure_imaged, given the views' fronts where they were started already (a valid
// future per view; the others are found here).
Measurement measure_imaged_with(const MeasurementInput& in, const std::vector<ViewImaging>& imaged,
                                const MeasurementOptions& o, const MeasurementProgressCallback& progress,
                                std::vector<std::future<ViewFronts>> started);

}  // namespace

std::vector<ViewImaging> image_event(const MeasurementInput& in, const MeasurementOptions& o,
                                     const MeasurementProgressCallback& progress) {
  if (o.checksum_policy) imaging::set_checksum_policy(*o.checksum_policy);
  std::vector<ViewImaging> imaged;
  for (std::size_t i = 0; i < in.event.views.size(); ++i) imaged.push_back(image_event_view(in, o, i, progress));
  return imaged;
}

Measurement measure_imaged(const MeasurementInput& in, const std::vector<ViewImaging>& imaged,
                           const MeasurementOptions& o, const MeasurementProgressCallback& progress) {
  return measure_imaged_with(in, imaged, o, progress, std::vector<std::future<ViewFronts>>(in.event.views.size()));
}

namespace {

Measurement measure_imaged_with(const MeasurementInput& in, const std::vector<ViewImaging>& imaged,
                                const MeasurementOptions& o, const MeasurementProgressCallback& progress,
                                std::vector<std::future<ViewFronts>> started) {
  const Event& event = in.event;
  Measurement m;
  m.event_id = event.id;
  m.options = o;
  m.track_file = in.track_file;
  if (!in.from_folder) m.inputs.push_back(event.path);
  if (in.analyst && !in.track_file.empty()) m.inputs.push_back(in.track_file);

  // Per listed view: the chain, then each CME it sees (measurement_cmes.hpp).
  const int view_count = static_cast<int>(event.views.size());
  std::vector<ViewSightings> parts(event.views.size());
  std::vector<imaging::FrontSet> sets(event.views.size());  // each view's fronts (imaging/front.hpp)
  std::vector<ViewMeasurement> measured;  // the chain's outputs, no CME yet
  bool frames_skipped = false;  // a frame in the window the chain could not use (cut short, a duplicate…)
  for (std::size_t i = 0; i < event.views.size(); ++i) {
    const WindowSplit& split = in.windows[i];
    ViewSightings& part = parts[i];
    m.inputs.insert(m.inputs.end(), split.inside.begin(), split.inside.end());
    if (!imaged[i].unusable.empty()) {
      part.problems.push_back(imaged[i].unusable);
      continue;
    }
    ViewMeasurement v = measured_view(imaged[i], split, part.problems);
    frames_skipped = frames_skipped || v.frames_used < static_cast<int>(imaged[i].files.size());
    part.measured = static_cast<int>(measured.size());
    measured.push_back(std::move(v));
  }
  // Each view's fronts and tracks need nothing of another view's, so the views are
  // worked side by side: those not started already (measure_event starts each as its
  // imaging ends) each on a thread of its own but the first, which runs on this one
  // (find_fronts and find_sightings read the view's frames and write only its own
  // result; PolarFrames reads are safe from several threads). Each view's result is the
  // same on any thread; the progress reports stay on this thread, in view order.
  const Track* analyst = in.analyst ? &*in.analyst : nullptr;
  std::vector<std::size_t> found_views;  // event view indices with a measured view
  for (std::size_t i = 0; i < parts.size(); ++i)
    if (parts[i].measured >= 0) found_views.push_back(i);
  std::size_t here = parts.size();  // the view found on this thread
  for (const std::size_t i : found_views) {
    if (started[i].valid()) continue;
    if (here == parts.size()) here = i;
    else started[i] = std::async(std::launch::async, find_view_fronts, std::cref(measured[std::size_t(parts[i].measured)]), analyst);
  }
  for (const std::size_t i : found_views) {
    const std::string& name = measured[std::size_t(parts[i].measured)].name;
    report(progress, MeasurementStage::front, name, static_cast<int>(i), view_count);
    ViewFronts found = i == here ? find_view_fronts(measured[std::size_t(parts[i].measured)], analyst) : started[i].get();
    sets[i] = std::move(found.set);
    parts[i].sightings = std::move(found.part.sightings);
    parts[i].sighting_problems = std::move(found.part.sighting_problems);
    report(progress, MeasurementStage::kinematics, name, static_cast<int>(i), view_count);
  }
  if (!in.analyst) keep_doubtful(measured, sets, parts);

  report(progress, MeasurementStage::shell, "", -1, view_count);
  measure_cmes(event, o, measured, parts, m);
  // A skipped frame (the chain named it among the problems) leaves the result partial.
  if (frames_skipped) {
    if (m.status == "ok") m.status = "partial";
    for (CmeMeasurement& cme : m.cmes)
      if (cme.status == "ok") cme.status = "partial";
  }

  report(progress, MeasurementStage::arrival, "", -1, view_count);
  for (CmeMeasurement& cme : m.cmes) make_arrival(event, o, m, cme);
  if (!m.cmes.empty()) {
    const CmeMeasurement& primary = m.cmes[std::size_t(m.primary)];
    m.arrival_made = primary.arrival_made;
    m.arrivals = primary.arrivals;
  }
  report(progress, MeasurementStage::done, "", -1, view_count);
  return m;
}

}  // namespace

Measurement measure_event(const MeasurementInput& in, const MeasurementOptions& o,
                          const MeasurementProgressCallback& progress) {
  // image_event, then measure_imaged, but each view's fronts start on a thread of their
  // own as soon as its imaging is done, beside the next views' imaging (whose start — the
  // headers, the occulter radii, the polar sampling — leaves a core free). The results
  // are measure_imaged's: the same function finds them from the same imaging.
  if (o.checksum_policy) imaging::set_checksum_policy(*o.checksum_policy);
  const Track* analyst = in.analyst ? &*in.analyst : nullptr;
  std::vector<ViewImaging> imaged;
  std::vector<std::future<ViewFronts>> started(in.event.views.size());
  for (std::size_t i = 0; i < in.event.views.size(); ++i) {
    imaged.push_back(image_event_view(in, o, i, progress));
    if (!imaged.back().unusable.empty() || i + 1 == in.event.views.size()) continue;  // the last is found beside none
    std::vector<std::string> unused;  // measure_imaged_with says the chain's sentences
    started[i] = std::async(std::launch::async, [v = measured_view(imaged.back(), in.windows[i], unused), analyst] {
      return find_view_fronts(v, analyst);
    });
  }
  return measure_imaged_with(in, imaged, o, progress, std::move(started));
}

Measurement measure_event(const fs::path& event_or_folder, const fs::path& track_file, const MeasurementOptions& options,
                          const MeasurementProgressCallback& progress) {
  return measure_event(load_measurement_input(event_or_folder, track_file), options, progress);
}

std::optional<std::size_t> marked_front(const std::vector<const imaging::Front*>& fronts,
                                        const std::vector<TrackPoint>& marked) {
  if (fronts.empty() || marked.empty()) return std::nullopt;
  const double mean_pa = mean_pa_deg(marked);
  std::size_t nearest = 0;
  double distance = 1e9;
  for (std::size_t f = 0; f < fronts.size(); ++f) {
    const double d = std::abs(std::remainder(fronts[f]->central_pa_deg - mean_pa, 360.0));
    if (d < distance) distance = d, nearest = f;
  }
  if (!within_span(*fronts[nearest], mean_pa, kMarkedNearFrontDeg)) return std::nullopt;
  return nearest;
}

Track used_track(const Measurement& m) {
  Track used{m.event_id, {}};
  for (const ViewMeasurement& v : m.views) used.points.insert(used.points.end(), v.points.begin(), v.points.end());
  return used;
}

}  // namespace occulta::fit
