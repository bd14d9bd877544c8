// tests/imaging/difference_test.cpp — imaging/difference: running differences, MAD noise
// normalisation; and through the chain, identical frames difference to 0 (the median
// filter: median_filter_test.cpp).
#include <algorithm>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <limits>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgproc.hpp>

#include "imaging/chain.hpp"
#include "imaging/difference.hpp"
#include "tests/imaging/frame_maker.hpp"
#include "tests/support/support.hpp"

namespace oi = occulta::imaging;
using occulta::test::frame_header;
using occulta::test::frame_spec;
using occulta::test::paint;

namespace {

// Mean and variance of the finite values.
std::pair<double, double> moments(const cv::Mat& image) {
  double sum = 0, sum2 = 0;
  long n = 0;
  for (int y = 0; y < image.rows; ++y)
    for (int x = 0; x < image.cols; ++x) {
      const double v = image.at<float>(y, x);
      if (!std::isfinite(v)) continue;
      sum += v;
      sum2 += v * v;
      ++n;
    }
  const double mean = sum / n;
  return {mean, sum2 / n - mean * mean};
}

}  // namespace

TEST_CASE("difference: running difference of identical frames is zero") {
  cv::Mat a(64, 64, CV_32FC1);
  cv::randu(a, 0.0, 100.0);
  a.at<float>(3, 4) = std::numeric_limits<float>::quiet_NaN();
  cv::Mat out;
  oi::difference(a, a.clone(), 1.0, out);
  CHECK(std::isnan(out.at<float>(3, 4)));  // no data on either side → none in the difference
  out.at<float>(3, 4) = 0.0f;
  CHECK(cv::norm(out, cv::NORM_INF) == 0.0);

  // The whole chain over three identical files: every running difference is zero wherever
  // there is data (and there is data).
  const auto dir = occulta::test::scratch_dir("difference-identical");
  const auto spec = frame_spec(128, 63.2, 64.7, 240.0, 8.0);
  const cv::Mat pixels = paint(spec, [](double w, double n) {
    const double h = std::hypot(w, n);
    return (h < 2.2 || h > 14.0) ? std::numeric_limits<double>::quiet_NaN() : 1e4 / (h * h * h) + 0.1 * w;
  });
  std::vector<std::filesystem::path> paths;
  for (int k = 0; k < 3; ++k) {
    paths.push_back(dir / ("f" + std::to_string(k) + ".fits"));
    occulta::test::write_frame(paths.back(), pixels, frame_header(spec, 1e8 + 600.0 * k, 10.0));
  }
  const auto run = oi::polar_running_differences("same", paths);
  REQUIRE(run.running.frames.size() == 2);
  for (const auto& frame : run.running.frames) {
    int finite = 0;
    for (int i = 0; i < frame.rows; ++i)
      for (int j = 0; j < frame.cols; ++j)
        if (std::isfinite(frame.at<float>(i, j))) {
          ++finite;
          CHECK(frame.at<float>(i, j) == 0.0f);
        }
    CHECK(finite > frame.rows * frame.cols / 2);
  }
}

TEST_CASE("difference: noise normalisation gives unit variance on pure noise") {
  // Gaussian noise whose σ falls with height (as photon noise of the corona does): after
  // division by the per-ring MAD σ̂ the variance is 1 in every part of the image.
  cv::RNG rng(20310604);
  cv::Mat polar(300, 720, CV_32FC1);
  for (int i = 0; i < polar.rows; ++i) {
    const double sigma = 50.0 / std::pow(1.0 + 0.02 * i, 2.5);
    for (int j = 0; j < polar.cols; ++j) polar.at<float>(i, j) = float(rng.gaussian(sigma));
  }
  const auto sigma = oi::ring_sigma(polar, 2, 2);
  oi::divide_by_rows(polar, sigma);
  const auto [mean, variance] = moments(polar);
  MESSAGE("whole image: mean " << mean << ", variance " << variance);
  CHECK(std::abs(mean) < 0.01);
  CHECK(variance == doctest::Approx(1.0).epsilon(0.02));
  // Low and high heights separately (a single global σ̂ would fail here by orders of magnitude).
  CHECK(moments(polar.rowRange(0, 30)).second == doctest::Approx(1.0).epsilon(0.05));
  CHECK(moments(polar.rowRange(270, 300)).second == doctest::Approx(1.0).epsilon(0.05));

  // One σ̂ over a Cartesian image: 1.4826 · MAD is the Gaussian σ (common practice).
  cv::Mat flat(512, 512, CV_32FC1);
  rng.fill(flat, cv::RNG::NORMAL, 10.0, 3.7);
  CHECK(oi::robust_sigma(flat) == doctest::Approx(3.7).epsilon(0.01));
  CHECK(oi::robust_sigma(flat, 4) == doctest::Approx(3.7).epsilon(0.03));
  // …and survives a few strong outliers that would wreck a standard deviation.
  for (int k = 0; k < 500; ++k) flat.at<float>(k, k) = 1e6f;
  CHECK(oi::robust_sigma(flat) == doctest::Approx(3.7).epsilon(0.02));
}

TEST_CASE("difference: a running difference scaled to a common time step") {
  // A brightness rising linearly in time: scaled to one step, differences over uneven
  // steps are equal.
  cv::Mat t0(4, 4, CV_32FC1, cv::Scalar(0.0)), t1(4, 4, CV_32FC1, cv::Scalar(2.0)), t3(4, 4, CV_32FC1, cv::Scalar(6.0));
  cv::Mat d1, d2;
  oi::difference(t1, t0, 60.0 / 60.0, d1);
  oi::difference(t3, t1, 60.0 / 120.0, d2);
  CHECK(cv::norm(d1 - d2, cv::NORM_INF) == 0.0);
}

// The MAD σ̂ as it was computed before the radix selection (difference.cpp): two
// std::nth_element, the RMS fallback summed in the order the first leaves.
float mad_sigma_by_nth_element(std::vector<float> values) {
  if (values.size() < 8) return std::numeric_limits<float>::quiet_NaN();
  const auto mid = values.begin() + std::ptrdiff_t(values.size() / 2);
  std::nth_element(values.begin(), mid, values.end());
  const float median = *mid;
  double sum2 = 0.0;
  for (float& v : values) {
    v = std::abs(v - median);
    sum2 += double(v) * v;
  }
  std::nth_element(values.begin(), mid, values.end());
  if (*mid > 0.0f) return 1.4826f * *mid;
  return float(std::sqrt(sum2 / values.size()));
}

TEST_CASE("difference: σ̂ per ring and of an image are the same bits as with std::nth_element") {
  // Rows of noise, of quantised values with ties, with negative and positive zeros, and
  // with more than half their values equal (the RMS fallback); odd and even lengths.
  cv::RNG rng(23);
  int rows_checked = 0, fallbacks = 0;
  for (const int cols : {8, 9, 240, 241, 720}) {
    cv::Mat polar(60, cols, CV_32FC1);
    rng.fill(polar, cv::RNG::NORMAL, 0.0, 3.0);
    for (int y = 0; y < polar.rows; ++y) {
      float* row = polar.ptr<float>(y);
      for (int x = 0; x < cols; ++x) {
        if (y % 4 == 1) row[x] = std::round(row[x]);                        // ties
        if (y % 4 == 2) row[x] = x % 3 ? 0.0f : (x % 2 ? -0.0f : row[x]);   // mostly ±0: fallback
        if (y % 4 == 3 && x % 5 == 0) row[x] = std::numeric_limits<float>::quiet_NaN();
      }
    }
    const std::vector<float> got = oi::ring_sigma(polar, 0, 1);
    for (int y = 0; y < polar.rows; ++y) {
      std::vector<float> values;
      for (int x = 0; x < cols; ++x)
        if (std::isfinite(polar.at<float>(y, x))) values.push_back(polar.at<float>(y, x));
      const float expected = mad_sigma_by_nth_element(values);
      CAPTURE(cols);
      CAPTURE(y);
      CHECK(std::memcmp(&got[std::size_t(y)], &expected, sizeof expected) == 0);
      ++rows_checked;
      if (y % 4 == 2) ++fallbacks;
    }
    std::vector<float> all;
    for (int y = 0; y < polar.rows; ++y)
      for (int x = 0; x < cols; ++x)
        if (std::isfinite(polar.at<float>(y, x))) all.push_back(polar.at<float>(y, x));
    const float whole = oi::robust_sigma(polar), expected = mad_sigma_by_nth_element(all);
    CHECK(std::memcmp(&whole, &expected, sizeof expected) == 0);
  }
  CHECK(rows_checked == 300);
  CHECK(fallbacks == 75);
}
