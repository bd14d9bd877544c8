// tests/app/quicklook_test.cpp — the quicklook pictures (app/quicklook): hand-made images
// whose values say where they must appear, drawn on real axes; the picture's size, the
// image under its axes' mapping, the colour bar, the axis labels, N/E, overlays, legend
// and heading where they belong, and empty margins where nothing belongs.
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgcodecs.hpp>

#include "app/quicklook.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"
#include "viewer/headless.hpp"

namespace occulta::app {
namespace {

constexpr std::uint32_t kBackground = viewer::rgba(24, 24, 28);  // viewer::HeadlessOptions' default

// A sky image of 101² pixels, 0.3 R☉ each, Sun centre at the middle: +4σ on the west half
// (x > 0), −4σ on the east half, no data inside 2.5 R☉ and beyond 14.5 R☉.
QuicklookPanel made_sky() {
  constexpr int kSize = 101;
  constexpr double kStep = 0.3, kCentre = 50.0;
  cv::Mat values(kSize, kSize, CV_32F);
  for (int y = 0; y < kSize; ++y)
    for (int x = 0; x < kSize; ++x) {
      const double sx = (x - kCentre) * kStep, sy = (y - kCentre) * kStep, r = std::hypot(sx, sy);
      values.at<float>(y, x) = r < 2.5 || r > 14.5 ? NAN : (sx > 0 ? 4.0f : -4.0f);
    }
  imaging::OcculterRadii radii;
  radii.inner_rs = 2.5;
  radii.outer_rs = 14.5;
  const double edge = (kCentre + 0.5) * kStep;  // pixel edges half a pixel beyond the centres
  QuicklookPanel p{Plane::sky, values, viewer::ImageExtent{-edge, edge, -edge, edge}, sigma_scale(4.0, "difference (σ)"),
                   "made · sky", radii, {}};
  // A dot 10 R☉ west (PA 270°) on the sky.
  p.overlays.push_back({Overlay::Shape::dots, {sky_point(270.0, 10.0)}, kPointMark, "a point"});
  return p;
}

// A time–height map over 2031-03-14 22:00 → 2031-03-15 02:00 (across midnight), heights
// 2.5–14.5 R☉ in 0.5 steps: 0σ, with a law drawn over it.
QuicklookPanel made_time_height() {
  const double t0 = imaging::utc_seconds_from_iso("2031-03-14T22:00:00"), t1 = t0 + 4 * 3600.0;
  cv::Mat values(25, 240, CV_32F, cv::Scalar(0.0f));
  QuicklookPanel p{Plane::time_height, values, viewer::ImageExtent{t0, t1, 2.25, 14.75},
                   sigma_scale(4.0, "difference (σ)"), "made · time–height", {}, {}};
  p.overlays.push_back({Overlay::Shape::line, {{t0, 3.0}, {t1, 13.0}}, kFitMark, "a law"});
  return p;
}

bool lit(std::uint32_t pixel) {  // text or marks: brighter than any margin
  return (pixel & 0xFF) > 120 || ((pixel >> 8) & 0xFF) > 120 || ((pixel >> 16) & 0xFF) > 120;
}

int lit_in(const viewer::Framebuffer& f, int x0, int y0, int x1, int y1) {
  int n = 0;
  for (int y = std::max(0, y0); y < std::min(f.height, y1); ++y)
    for (int x = std::max(0, x0); x < std::min(f.width, x1); ++x) n += lit(f.at(x, y));
  return n;
}

int count_colour(const viewer::Framebuffer& f, ImU32 colour, int x0, int y0, int x1, int y1) {
  int n = 0;
  for (int y = std::max(0, y0); y < std::min(f.height, y1); ++y)
    for (int x = std::max(0, x0); x < std::min(f.width, x1); ++x) n += f.at(x, y) == colour;
  return n;
}

std::uint32_t at_data(const QuicklookPicture& q, int panel, double x, double y) {
  const ImVec2 p = q.frames[std::size_t(panel)].to_pixel(x, y);
  return q.picture.at(int(p.x), int(p.y));
}

}  // namespace

TEST_CASE("quicklook: sky sign and scale, colour bar, labelled axes, N/E, overlays and legend where they belong") {
  const QuicklookPanel panels[] = {made_sky(), made_time_height()};
  const QuicklookPicture q = draw_quicklook(panels, "made: a heading");
  const viewer::Framebuffer& f = q.picture;
  const viewer::HeadlessOptions defaults;
  const int heading_px = int(std::ceil(defaults.font_pixels + 8.0f));
  // Panels side by side under the heading line.
  CHECK(f.width == panel_size(Plane::sky).width + panel_size(Plane::time_height).width);
  CHECK(f.height == heading_px + std::max(panel_size(Plane::sky).height, panel_size(Plane::time_height).height));
  REQUIRE(q.frames.size() == 2);
  CHECK(lit_in(f, 0, 0, 200, heading_px) > 40);  // the heading's glyphs
  CHECK(draw_quicklook(panels, "made: a heading").picture.pixels == f.pixels);  // deterministic

  const viewer::PlotFrame& sky = q.frames[0];
  const float line = defaults.font_pixels;
  const viewer::PlotStyle style;
  // Equal scale (one R☉ as many pixels across as up), west to the right, north up.
  CHECK(sky.pixel_max.x - sky.pixel_min.x == sky.pixel_max.y - sky.pixel_min.y);
  CHECK(sky.pixel_max.x - sky.pixel_min.x > 380.0f);
  CHECK(at_data(q, 0, 8.3, 3.7) == colour_of(panels[0].scale, 4.0));   // west: +4σ, white
  CHECK(at_data(q, 0, -8.3, 3.7) == colour_of(panels[0].scale, -4.0)); // east: −4σ, black
  CHECK(at_data(q, 0, 1.8, 0.6) == kNoData);                           // inside the occulter
  CHECK(at_data(q, 0, 14.0, 14.0) == kNoData);                         // beyond the field stop
  CHECK(at_data(q, 0, 10.0, 0.0) == kPointMark);                       // the dot at PA 270°, 10 R☉
  // The occulter edge (an antialiased line): orange within 2 px of 2.5 R☉ towards PA 45°,
  // none 0.5 R☉ further out.
  const auto orange = [&](double pa_deg, double height_rs) {
    const viewer::DataPoint d = sky_point(pa_deg, height_rs);
    const ImVec2 c = sky.to_pixel(d.x, d.y);
    int n = 0;
    for (int y = int(c.y) - 2; y <= int(c.y) + 2; ++y)
      for (int x = int(c.x) - 2; x <= int(c.x) + 2; ++x) {
        const std::uint32_t p = f.at(x, y);
        n += (p & 0xFF) > 180 && ((p >> 8) & 0xFF) > 80 && ((p >> 8) & 0xFF) < 190 && ((p >> 16) & 0xFF) < 110;
      }
    return n;
  };
  CHECK(orange(45.0, 2.5) > 0);
  CHECK(orange(45.0, 3.0) == 0);
  CHECK(orange(135.0, 14.5) > 0);  // the field stop

  // The colour bar: a strip right of the data area, black at the bottom (−4σ) rising to
  // white at the top (+4σ), never darker upwards.
  const int bar_x = int(sky.pixel_max.x + 1 + 3 * style.pad_px + style.colour_bar_px / 2);
  const int top = int(sky.pixel_min.y) + 1, bottom = int(sky.pixel_max.y) - 2;
  CHECK((f.at(bar_x, bottom) & 0xFF) < 8);
  CHECK((f.at(bar_x, top) & 0xFF) > 247);
  int darker_upwards = 0;
  for (int y = bottom; y > top; --y) darker_upwards += (f.at(bar_x, y - 1) & 0xFF) < (f.at(bar_x, y) & 0xFF);
  CHECK(darker_upwards == 0);
  CHECK(lit_in(f, bar_x + 12, top - 2, bar_x + 60, bottom + 2) > 40);  // its tick labels

  // Tick labels below the data area and the x label under them; the y label upright at the
  // far left; an empty margin below-left of the data area.
  const int ticks_y = int(sky.pixel_max.y + 1 + style.tick_px + style.pad_px);
  CHECK(lit_in(f, int(sky.pixel_min.x), ticks_y, int(sky.pixel_max.x), ticks_y + int(line)) > 60);
  CHECK(lit_in(f, int(sky.pixel_min.x), ticks_y + int(line), int(sky.pixel_max.x), ticks_y + int(2 * line) + 6) > 60);
  CHECK(lit_in(f, 0, int(sky.pixel_min.y), int(style.pad_px + line + style.pad_px), int(sky.pixel_max.y)) > 60);
  const int margin_w = int(sky.pixel_min.x) - 30, margin_h = int(2 * line);
  CHECK(count_colour(f, kBackground, 0, ticks_y + int(line), margin_w, ticks_y + int(line) + margin_h) ==
        margin_w * margin_h);
  // N and E arrows in the data area's top-left corner (no data there: only the arrows are lit).
  CHECK(lit_in(f, int(sky.pixel_min.x), int(sky.pixel_min.y), int(sky.pixel_min.x + 4 * line),
               int(sky.pixel_min.y + 4 * line)) > 30);
  // The legend below the axes: the occulter's line sample and the point's box, outside the data area.
  CHECK(count_colour(f, kOcculterMark, 0, int(sky.pixel_max.y) + 2, panel_size(Plane::sky).width, f.height) >=
        int(2 * line));
  CHECK(count_colour(f, kPointMark, 0, int(sky.pixel_max.y) + 2, panel_size(Plane::sky).width, f.height) >= 25);

  // The time–height panel: UTC across midnight, so a date row under the tick labels;
  // 0σ mid-grey where the law is not; the law's colour on its line.
  const viewer::PlotFrame& th = q.frames[1];
  const double t0 = panels[1].extent.left;
  CHECK(at_data(q, 1, t0 + 4200.0, 11.3) == colour_of(panels[1].scale, 0.0));
  const ImVec2 on_law = th.to_pixel(t0 + 2 * 3600.0, 8.0);
  CHECK(count_colour(f, kFitMark, int(on_law.x) - 2, int(on_law.y) - 2, int(on_law.x) + 3, int(on_law.y) + 3) > 0);
  const int th_ticks_y = int(th.pixel_max.y + 1 + style.tick_px + style.pad_px);
  CHECK(lit_in(f, int(th.pixel_min.x), th_ticks_y + int(line), int(th.pixel_max.x), th_ticks_y + int(2 * line)) > 60);
  CHECK(count_colour(f, kFitMark, int(th.pixel_min.x), int(th.pixel_max.y) + 2, f.width, f.height) >= int(2 * line));

  const std::filesystem::path dir = test::scratch_dir("quicklook-made");
  write_quicklook(dir / "made.png", panels, "made: a heading");
  const cv::Mat read = cv::imread((dir / "made.png").string());
  CHECK(read.cols == f.width);
  CHECK(read.rows == f.height);
}

TEST_CASE("quicklook: a large image is averaged down to its panel, on PA and height axes") {
  // 1200 × 300 polar image (0.3° columns): over PA 0–180° columns alternating +4σ and −4σ,
  // whose pairs average to 0σ; over 180–360° −2σ; no data over PA 240–243° (10 columns).
  // 1200 columns in a 900 px panel: averaged by 2.
  cv::Mat values(300, 1200, CV_32F, cv::Scalar(-2.0f));
  for (int c = 0; c < 600; ++c) values.col(c).setTo(c % 2 == 0 ? 4.0f : -4.0f);
  values(cv::Rect(800, 0, 10, 300)).setTo(NAN);
  const QuicklookPanel polar{Plane::polar, values, viewer::ImageExtent{0.0, 360.0, 2.5, 14.5},
                             sigma_scale(4.0, "difference (σ)"), "made · polar", {}, {}};
  const QuicklookPicture q = draw_quicklook({&polar, 1});
  CHECK(q.picture.width == panel_size(Plane::polar).width);
  CHECK(q.picture.height == panel_size(Plane::polar).height);
  CHECK(at_data(q, 0, 61.0, 8.3) == colour_of(polar.scale, 0.0));  // averaged: not black or white
  CHECK(at_data(q, 0, 121.0, 11.3) == colour_of(polar.scale, 0.0));
  CHECK(at_data(q, 0, 300.0, 8.3) == colour_of(polar.scale, -2.0));
  // The no-data band, 3° of 360° across the data area.
  const viewer::PlotFrame& frame = q.frames[0];
  const int y = int(frame.to_pixel(0.0, 8.3).y);
  int no_data = 0;
  for (int x = int(frame.pixel_min.x); x < int(frame.pixel_max.x); ++x) no_data += q.picture.at(x, y) == kNoData;
  const double expected = 3.0 / 360.0 * (frame.pixel_max.x - frame.pixel_min.x);
  CHECK(no_data >= int(expected) - 1);
  CHECK(no_data <= int(expected) + 2);
  // PA ticks at whole quadrant steps: a lit tick label under 90° and none under 100°.
  const viewer::PlotStyle style;
  const int ticks_y = int(frame.pixel_max.y + 1 + style.tick_px + style.pad_px);
  const int x90 = int(frame.to_pixel(90.0, 8.0).x), x112 = int(frame.to_pixel(112.5, 8.0).x);
  CHECK(lit_in(q.picture, x90 - 8, ticks_y, x90 + 8, ticks_y + 15) > 10);
  CHECK(lit_in(q.picture, x112 - 4, ticks_y, x112 + 4, ticks_y + 15) == 0);
  // No legend (nothing labelled) on this panel: below the x axis' label, nothing.
  const int below = ticks_y + 2 * 15 + int(2 * style.pad_px);
  CHECK(lit_in(q.picture, 0, below, q.picture.width, q.picture.height) == 0);
}

TEST_CASE("quicklook: a PA and height go onto the sky with north up and east to the left") {
  // PA counter-clockwise from north through east (Thompson 2006; imaging/polar.hpp).
  CHECK(sky_point(0.0, 2.0).x == doctest::Approx(0.0).epsilon(1e-12));
  CHECK(sky_point(0.0, 2.0).y == doctest::Approx(2.0));
  CHECK(sky_point(90.0, 3.0).x == doctest::Approx(-3.0));  // east: −x
  CHECK(sky_point(180.0, 1.0).y == doctest::Approx(-1.0));
  CHECK(sky_point(270.0, 5.0).x == doctest::Approx(5.0));  // west: +x
  imaging::PolarGrid g;
  g.height_min_rs = 2.5;
  g.height_step_rs = 0.25;
  g.height_count = 49;  // 2.5 … 14.5
  const imaging::OcculterRadii r = polar_radii(g);
  CHECK(r.inner_rs == 2.5);
  CHECK(r.outer_rs == doctest::Approx(14.625));
}

}  // namespace occulta::app
