// app/measure_pictures.cpp — see measure_pictures.hpp.
#include "app/measure_pictures.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include <opencv2/imgproc.hpp>

#include "app/quicklook.hpp"
#include "imaging/polar.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// Quicklook: the time–height map at the track's PA with the track points (yellow) and
// the fitted law (red) drawn over it.
void draw_time_height(const imaging::PolarSequence& polar, double pa_deg, const std::vector<fit::TrackPoint>& points,
                      const fit::HeightTimeFit* fit, const std::string& caption, const fs::path& path) {
  const imaging::TimeMap th = imaging::time_height(polar, pa_deg, 2.0);
  const double t0 = polar.utc_s.front(), t1 = polar.utc_s.back();
  const int columns = std::max<int>(360, int(polar.utc_s.size()) * 16);
  const cv::Mat values = imaging::render_on_time_axis(th, t0, t1, columns);
  const int scale = picture_scale(values);
  cv::Mat picture;
  cv::cvtColor(grey_picture(values, 4.0), picture, cv::COLOR_GRAY2BGR);
  const auto at = [&](double t, double h) {
    const double x = t1 > t0 ? (t - t0) / (t1 - t0) * (columns - 1) : 0.0;
    return picture_point(x, (h - th.axis_start) / th.axis_step, values.rows, scale);
  };
  if (fit && fit->status == fit::FitStatus::ok) {
    std::vector<cv::Point> line;
    for (int k = 0; k <= 100; ++k) {
      const double t = t0 + (t1 - t0) * k / 100.0;
      line.push_back(at(t, fit->law.height_at(t)));
    }
    cv::polylines(picture, line, false, cv::Scalar(60, 60, 255), 2, cv::LINE_AA);
  }
  for (const fit::TrackPoint& p : points) cv::circle(picture, at(p.utc_s, p.height_rs), 5, cv::Scalar(0, 230, 255), 2, cv::LINE_AA);
  write_png(path, with_caption(picture, caption));
}

// Quicklook: the last running difference of the CME with its leading edge (yellow) and
// the two PAs that bound it (green), north up.
void draw_front(const cv::Mat& difference, const imaging::RegisteredGrid& grid, const imaging::PolarGrid& polar,
                const imaging::Front& front, int frame, const std::string& caption, const fs::path& path) {
  const int scale = picture_scale(difference);
  cv::Mat picture;
  cv::cvtColor(grey_picture(difference, 4.0), picture, cv::COLOR_GRAY2BGR);
  const auto at = [&](double pa, double h) {
    const cv::Point2d p = imaging::grid_pixel(grid, pa, h);
    return picture_point(p.x, p.y, difference.rows, scale);
  };
  if (front.found) {
    const double outer = polar.height_rs(polar.height_count - 1);
    for (const double pa : {front.pa_from_deg, front.pa_to_deg})
      cv::line(picture, at(pa, polar.height_rs(0)), at(pa, outer), cv::Scalar(80, 220, 80), 1, cv::LINE_AA);
    if (frame >= 0 && frame < int(front.leading_edge_rs.size()))
      for (int c = 0; c < polar.pa_count; ++c) {
        const float h = front.leading_edge_rs[frame][c];
        if (std::isfinite(h)) cv::circle(picture, at(polar.pa_deg(c), h), 1, cv::Scalar(0, 230, 255), -1);
      }
  }
  write_png(path, with_caption(picture, caption));
}

// Quicklook: three running differences (first, middle and last frame with points) with
// the fitted shell's outline (cyan: its largest sky height per 1° of PA) and the points
// the fit used there (yellow), north up, side by side.
void draw_shell(const fit::ViewMeasurement& v, const fit::ShellFit& fit, const std::vector<fit::EdgePoint>& points,
                int view_index, const fs::path& path) {
  std::vector<int> frames;
  for (std::size_t k = 0; k < v.polar.utc_s.size(); ++k)
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - v.polar.utc_s[k]) < 1.0) {
        frames.push_back(static_cast<int>(k));
        break;
      }
  if (frames.empty()) return;
  const std::vector<int> shown = {frames.front(), frames[frames.size() / 2], frames.back()};
  std::vector<cv::Mat> panels;
  for (const int k : shown) {
    const cv::Mat difference = cartesian_from_polar(v.polar.frames[static_cast<std::size_t>(k)], v.grid, v.polar.polar);
    const int scale = picture_scale(difference);
    cv::Mat picture;
    cv::cvtColor(grey_picture(difference, 4.0), picture, cv::COLOR_GRAY2BGR);
    const auto at = [&](double pa, double h) {
      const cv::Point2d p = imaging::grid_pixel(v.grid, pa, h);
      return picture_point(p.x, p.y, difference.rows, scale);
    };
    const double t = v.polar.utc_s[static_cast<std::size_t>(k)];
    const fit::ShellParams shell = fit::shell_at(fit, t);
    const fit::SkyOutline outline = fit::sky_outline(fit::make_mesh(shell, {16, 96, 72}), shell, v.observer, 1.0);
    const std::size_t bins = outline.max_height_rs.size();
    for (const fit::EdgePoint& p : points)
      if (p.view == view_index && std::abs(p.time_s - t) < 1.0)
        cv::circle(picture, at(p.pa_deg, p.height_rs), 1, cv::Scalar(0, 230, 255), -1, cv::LINE_AA);
    for (std::size_t b = 0; b < bins; ++b) {
      const double h0 = outline.max_height_rs[b], h1 = outline.max_height_rs[(b + 1) % bins];
      if (std::isfinite(h0) && std::isfinite(h1))
        cv::line(picture, at((b + 0.5) * outline.bin_deg, h0), at((b + 1.5) * outline.bin_deg, h1),
                 cv::Scalar(255, 230, 0), 1, cv::LINE_AA);
    }
    char caption[160];
    std::snprintf(caption, sizeof caption, "%s %s apex %.1f R_sun", v.name.c_str(),
                  imaging::iso_from_utc_seconds(t, 0).substr(11, 5).c_str(), shell.apex_height_rs);
    panels.push_back(with_caption(picture, caption));
  }
  cv::Mat row;
  cv::hconcat(panels, row);
  write_png(path, with_caption(row, v.name + ": fitted shell outline (cyan) and the points it fits (yellow), +-4 sigma, north up"));
}

void draw_view(const fit::ViewMeasurement& v, const fs::path& dir) {
  const imaging::PolarSequence& polar = v.polar;
  const double pa = !v.points.empty()                        ? v.track_pa_deg
                    : std::isfinite(v.central_pa_deg) ? v.central_pa_deg
                                                               : 0.0;
  char caption[200];
  std::snprintf(caption, sizeof caption, "%s PA %.0f: height up, time across; %s track, fit line", v.name.c_str(), pa,
                v.by_analyst ? "analyst" : "auto");
  draw_time_height(polar, pa, v.points, v.kinematics ? &*v.kinematics : nullptr, caption, dir / "time_height.png");
  const int last = int(polar.frames.size()) - 1;
  const int shown = v.front.found ? std::min(v.front.last_frame, last) : last;
  std::snprintf(caption, sizeof caption, "%s %s running difference, +-4 sigma, north up; front and PA span",
                v.name.c_str(), imaging::iso_from_utc_seconds(polar.utc_s[shown], 0).substr(0, 16).c_str());
  draw_front(cartesian_from_polar(polar.frames[shown], v.grid, polar.polar), v.grid, polar.polar, v.front, shown,
             caption, dir / "front.png");
}

}  // namespace

void write_measurement_pictures(const fit::Measurement& m, const fs::path& out_dir) {
  for (const fit::ViewMeasurement& v : m.views) {
    const fs::path dir = out_dir / v.name;
    fs::create_directories(dir);
    draw_view(v, dir);
  }
  if (!m.shell.fit) return;
  for (std::size_t i = 0; i < m.shell.views.size(); ++i) {
    const auto v = std::find_if(m.views.begin(), m.views.end(),
                                [&](const fit::ViewMeasurement& view) { return view.name == m.shell.views[i]; });
    if (v == m.views.end()) continue;
    fs::create_directories(out_dir / v->name);
    draw_shell(*v, *m.shell.fit, m.shell.points, static_cast<int>(i), out_dir / v->name / "shell.png");
  }
}

}  // namespace occulta::app
