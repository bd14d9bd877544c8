// tests/app/arrival_picture_test.cpp — the arrival histogram drawn with the plotting layer:
// its bars, percentile markers and axes where the plot's own mapping puts them.
#include <cmath>
#include <cstdint>
#include <vector>

#include <doctest/doctest.h>

#include "app/arrival_picture.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace {

// Hand-made arrivals: 1 member at 10:30, 3 at 13:30, 6 at 16:30 and 2 at 19:30 of
// 2031-07-12 (UTC), with the percentiles set by hand (not the ensemble's).
occulta::fit::TargetArrival made_arrivals() {
  occulta::fit::TargetArrival a;
  a.target.name = "earth";
  a.members = 20;
  const double day = occulta::imaging::utc_seconds_from_iso("2031-07-12T00:00:00");
  for (const auto& [hour, count] : std::vector<std::pair<double, int>>{{10.5, 1}, {13.5, 3}, {16.5, 6}, {19.5, 2}})
    for (int i = 0; i < count; ++i) a.times_utc_s.push_back(day + hour * 3600.0);
  a.hits = static_cast<int>(a.times_utc_s.size());
  a.hit_probability = static_cast<double>(a.hits) / a.members;
  a.time_p05 = day + 11.0 * 3600.0;
  a.time_p50 = day + 16.0 * 3600.0;
  a.time_p95 = day + 19.0 * 3600.0;
  a.speed_p50 = 480.0;
  return a;
}

}  // namespace

TEST_CASE("arrival picture: bars, markers and the no-hit sentence") {
  const occulta::fit::TargetArrival a = made_arrivals();
  const double boundary = occulta::imaging::utc_seconds_from_iso("2031-07-10T08:00:00");
  const occulta::viewer::Framebuffer picture = occulta::app::arrival_histogram(a, boundary);
  const auto dir = occulta::test::scratch_dir("arrival-picture");
  occulta::app::write_arrival_histogram(dir / "arrival_earth.png", a, boundary);
  REQUIRE(std::filesystem::exists(dir / "arrival_earth.png"));
  CHECK(picture.width >= 720);
  CHECK(picture.height >= 300);

  // The bar colour (150, 150, 162) by columns along one row a third of the way up: the
  // 16:30 bin (6 members, the tallest) must reach it, and bins with no member must not.
  const auto is_bar = [&](int x, int y) { return (picture.at(x, y) & 0x00FFFFFFu) == ((162u << 16) | (150u << 8) | 150u); };
  const auto is_median = [&](int x, int y) { return (picture.at(x, y) & 0x00FFFFFFu) == ((80u << 16) | (90u << 8) | 255u); };
  int bar_columns_low = 0, median_columns = 0;
  const int low_row = picture.height * 2 / 3;
  for (int x = 0; x < picture.width; ++x) {
    bar_columns_low += is_bar(x, low_row);
    median_columns += is_median(x, low_row);
  }
  // The bars' total width at that row: the 13:30, 16:30 and 19:30 bins at least (3 bins of
  // one hour-step each, a few pixels wide each), not the whole axis.
  CHECK(bar_columns_low > 10);
  CHECK(bar_columns_low < picture.width / 2);
  CHECK(median_columns == 2);  // the p50 marker, two pixels wide

  // The caution's two lines along the bottom, below the axis label: text there.
  int caution_pixels = 0;
  for (int y = picture.height - 36; y < picture.height; ++y)
    for (int x = 0; x < picture.width; ++x) caution_pixels += (picture.at(x, y) & 0xFF) > 120;
  CHECK(caution_pixels > 300);

  // No member arrives: one sentence, no bars.
  occulta::fit::TargetArrival none;
  none.target.name = "probe";
  none.members = 20;
  const occulta::viewer::Framebuffer empty = occulta::app::arrival_histogram(none, boundary);
  int bar_pixels = 0, lit = 0;
  for (const std::uint32_t p : empty.pixels) {
    bar_pixels += (p & 0x00FFFFFFu) == ((162u << 16) | (150u << 8) | 150u);
    lit += ((p & 0xFF) > 128);
  }
  CHECK(bar_pixels == 0);
  CHECK(lit > 50);  // the sentence's glyphs
}
