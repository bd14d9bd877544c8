// app/measure_pictures.cpp — see measure_pictures.hpp.
#include "app/measure_pictures.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdio>
#include <exception>
#include <functional>
#include <mutex>
#include <thread>
#include <vector>

#include "app/quicklook.hpp"
#include "imaging/polar.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// Quicklook: the time–height map at the track's PA with the track points (yellow rings)
// and the fitted law (red) drawn over it, on UTC time and height axes.
void draw_time_height(const imaging::PolarSequence& polar, double pa_deg, const std::vector<fit::TrackPoint>& points,
                      const fit::HeightTimeFit* fit, const std::string& caption, const fs::path& path) {
  const imaging::TimeMap th = imaging::time_height(polar, pa_deg, 2.0);
  const double t0 = polar.utc_s.front(), t1 = polar.utc_s.back();
  const int columns = std::max<int>(360, int(polar.utc_s.size()) * 16);
  QuicklookPanel panel{Plane::time_height, imaging::render_on_time_axis(th, t0, t1, columns),
                       viewer::time_map_extent(th, t0, t1), sigma_scale(4.0, "running difference (σ)"), caption, {}, {}};
  Overlay track{Overlay::Shape::rings, {}, kPointMark, "track points"};
  for (const fit::TrackPoint& p : points) track.points.push_back({p.utc_s, p.height_rs});
  if (!track.points.empty()) panel.overlays.push_back(std::move(track));
  if (fit && fit->status == fit::FitStatus::ok) {
    char label[96];
    std::snprintf(label, sizeof label, "fitted law (%s, %.0f km/s on the sky)", fit::to_string(fit->model),
                  fit->law.speed_km_s);
    Overlay law{Overlay::Shape::line, {}, kFitMark, label};
    for (int k = 0; k <= 100; ++k) {
      const double t = t0 + (t1 - t0) * k / 100.0;
      law.points.push_back({t, fit->law.height_at(t)});
    }
    panel.overlays.push_back(std::move(law));
  }
  write_quicklook(path, {&panel, 1});
}

// Quicklook: the last running difference of the CME with its leading edge (yellow) and
// the two PAs that bound it (green), north up, on axes in R☉ about Sun centre.
void draw_front(const cv::Mat& difference, const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar,
                const imaging::Front& front, int frame, const std::string& caption, const fs::path& path) {
  QuicklookPanel panel{Plane::sky, difference, viewer::sky_extent(grid), sigma_scale(4.0, "running difference (σ)"),
                       caption, polar_radii(polar), {}};
  if (front.found) {
    const double outer = polar.height_rs(polar.height_count - 1);
    Overlay span{Overlay::Shape::line, {}, kSpanMark, "PA span"};
    for (const double pa : {front.pa_from_deg, front.pa_to_deg}) {
      span.points.push_back(sky_point(pa, polar.height_rs(0)));
      span.points.push_back(sky_point(pa, outer));
      span.points.push_back({NAN, NAN});
    }
    Overlay edge{Overlay::Shape::dots, {}, kPointMark, "leading edge"};
    if (frame >= 0 && frame < int(front.leading_edge_rs.size()))
      for (int c = 0; c < polar.pa_count; ++c) {
        const float h = front.leading_edge_rs[frame][c];
        if (std::isfinite(h)) edge.points.push_back(sky_point(polar.pa_deg(c), h));
      }
    panel.overlays.push_back(std::move(edge));
    panel.overlays.push_back(std::move(span));
  }
  write_quicklook(path, {&panel, 1});
}

// Quicklook: three running differences (first, middle and last frame with points) with
// the fitted shell's outline (cyan: its largest sky height per 1° of PA) and the points
// the fit used there (yellow), north up, side by side on axes in R☉ about Sun centre.
void draw_shell(const fit::ViewMeasurement& v, const PolarToCartesian& remap, const fit::ShellFit& fit,
                const std::vector<fit::EdgePoint>& points, int view_index, const fs::path& path) {
  std::vector<int> frames;
  for (std::size_t k = 0; k < v.polar.utc_s.size(); ++k)
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - v.polar.utc_s[k]) < 1.0) {
        frames.push_back(static_cast<int>(k));
        break;
      }
  if (frames.empty()) return;
  const std::vector<int> shown = {frames.front(), frames[frames.size() / 2], frames.back()};
  std::vector<QuicklookPanel> panels;
  for (const int k : shown) {
    const double t = v.polar.utc_s[static_cast<std::size_t>(k)];
    const fit::ShellParams shell = fit::shell_at(fit, t);
    const fit::SkyOutline outline = fit::sky_outline(fit::make_mesh(shell, {16, 96, 72}), shell, v.observer, 1.0);
    char title[160];
    std::snprintf(title, sizeof title, "%s · %s UTC · apex %.1f R☉", v.name.c_str(),
                  imaging::iso_from_utc_seconds(t, 0).substr(11, 5).c_str(), shell.apex_height_rs);
    QuicklookPanel panel{Plane::sky,
                         cartesian_from_polar(v.polar.frames[static_cast<std::size_t>(k)], remap),
                         viewer::sky_extent(v.grid),
                         sigma_scale(4.0, "running difference (σ)"),
                         title,
                         polar_radii(v.polar.polar),
                         {}};
    Overlay fitted{Overlay::Shape::dots, {}, kPointMark, "points fitted"};
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - t) < 1.0) fitted.points.push_back(sky_point(p.pa_deg, p.height_rs));
    // The outline through the middle of each PA bin, around through north, broken where a
    // bin has no height.
    Overlay edge{Overlay::Shape::line, {}, kShellMark, "shell outline"};
    const std::size_t bins = outline.max_height_rs.size();
    for (std::size_t b = 0; b <= bins && bins > 0; ++b) {
      const double h = outline.max_height_rs[b % bins];
      edge.points.push_back(std::isfinite(h) ? sky_point((double(b % bins) + 0.5) * outline.bin_deg, h)
                                             : viewer::DataPoint{NAN, NAN});
    }
    panel.overlays.push_back(std::move(fitted));
    panel.overlays.push_back(std::move(edge));
    panels.push_back(std::move(panel));
  }
  write_quicklook(path, panels, v.name + ": the fitted shell's outline over three running differences, with the points it fits");
}

void draw_time_height_of(const fit::ViewMeasurement& v, const fs::path& dir) {
  const double pa = !v.points.empty()                        ? v.track_pa_deg
                    : std::isfinite(v.central_pa_deg) ? v.central_pa_deg
                                                               : 0.0;
  char caption[200];
  std::snprintf(caption, sizeof caption, "%s · time–height along PA %.0f° (median over ±2°) · %s track",
                v.name.c_str(), pa, v.by_analyst ? "the analyst's" : "automatic");
  draw_time_height(v.polar, pa, v.points, v.kinematics ? &*v.kinematics : nullptr, caption, dir / "time_height.png");
}

void draw_front_of(const fit::ViewMeasurement& v, const PolarToCartesian& remap, const fs::path& dir) {
  const imaging::PolarSequence& polar = v.polar;
  const int last = int(polar.frames.size()) - 1;
  const int shown = v.front.found ? std::min(v.front.last_frame, last) : last;
  char caption[200];
  std::snprintf(caption, sizeof caption, "%s · running difference, north up · %s UTC", v.name.c_str(),
                imaging::iso_from_utc_seconds(polar.utc_s[shown], 0).substr(0, 16).replace(10, 1, " ").c_str());
  draw_front(cartesian_from_polar(polar.frames[shown], remap), v.grid, polar.polar, v.front, shown,
             caption, dir / "front.png");
}

// Runs the tasks on up to as many threads as the machine has cores (this one among them),
// each taking the next task not yet taken. The pictures share nothing but what they read
// (the measurement) and Dear ImGui, which viewer::draw_headless keeps to one thread at a
// time; each writes its own file. The first exception is thrown here once every thread has
// stopped (no task starts after it).
void run_on_cores(const std::vector<std::function<void()>>& tasks) {
  std::atomic<std::size_t> next{0};
  std::exception_ptr failure;
  std::mutex failure_mutex;
  std::atomic<bool> failed{false};
  const auto work = [&] {
    for (std::size_t i; !failed && (i = next++) < tasks.size();) {
      try {
        tasks[i]();
      } catch (...) {
        const std::lock_guard<std::mutex> lock(failure_mutex);
        if (!failure) failure = std::current_exception();
        failed = true;
      }
    }
  };
  const std::size_t threads = std::min<std::size_t>(tasks.size(), std::max(1u, std::thread::hardware_concurrency()));
  std::vector<std::thread> helpers;
  for (std::size_t t = 1; t < threads; ++t) helpers.emplace_back(work);
  work();
  for (std::thread& h : helpers) h.join();
  if (failure) std::rethrow_exception(failure);
}

}  // namespace

void write_measurement_pictures(const fit::Measurement& m, const fs::path& out_dir) {
  // Each view's pictures, as independent tasks: its time–height map; its remap (made once
  // for its front and shell pictures), front and shell. Listed longest first so that
  // both cores finish together.
  std::vector<std::function<void()>> tasks;
  for (const fit::ViewMeasurement& v : m.views) {
    const fs::path dir = out_dir / v.name;
    fs::create_directories(dir);
    const auto shell = std::find(m.shell.views.begin(), m.shell.views.end(), v.name);
    const bool with_shell = m.shell.fit && shell != m.shell.views.end();
    const int shell_index = static_cast<int>(shell - m.shell.views.begin());
    tasks.push_back([&m, &v, dir, with_shell, shell_index] {
      const PolarToCartesian remap = polar_to_cartesian(v.grid, v.polar.polar);
      draw_front_of(v, remap, dir);
      if (with_shell) draw_shell(v, remap, *m.shell.fit, m.shell.points, shell_index, dir / "shell.png");
    });
  }
  for (const fit::ViewMeasurement& v : m.views)
    tasks.push_back([&v, dir = out_dir / v.name] { draw_time_height_of(v, dir); });
  run_on_cores(tasks);
}

}  // namespace occulta::app
