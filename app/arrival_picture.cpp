#include "app/arrival_picture.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

#include <imgui.h>

#include "imaging/time.hpp"
#include "viewer/headless.hpp"
#include "viewer/plot.hpp"

namespace occulta::app {

namespace {

constexpr int kWidth = 860, kHeight = 480;  // pixels
constexpr int kAboutBins = 40;
const ImU32 kBar = IM_COL32(150, 150, 162, 255), kOuter = IM_COL32(255, 170, 60, 255),
            kMedian = IM_COL32(255, 90, 80, 255), kText = IM_COL32(225, 225, 225, 255),
            kCaution = IM_COL32(170, 170, 170, 255);

// "YYYY-MM-DD hh:mm" (UTC).
std::string minute(double utc_s) {
  std::string iso = imaging::iso_from_utc_seconds(utc_s, 0).substr(0, 16);
  iso[10] = ' ';
  return iso;
}

// A bin width in words: "30 s", "10 min", "2 h", "1 d".
std::string duration(double s) {
  char text[32];
  if (s < 60.0)
    std::snprintf(text, sizeof text, "%.0f s", s);
  else if (s < 3600.0)
    std::snprintf(text, sizeof text, "%.0f min", s / 60.0);
  else if (s < 86400.0)
    std::snprintf(text, sizeof text, "%.0f h", s / 3600.0);
  else
    std::snprintf(text, sizeof text, "%.0f d", s / 86400.0);
  return text;
}

// The caution (fit::kArrivalCaution) on two lines at the bottom of the picture, split after
// its semicolon; returns the height it takes.
float draw_caution(ImDrawList& draw) {
  const std::string_view caution = fit::kArrivalCaution;
  const std::size_t split = caution.find("; ");
  const std::string lines[2] = {std::string(caution.substr(0, split + 1)), std::string(caution.substr(split + 2))};
  const float line = ImGui::GetFontSize(), pad = 4.0f, top = kHeight - pad - 2 * line;
  for (int i = 0; i < 2; ++i) draw.AddText(ImVec2(pad * 2, std::floor(top + i * line)), kCaution, lines[i].c_str());
  return kHeight - top + pad;
}

void draw_histogram(const fit::TargetArrival& a, double boundary_utc_s) {
  ImDrawList& draw = *ImGui::GetBackgroundDrawList();
  const float caution_px = draw_caution(draw);
  char text[256];
  if (a.hits == 0) {
    std::snprintf(text, sizeof text, "%s: no member of %d reaches it", a.target.name.c_str(), a.members);
    const ImVec2 size = ImGui::CalcTextSize(text);
    draw.AddText(ImVec2(std::floor((kWidth - size.x) / 2), std::floor((kHeight - caution_px - size.y) / 2)), kText, text);
    return;
  }
  // Bins of one UTC tick step (whole minutes, hours or days) over the hits' range, so that
  // bin edges fall on the axis' ticks.
  const std::vector<double>& times = a.times_utc_s;  // sorted
  double lo = times.front(), hi = times.back();
  if (hi - lo < 60.0) {
    lo -= 1800.0;
    hi += 1800.0;
  }
  const double bin = viewer::utc_tick_step(lo, hi, kAboutBins);
  const double start = std::floor(lo / bin) * bin;
  const int bins = std::max(1, static_cast<int>(std::ceil((hi - start) / bin - 1e-9)));
  std::vector<double> counts(static_cast<std::size_t>(bins), 0.0), edges;
  for (int i = 0; i <= bins; ++i) edges.push_back(start + i * bin);
  for (const double t : times) counts[static_cast<std::size_t>(std::clamp(static_cast<int>((t - start) / bin), 0, bins - 1))] += 1.0;
  const double peak = *std::max_element(counts.begin(), counts.end());
  // Headroom above the tallest bar for the legend: the top a nice number ≥ 1.4 × the peak.
  const double top = viewer::nice_range(0.0, 1.4 * peak, 5).y;

  const viewer::PlotFrame frame = viewer::layout_plot(
      ImVec2(0, 0), ImVec2(kWidth, kHeight - caution_px), viewer::Axis{edges.front(), edges.back(), "arrival time (UTC)", true},
      viewer::Axis{0.0, top, "members per " + duration(bin) + " bin", false});
  viewer::draw_bars(draw, frame, edges, counts, kBar);
  viewer::draw_axes(draw, frame);
  const struct {
    double utc_s;
    const char* name;
    ImU32 colour;
    int row;
  } marks[] = {{*a.time_p05, "p05", kOuter, 0}, {*a.time_p50, "p50", kMedian, 1}, {*a.time_p95, "p95", kOuter, 0}};
  std::vector<viewer::LegendEntry> legend;
  std::snprintf(text, sizeof text, "arriving members: %d of %d", a.hits, a.members);
  legend.push_back({text, kBar, true});
  for (const auto& m : marks) {
    viewer::draw_marker(draw, frame, m.utc_s, m.colour, m.name, m.row);
    std::snprintf(text, sizeof text, "%s %s (%+.1f h)", m.name, minute(m.utc_s).c_str(), (m.utc_s - boundary_utc_s) / 3600.0);
    legend.push_back({text, m.colour, false});
  }
  viewer::draw_legend(draw, frame, legend, 2);  // below the markers' two label rows
  std::snprintf(text, sizeof text, "%s: hit %.1f %% of %d members, speed p50 %.0f km/s; hours after the boundary time %s UTC",
                a.target.name.c_str(), 100.0 * a.hit_probability, a.members, *a.speed_p50, minute(boundary_utc_s).c_str());
  viewer::draw_title(draw, frame, text);
}

}  // namespace

viewer::Framebuffer arrival_histogram(const fit::TargetArrival& a, double boundary_utc_s) {
  return viewer::draw_headless(kWidth, kHeight, [&] { draw_histogram(a, boundary_utc_s); });
}

void write_arrival_histogram(const std::filesystem::path& path, const fit::TargetArrival& arrival,
                             double boundary_utc_s) {
  viewer::write_png(arrival_histogram(arrival, boundary_utc_s), path);
}

}  // namespace occulta::app
