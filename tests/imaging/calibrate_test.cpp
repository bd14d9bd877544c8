// tests/imaging/calibrate_test.cpp — imaging/calibrate: DN/s, occulter radii from the
// data and the header, the annulus mask, the low-percentile background.
#include <cmath>
#include <limits>
#include <vector>

#include <doctest/doctest.h>

#include "imaging/calibrate.hpp"
#include "imaging/input_error.hpp"

namespace oi = occulta::imaging;

namespace {
constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();
}

TEST_CASE("calibrate: DN become DN per second and no-data stays NaN") {
  cv::Mat pixels(2, 2, CV_32FC1, cv::Scalar(300.0));
  pixels.at<float>(1, 1) = kNaN;
  oi::to_rate(pixels, 12.0);
  CHECK(pixels.at<float>(0, 0) == doctest::Approx(25.0));
  CHECK(std::isnan(pixels.at<float>(1, 1)));
}

TEST_CASE("calibrate: occulter and field-stop radii estimated from the data") {
  const oi::RegisteredGrid grid{201, 201, {100.0, 100.0}, 0.05};
  // Data between 2.5 and 4.5 R☉ (50 and 90 px); zeros inside the occulter, NaN beyond the stop.
  cv::Mat frame(201, 201, CV_32FC1);
  for (int y = 0; y < 201; ++y)
    for (int x = 0; x < 201; ++x) {
      const double d = std::hypot(x - 100.0, y - 100.0);
      frame.at<float>(y, x) = d < 50 ? 0.0f : d > 90 ? kNaN : float(1.0 / d);
    }
  const auto radii = oi::estimate_occulter_radii(frame, grid, "f.fits");
  CHECK(radii.origin == oi::OcculterRadii::Origin::Data);
  CHECK(radii.inner_rs == doctest::Approx(2.5).epsilon(0.02));
  CHECK(radii.outer_rs == doctest::Approx(4.5).epsilon(0.02));

  const cv::Mat keep = oi::annulus_keep_mask(grid, radii);
  CHECK(keep.at<std::uint8_t>(100, 100) == 0);
  CHECK(keep.at<std::uint8_t>(100, 170) == 255);  // 70 px = 3.5 R☉
  CHECK(keep.at<std::uint8_t>(100, 195) == 0);

  cv::Mat empty(201, 201, CV_32FC1, cv::Scalar(kNaN));
  CHECK_THROWS_WITH_AS(oi::estimate_occulter_radii(empty, grid, "f.fits"), doctest::Contains("f.fits: it holds no ring"),
                       oi::InputError);
}

TEST_CASE("calibrate: occulter radii from OCC_IN and OCC_OUT") {
  oi::Header header;
  CHECK_FALSE(oi::header_occulter_radii(header));
  header.set_real("OCC_IN", 2.3);
  CHECK_FALSE(oi::header_occulter_radii(header));
  header.set_real("OCC_OUT", 15.5);
  const auto radii = oi::header_occulter_radii(header);
  REQUIRE(radii);
  CHECK(radii->inner_rs == 2.3);
  CHECK(radii->outer_rs == 15.5);
  CHECK(radii->origin == oi::OcculterRadii::Origin::Header);
  header.set_real("OCC_OUT", 1.0);  // outer inside inner: not usable
  CHECK_FALSE(oi::header_occulter_radii(header));
}

TEST_CASE("calibrate: low-percentile background is the k-th lowest value per pixel") {
  // 20 frames, 10th percentile → k = 2: the second-lowest value of each pixel (the
  // inverted-distribution definition; Debian's numpy.percentile(method="inverted_cdf")
  // gives 1 and 82 for these two pixels — run by hand when this test was written).
  const int n = 20;
  oi::LowPercentileBackground low(cv::Size(3, 1), 10.0, n);
  CHECK(low.k() == 2);
  for (int k = 0; k < n; ++k) {
    cv::Mat frame(1, 3, CV_32FC1);
    frame.at<float>(0, 0) = float((k * 7) % n);          // a permutation of 0..19
    frame.at<float>(0, 1) = k == 3 ? kNaN : float(100 - k);  // 81..100 minus one
    frame.at<float>(0, 2) = kNaN;
    low.add(frame);
  }
  const cv::Mat background = low.result();
  CHECK(background.at<float>(0, 0) == 1.0f);
  CHECK(background.at<float>(0, 1) == 82.0f);
  CHECK(std::isnan(background.at<float>(0, 2)));
}
