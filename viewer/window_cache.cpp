// viewer/window_cache.cpp — see window_cache.hpp.
#include "viewer/window_cache.hpp"

#include <algorithm>
#include <tuple>

#include "viewer/height_time.hpp"
#include "viewer/ui.hpp"

namespace occulta::viewer {
namespace {

bool same_sources(const std::vector<cv::Mat>& kept, const std::vector<const cv::Mat*>& asked) {
  if (kept.size() != asked.size()) return false;
  for (std::size_t i = 0; i < kept.size(); ++i)
    if (kept[i].data != asked[i]->data || kept[i].rows != asked[i]->rows || kept[i].cols != asked[i]->cols) return false;
  return true;
}

std::size_t texel_bytes(const WindowCache& cache) {
  std::size_t bytes = 0;
  for (const WindowCache::Colouring& c : cache.colourings) bytes += c.texels ? c.texels->size() : 0;
  return bytes;
}

// Drops the least recently asked-for colourings past the byte limit, never the newest.
void trim_colourings(WindowCache& cache) {
  std::size_t bytes = texel_bytes(cache);
  while (bytes > cache.max_texel_bytes && cache.colourings.size() > 1) {
    const auto oldest = std::min_element(cache.colourings.begin(), cache.colourings.end() - 1,
                                         [](const auto& a, const auto& b) { return a.used < b.used; });
    bytes -= oldest->texels ? oldest->texels->size() : 0;
    cache.colourings.erase(oldest);
  }
}

// The texels of `sources` coloured through `scale`: the cache's, or made by `make` (which
// returns the values to colour) and kept.
template <class MakeValues>
std::shared_ptr<const std::vector<std::uint8_t>> coloured(WindowCache& cache, const std::vector<const cv::Mat*>& sources,
                                                          bool map, double pa_deg, double band_deg, const ColourScale& scale,
                                                          int& width, int& height, MakeValues make) {
  ++cache.clock;
  for (WindowCache::Colouring& c : cache.colourings)
    if (c.map == map && c.pa_deg == pa_deg && c.band_deg == band_deg && c.table == scale.table && c.lo == scale.lo &&
        c.hi == scale.hi && c.no_data == scale.no_data && same_sources(c.sources, sources)) {
      c.used = cache.clock;
      width = c.width, height = c.height;
      return c.texels;
    }
  const cv::Mat values = make();
  ++cache.made;
  WindowCache::Colouring c;
  for (const cv::Mat* m : sources) c.sources.push_back(*m);  // shares the buffer: its address stays ours
  c.map = map, c.pa_deg = pa_deg, c.band_deg = band_deg;
  c.table = scale.table, c.lo = scale.lo, c.hi = scale.hi, c.no_data = scale.no_data;
  c.width = width = values.cols;
  c.height = height = values.rows;
  c.texels = std::make_shared<const std::vector<std::uint8_t>>(texels(values, scale));
  c.used = cache.clock;
  cache.colourings.push_back(std::move(c));
  std::shared_ptr<const std::vector<std::uint8_t>> out = cache.colourings.back().texels;
  trim_colourings(cache);
  return out;
}

}  // namespace

ImagePanel cached_image_panel(WindowCache* cache, const cv::Mat& values, const ImageExtent& extent, const ColourScale& scale,
                              ImTextureID id, Sampling sampling) {
  if (!cache) return make_image_panel(values, extent, scale, id, sampling);
  int width = 0, height = 0;
  auto made = coloured(*cache, {&values}, false, 0.0, 0.0, scale, width, height, [&] { return values; });
  return image_panel_of(std::move(made), width, height, extent, scale, id, sampling);
}

ImagePanel cached_time_height_panel(WindowCache* cache, const ViewPictures& view, double pa_deg, const ColourScale& scale,
                                    ImTextureID id, double band_deg) {
  if (!cache) return make_image_panel(time_height_map(view, pa_deg, band_deg), time_height_extent(view), scale, id);
  std::vector<const cv::Mat*> sources;
  for (const FramePictures& f : view.frames) sources.push_back(&f.polar);
  int width = 0, height = 0;
  auto made = coloured(*cache, sources, true, pa_deg, band_deg, scale, width, height,
                       [&] { return time_height_map(view, pa_deg, band_deg); });
  return image_panel_of(std::move(made), width, height, time_height_extent(view), scale, id, Sampling::nearest);
}

OutlineRuns cached_shell_outline(WindowCache* cache, const ShellControls& controls, const imaging::Observer& observer,
                                 double utc_s) {
  if (!cache) return shell_outline(controls, observer, utc_s);
  const auto key = [](const ShellControls& k) {
    return std::tie(k.lon_deg, k.lat_deg, k.tilt_deg, k.half_angle_deg, k.aspect_ratio, k.ref_utc_s, k.apex_height_rs,
                    k.speed_km_s, k.accel_m_s2);
  };
  ++cache->clock;
  for (WindowCache::Outline& o : cache->outlines)
    if (key(o.controls) == key(controls) && o.observer.lon_rad == observer.lon_rad && o.observer.lat_rad == observer.lat_rad &&
        o.observer.dist_km == observer.dist_km && o.utc_s == utc_s) {
      o.used = cache->clock;
      return o.runs;
    }
  OutlineRuns runs = shell_outline(controls, observer, utc_s);
  ++cache->made;
  if (cache->outlines.size() >= cache->max_outlines && !cache->outlines.empty())
    cache->outlines.erase(std::min_element(cache->outlines.begin(), cache->outlines.end(),
                                           [](const auto& a, const auto& b) { return a.used < b.used; }));
  cache->outlines.push_back({controls, observer, utc_s, runs, cache->clock});
  return runs;
}

std::optional<fit::HeightTimeFit> cached_height_time_fit(WindowCache* cache, const WindowState& state, const ViewPictures& view) {
  if (!cache) return height_time_fit(state, view);
  std::vector<std::pair<double, double>> points;
  for (const MarkedPoint& p : state.points)
    if (p.view == view.name) points.emplace_back(p.utc_s, p.height_rs);
  ++cache->clock;
  for (WindowCache::KinematicFit& f : cache->fits)
    if (f.view == view.name && f.height_step_rs == view.polar.height_step_rs && f.points == points) {
      f.used = cache->clock;
      return f.fit;
    }
  std::optional<fit::HeightTimeFit> made = height_time_fit(state, view);
  ++cache->made;
  if (cache->fits.size() >= cache->max_fits && !cache->fits.empty())
    cache->fits.erase(std::min_element(cache->fits.begin(), cache->fits.end(),
                                       [](const auto& a, const auto& b) { return a.used < b.used; }));
  cache->fits.push_back({view.name, std::move(points), view.polar.height_step_rs, made, cache->clock});
  return made;
}

bool prepare_neighbours(WindowCache& cache, const WindowState& state, const std::vector<ViewPictures>& views) {
  if (state.timeline_utc_s.size() < 2) return false;
  for (const action::Step step : {action::Step{1, state.playing}, action::Step{-1, false}}) {
    WindowState there = state;
    apply(there, step);
    if (there.frame == state.frame) continue;
    const std::uint64_t before = cache.made;
    (void)shown_views(there, views, &cache);
    if (cache.made != before) return true;
  }
  return false;
}

}  // namespace occulta::viewer
