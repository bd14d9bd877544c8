// tests/imaging/timeheight_test.cpp — imaging/timeheight: band medians, real (uneven)
// time kept per column, gaps left empty on the time axis, time–PA maps.
#include <cmath>
#include <limits>
#include <vector>

#include <doctest/doctest.h>

#include "imaging/timeheight.hpp"

namespace oi = occulta::imaging;

namespace {

// A front at height h(t) spanning PAs [80°, 100°]; frames at uneven times with a gap.
oi::PolarSequence front_sequence(const std::vector<double>& times, double speed_rs_per_s) {
  oi::PolarSequence s;
  s.polar.pa_step_deg = 1.0;
  s.polar.pa_count = 360;
  s.polar.height_min_rs = 2.0;
  s.polar.height_step_rs = 0.05;
  s.polar.height_count = 281;  // 2 … 16 R☉
  s.utc_s = times;
  for (double t : times) {
    cv::Mat frame(s.polar.height_count, s.polar.pa_count, CV_32FC1, cv::Scalar(0.0));
    const double front = 3.0 + speed_rs_per_s * (t - times.front());
    for (int i = 0; i < frame.rows; ++i)
      for (int j = 80; j <= 100; ++j)
        if (std::abs(s.polar.height_rs(i) - front) < 0.3) frame.at<float>(i, j) = 5.0f;
    frame.at<float>(10, 90) = 1e4f;  // one outlier PA: the band median ignores it
    s.frames.push_back(frame);
  }
  return s;
}

}  // namespace

TEST_CASE("timeheight: the band median follows the front at each frame's own time") {
  const std::vector<double> times = {0, 720, 1440, 2040, 6000, 6720};  // uneven, one long gap
  const auto s = front_sequence(times, 1e-3);
  const oi::TimeMap map = oi::time_height(s, 90.0, 6.0);
  REQUIRE(map.values.cols == 6);
  CHECK(map.utc_s == times);
  CHECK(map.axis_start == 2.0);
  CHECK(map.axis_step == 0.05);
  CHECK(map.values.at<float>(10, 0) == 0.0f);  // the outlier at one PA does not show
  for (int k = 0; k < 6; ++k) {
    const double front = 3.0 + 1e-3 * times[k];
    const int row = int(std::lround((front - 2.0) / 0.05));
    CHECK(map.values.at<float>(row, k) == 5.0f);
    CHECK(map.values.at<float>(row + 10, k) == 0.0f);
  }
  // A band away from the front sees nothing.
  CHECK(cv::countNonZero(oi::time_height(s, 200.0, 6.0).values) == 0);
}

TEST_CASE("timeheight: rendering on a real time axis keeps gaps empty") {
  const std::vector<double> times = {0, 720, 1440, 2040, 6000, 6720};
  const auto s = front_sequence(times, 1e-3);
  const oi::TimeMap map = oi::time_height(s, 90.0, 6.0);
  // 72 columns of 100 s over [0, 7200): median spacing 720 s → a column is empty when no
  // frame lies within 540 s of its centre.
  const cv::Mat image = oi::render_on_time_axis(map, 0.0, 7200.0, 72);
  REQUIRE(image.cols == 72);
  const auto column_has_data = [&](int c) { return std::isfinite(image.at<float>(0, c)); };
  CHECK(column_has_data(0));    // t = 50 s, frame at 0
  CHECK(column_has_data(25));   // t = 2550 s, frame at 2040 (510 s away)
  CHECK_FALSE(column_has_data(30));  // t = 3050 s: in the gap
  CHECK_FALSE(column_has_data(50));  // t = 5050 s: in the gap
  CHECK(column_has_data(60));   // t = 6050 s, frame at 6000
  // A column shows its nearest frame: t = 1050 s → the frame at 720 s (front at 3.72 R☉).
  const int row = int(std::lround((3.72 - 2.0) / 0.05));
  CHECK(image.at<float>(row, 10) == 5.0f);
  CHECK(image.at<float>(row, 15) == 0.0f);  // t = 1550 s → frame at 1440, front moved on
}

TEST_CASE("timeheight: time–PA map at a chosen height") {
  const std::vector<double> times = {0, 600, 1200};
  const auto s = front_sequence(times, 1e-3);  // front at 3.0, 3.6, 4.2 R☉
  const oi::TimeMap map = oi::time_pa(s, 3.6, 0.1);
  REQUIRE(map.values.rows == 360);
  CHECK(map.values.at<float>(90, 0) == 0.0f);
  CHECK(map.values.at<float>(90, 1) == 5.0f);
  CHECK(map.values.at<float>(79, 1) == 0.0f);
  CHECK(map.values.at<float>(80, 1) == 5.0f);
  CHECK(map.values.at<float>(100, 1) == 5.0f);
  CHECK(map.values.at<float>(101, 1) == 0.0f);
  // A band through north wraps: PAs 355…5.
  cv::Mat north(1, 360, CV_32FC1, cv::Scalar(0.0));
  for (int j : {355, 356, 357, 358, 359, 0, 1, 2, 3, 4, 5}) north.at<float>(0, j) = 2.0f;
  oi::PolarGrid g{1.0, 360, 5.0, 0.1, 1};
  CHECK(oi::band_profile(north, g, 0.0, 5.0)[0] == 2.0f);
  CHECK(oi::band_profile(north, g, 0.0, 15.0)[0] == 0.0f);  // 11 of 31 PAs: the median is 0
}
