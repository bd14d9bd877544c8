// The window's cache (viewer/window_cache.hpp): frames drawn through it are the frames drawn
// without it, pixel for pixel, as the state moves away from what the cache holds and back
// (time, display, contrast, colours, shell, points, focus); and it colours or outlines only
// what it does not hold.
#include <doctest/doctest.h>

#include "tests/support/support.hpp"
#include "tests/viewer/sample_view.hpp"
#include "viewer/pictures.hpp"
#include "viewer/ui.hpp"
#include "viewer/window_cache.hpp"

namespace {
using namespace occulta::viewer;

using occulta::test::sample_view;

// The east view alone, its shell drawn, at frame 4.
WindowState east_with_shell_at_frame_4(const std::vector<ViewPictures>& views) {
  WindowState s;
  s.views = {"east"};
  apply(s, action::Timeline{frame_times(views)});
  apply(s, action::SetShell{.shown = true});
  apply(s, action::Frame{4});
  return s;
}

// The window as the state draws it, its images and outlines from `cache` (none: made anew).
Framebuffer drawn(const WindowState& state, const std::vector<ViewPictures>& views, WindowCache* cache) {
  const std::vector<ShownView> shown = shown_views(state, views, cache);
  return draw_headless(state.width, state.height, [&] { (void)draw_window(state, shown, views); }, textures_of(shown));
}

}  // namespace

TEST_CASE("window cache: the same pixels as without it, as the state moves and comes back") {
  std::vector<ViewPictures> views;
  views.push_back(load_view(sample_view("east"), 200));  // small display images: a quick test
  views.push_back(load_view(sample_view("west"), 200));
  WindowState s;
  s.views = {"east", "west"};
  s.width = 800;
  s.height = 560;
  apply(s, action::Timeline{frame_times(views)});
  for (const ViewPictures& v : views) apply(s, action::ViewFrames{v.name, frame_times(v)});
  apply(s, action::SetShell{.shown = true, .lon_deg = -12.0, .lat_deg = 6.0, .tilt_deg = 30.0, .half_angle_deg = 26.0,
                            .aspect_ratio = 0.33, .apex_height_rs = 2.0, .speed_km_s = 950.0, .accel_m_s2 = -12.0});
  for (int k = 3; k < 8; ++k) {
    apply(s, action::AddPoint{"east", s.timeline_utc_s[std::size_t(k)], 266.0, 3.0 + 0.8 * k});
    apply(s, action::AddPoint{"west", s.timeline_utc_s[std::size_t(k)], 76.0, 3.0 + 0.8 * k});
  }

  WindowCache cache;
  const std::vector<std::pair<std::string, Action>> steps = {
      {"frame 5", action::Frame{5}},
      {"frame 9", action::Frame{9}},
      {"back to frame 5", action::Frame{5}},
      {"contrast", action::Contrast{-1.5, 4.0}},
      {"colours", action::Colours{ColourTable::blue_red}},
      {"display: base difference", action::ShowDisplay{Display::base_difference}},
      {"display: polar", action::ShowDisplay{Display::polar}},
      {"display: running difference again", action::ShowDisplay{Display::running_difference}},
      {"shell moved", action::SetShell{.lon_deg = -20.0}},
      {"a point moves the height-time PA", action::AddPoint{"east", s.timeline_utc_s[5], 300.0, 6.0}},
      {"height-time PA picked", action::HeightTimePa{250.0}},
      {"one view alone", action::Focus{"west"}},
      {"both again", action::Focus{""}},
  };
  for (const auto& [name, step] : steps) {
    apply(s, step);
    const std::string what = name;
    CAPTURE(what);
    const Framebuffer with = drawn(s, views, &cache), without = drawn(s, views, nullptr);
    REQUIRE(with.pixels.size() == without.pixels.size());
    long differ = 0;
    for (std::size_t i = 0; i < with.pixels.size(); ++i) differ += with.pixels[i] != without.pixels[i];
    CHECK(differ == 0);
  }
  // Kept: one entry per distinct picture asked for, never two for one.
  CHECK(cache.colourings.size() >= 10);
  CHECK(cache.outlines.size() >= 6);
  CHECK(cache.fits.size() >= 3);  // each view's points, then the east view's with one more
}

TEST_CASE("window cache: a picture already coloured is not coloured again, and a changed one is") {
  const std::vector<ViewPictures> views{load_view(sample_view("east"), 128)};
  WindowState s = east_with_shell_at_frame_4(views);
  WindowCache cache;
  const std::vector<ShownView> first = shown_views(s, views, &cache);
  REQUIRE(first.size() == 1);
  CHECK(cache.colourings.size() == 1);  // no points, no PA picked: no height-time map
  CHECK(cache.outlines.size() == 1);
  const std::vector<ShownView> again = shown_views(s, views, &cache);
  CHECK(again[0].panel.texels == first[0].panel.texels);  // the same texels, shared
  CHECK(again[0].outline.size() == first[0].outline.size());
  CHECK(cache.colourings.size() == 1);
  CHECK(cache.outlines.size() == 1);
  apply(s, action::Contrast{-2.0, 2.0});
  const std::vector<ShownView> recoloured = shown_views(s, views, &cache);
  CHECK(recoloured[0].panel.texels != first[0].panel.texels);
  CHECK(cache.colourings.size() == 2);
  CHECK(cache.outlines.size() == 1);  // the outline does not depend on the colours
  apply(s, action::Frame{5});
  (void)shown_views(s, views, &cache);
  CHECK(cache.colourings.size() == 3);
  CHECK(cache.outlines.size() == 2);
  // Past its byte limit the least recently asked-for colourings go.
  cache.max_texel_bytes = first[0].panel.texels->size();
  apply(s, action::Frame{6});
  (void)shown_views(s, views, &cache);
  CHECK(cache.colourings.size() == 1);
}

TEST_CASE("window cache: made ahead, a step finds the next time's pictures and outlines ready") {
  const std::vector<ViewPictures> views{load_view(sample_view("east"), 128)};
  WindowState s = east_with_shell_at_frame_4(views);
  WindowCache cache;
  (void)shown_views(s, views, &cache);
  const std::uint64_t shown = cache.made;
  CHECK(shown == 2);  // the image and the outline
  CHECK(prepare_neighbours(cache, s, views));   // the next time's
  CHECK(cache.made == shown + 2);
  CHECK(prepare_neighbours(cache, s, views));   // then the previous one's
  CHECK(cache.made == shown + 4);
  CHECK(!prepare_neighbours(cache, s, views));  // nothing left to make
  const std::uint64_t ready = cache.made;
  for (const int by : {1, -1}) {
    WindowState stepped = s;
    apply(stepped, action::Step{by});
    (void)shown_views(stepped, views, &cache);
    CHECK(cache.made == ready);  // nothing made in the frame
  }
  // Playing wraps: at the last frame the next is the first.
  apply(s, action::Frame{int(s.timeline_utc_s.size()) - 1});
  apply(s, action::Play{});
  (void)shown_views(s, views, &cache);
  while (prepare_neighbours(cache, s, views)) {
  }
  const std::uint64_t wrapped = cache.made;
  apply(s, action::Step{1, true});
  CHECK(s.frame == 0);
  (void)shown_views(s, views, &cache);
  CHECK(cache.made == wrapped);
}
