// The height–time panel's parts: the map along a PA, the PA it follows, the kinematic fit of
// a view's points and its σ band.
#include <cmath>

#include <doctest/doctest.h>

#include "imaging/constants.hpp"
#include "viewer/height_time.hpp"

namespace {
using namespace occulta::viewer;
}

TEST_CASE("height–time: the map is the polar running difference along the PA, one column per frame") {
  ViewPictures v;
  v.name = "east";
  v.polar.pa_step_deg = 1.0;
  v.polar.pa_count = 360;
  v.polar.height_min_rs = 3.0;
  v.polar.height_step_rs = 0.5;
  v.polar.height_count = 10;
  for (int k = 0; k < 4; ++k) {
    FramePictures f;
    f.utc_s = 1000.0 + 600.0 * k;
    f.polar = cv::Mat(10, 360, CV_32F);
    for (int r = 0; r < 10; ++r)
      for (int c = 0; c < 360; ++c) f.polar.at<float>(r, c) = float(100 * k + r + 0.01 * c);
    v.frames.push_back(f);
  }
  // Columns 268–272 about PA 270: their mean is column 270's value.
  const cv::Mat map = time_height_map(v, 270.0, 2.0);
  REQUIRE(map.rows == 10);
  REQUIRE(map.cols == 4);
  CHECK(map.at<float>(3, 2) == doctest::Approx(200 + 3 + 2.70));
  // Across north: columns 358, 359, 0, 1, 2 about PA 0 — the band wraps.
  CHECK(time_height_map(v, 0.0, 2.0).at<float>(0, 0) == doctest::Approx((3.58 + 3.59 + 0 + 0.01 + 0.02) / 5));
  const ImageExtent e = time_height_extent(v);
  CHECK(e.left == 700.0);
  CHECK(e.right == 3100.0);
  CHECK(e.bottom == 2.75);
  CHECK(e.top == 7.75);

  WindowState s;
  s.views = {"east"};
  CHECK(!height_time_pa(s, "east"));
  s.points = {{"east", 1000, 350, 4}, {"east", 1600, 10, 5}, {"west", 1600, 90, 5}};
  CHECK(std::remainder(*height_time_pa(s, "east"), 360.0) == doctest::Approx(0.0).epsilon(1e-9));
  s.height_time_pa_deg = 200;
  CHECK(*height_time_pa(s, "east") == 200);
}

TEST_CASE("height–time: the fit of a view's points follows them, and its band is its covariance") {
  ViewPictures v;
  v.name = "east";
  v.polar.height_step_rs = 0.05;
  WindowState s;
  // A straight line at 700 km/s, ±0.02 R☉ alternating: the fit's speed is 700 km/s within
  // what that scatter allows (common practice: least squares recovers a line's slope).
  const double v_rs_s = 700.0 / occulta::kSolarRadiusKm;
  for (int k = 0; k < 8; ++k)
    s.points.push_back({"east", 600.0 * k, 90.0, 3.0 + v_rs_s * 600.0 * k + (k % 2 ? 0.02 : -0.02)});
  s.points.push_back({"west", 0.0, 90.0, 9.0});  // another view's: not in this fit
  const auto fit = height_time_fit(s, v);
  REQUIRE(fit);
  CHECK(fit->n_points == 8);
  CHECK(fit->law.speed_km_s == doctest::Approx(700.0).epsilon(0.02));
  CHECK(fit->law.height_at(0.0) == doctest::Approx(3.0).epsilon(0.01));
  // At the reference time the band is the height's own σ: √C₀₀.
  CHECK(height_sigma_rs(*fit, fit->law.ref_time_s) == doctest::Approx(std::sqrt(fit->covariance(0, 0))));
  // Away from it, wider (the speed's variance adds).
  CHECK(height_sigma_rs(*fit, fit->law.ref_time_s + 3000.0) > height_sigma_rs(*fit, fit->law.ref_time_s));
  s.points.resize(2);
  CHECK(!height_time_fit(s, v));  // too few points
}
