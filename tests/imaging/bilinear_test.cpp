// tests/imaging/bilinear_test.cpp — imaging/bilinear against the OpenCV steps it stands
// for (float tables float(A · xy), cv::convertMaps to CV_16SC2, cv::remap INTER_LINEAR with
// a NaN border, the drop mask set to NaN), bit for bit on every sample: rounding ties,
// every 1/32-pixel fraction, points on and past the frame's edges, NaN and ±∞ pixels, and
// the chain's polar unwrap of moving pointings.
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <optional>
#include <random>
#include <tuple>

#include <doctest/doctest.h>
#include <opencv2/imgproc.hpp>

#include "imaging/bilinear.hpp"
#include "imaging/calibrate.hpp"
#include "imaging/polar.hpp"
#include "imaging/register.hpp"
#include "tests/imaging/frame_maker.hpp"

namespace oi = occulta::imaging;
namespace bl = occulta::imaging::bilinear;
using occulta::test::frame_spec;
using occulta::test::hand_rs_per_px;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// The OpenCV steps, written out here: each point (bilinear.hpp's formula, in double), the
// affine in double, to float; then cv::convertMaps and cv::remap; then the drop mask.
cv::Mat opencv_steps(const cv::Mat& frame, const bl::CirclePoints& p, const cv::Matx23d& a, const cv::Mat& drop) {
  cv::Mat map(p.rows(), p.cols(), CV_32FC2), xy, frac, out;
  for (int r = 0; r < p.rows(); ++r)
    for (int c = 0; c < p.cols(); ++c) {
      const double x = p.cx - p.radius[std::size_t(r)] * p.sin[std::size_t(c)];
      const double y = p.cy + p.radius[std::size_t(r)] * p.cos[std::size_t(c)];
      map.at<cv::Vec2f>(r, c) = {float(a(0, 0) * x + a(0, 1) * y + a(0, 2)), float(a(1, 0) * x + a(1, 1) * y + a(1, 2))};
    }
  cv::convertMaps(map, cv::noArray(), xy, frac, CV_16SC2);
  cv::remap(frame, out, xy, frac, cv::INTER_LINEAR, cv::BORDER_CONSTANT, cv::Scalar(kNaN));
  if (!drop.empty()) out.setTo(kNaN, drop);
  return out;
}

// How many samples differ in their bits (NaN = NaN when the bits are the same).
int differing(const cv::Mat& a, const cv::Mat& b) {
  REQUIRE(a.size() == b.size());
  REQUIRE(a.type() == CV_32FC1);
  REQUIRE(b.type() == CV_32FC1);
  int n = 0;
  for (int r = 0; r < a.rows; ++r)
    for (int c = 0; c < a.cols; ++c) n += std::memcmp(&a.at<float>(r, c), &b.at<float>(r, c), sizeof(float)) != 0;
  return n;
}

// Points at (x, y) = (−s, k) exactly: centre 0, one circle of radius 1, so any coordinates
// can be asked for through `sin` and `cos`.
bl::CirclePoints points_at(const std::vector<cv::Point2d>& xy) {
  bl::CirclePoints p;
  p.radius = {1.0};
  for (const cv::Point2d& q : xy) {
    p.sin.push_back(-q.x);
    p.cos.push_back(q.y);
  }
  return p;
}

// Without AVX-512 the chain takes the OpenCV steps themselves, and there is nothing to compare.
bool avx512() {
  const bool yes = bl::available(cv::Mat(8, 8, CV_32FC1));
  if (!yes) MESSAGE("no AVX-512 on this CPU: imaging/bilinear is not used, nor tested");
  return yes;
}

cv::Mat random_frame(int width, int height, std::uint32_t seed) {
  cv::Mat frame(height, width, CV_32FC1);
  cv::RNG rng(seed);
  rng.fill(frame, cv::RNG::UNIFORM, -50.0, 400.0);
  return frame;
}

}  // namespace

TEST_CASE("bilinear: every 1/32-pixel fraction and rounding tie gives cv::remap's bits") {
  if (!avx512()) return;
  const cv::Mat frame = random_frame(37, 29, 1);
  std::vector<cv::Point2d> xy;
  // Every fraction pair at a few pixels, and the midpoints between fractions (u · 32 an
  // exact half: cvRound takes the even neighbour, so 0.5/32 and 1.5/32 round differently).
  for (int fy = 0; fy < 64; ++fy)
    for (int fx = 0; fx < 64; ++fx) xy.push_back({3.0 + fx / 64.0 + (fy % 7), 5.0 + fy / 64.0 + (fx % 5)});
  const bl::CirclePoints p = points_at(xy);
  for (const cv::Matx23d& a : {cv::Matx23d(1, 0, 0, 0, 1, 0), cv::Matx23d(1, 0, 0.25 / 32, 0, 1, -0.75 / 32),
                               cv::Matx23d(0.98, 0.17, 1.37, -0.17, 0.98, 2.03)}) {
    cv::Mat out;
    bl::sample_affine(frame, p, a, {}, out);
    CHECK(differing(out, opencv_steps(frame, p, a, {})) == 0);
    CHECK(cv::countNonZero(out == out) == int(xy.size()));  // all inside: every sample has data
  }
}

TEST_CASE("bilinear: points on, past and far beyond the edges, and NaN points, are NaN where cv::remap's are") {
  if (!avx512()) return;
  const cv::Mat frame = random_frame(23, 17, 2);
  std::vector<cv::Point2d> xy;
  for (double x = -2.0; x <= 24.0; x += 0.37)
    for (double y : {-1.5, -1.0, -0.02, 0.0, 0.01, 7.3, 15.0, 15.98, 16.0, 16.01, 18.0}) xy.push_back({x, y});
  for (double y = -2.0; y <= 18.0; y += 0.41)
    for (double x : {-1.0, -0.01, 0.0, 21.0, 21.99, 22.0, 22.004}) xy.push_back({x, y});
  for (double far : {1e4, -1e4, 3.3e4, 1e6, -1e9, 1e12}) xy.push_back({far, 3.0}), xy.push_back({4.0, far});
  xy.push_back({kNaN, 3.0});
  xy.push_back({4.0, kNaN});
  xy.push_back({std::numeric_limits<double>::infinity(), 3.0});
  const bl::CirclePoints p = points_at(xy);
  cv::Mat out;
  bl::sample_affine(frame, p, cv::Matx23d(1, 0, 0, 0, 1, 0), {}, out);
  const cv::Mat expected = opencv_steps(frame, p, cv::Matx23d(1, 0, 0, 0, 1, 0), {});
  CHECK(differing(out, expected) == 0);
  // Both kinds occur: the comparison covers data and no data.
  const int with_data = cv::countNonZero(expected == expected);
  CHECK(with_data > 100);
  CHECK(with_data < int(xy.size()) - 100);
}

TEST_CASE("bilinear: NaN and ±∞ pixels reach the samples that read them, as in cv::remap") {
  if (!avx512()) return;
  cv::Mat frame = random_frame(64, 48, 3);
  frame(cv::Rect(10, 10, 6, 5)).setTo(kNaN);
  frame.at<float>(30, 40) = std::numeric_limits<float>::infinity();
  frame.at<float>(31, 41) = -std::numeric_limits<float>::infinity();
  frame.at<float>(20, 50) = -0.0f;
  std::vector<cv::Point2d> xy;
  std::mt19937 rng(4);
  std::uniform_real_distribution<double> x(-1.0, 64.0), y(-1.0, 48.0);
  for (int k = 0; k < 5000; ++k) xy.push_back({x(rng), y(rng)});
  for (int k = 0; k < 400; ++k) xy.push_back({8.0 + k % 20 * 0.5, 8.0 + k / 20 * 0.5});  // over the NaN patch
  for (int k = 0; k < 100; ++k) xy.push_back({39.0 + k % 10 * 0.3, 29.0 + k / 10 * 0.3});   // over ±∞
  const bl::CirclePoints p = points_at(xy);
  const cv::Matx23d a(0.7, -0.2, 3.1, 0.25, 0.9, -1.3);
  cv::Mat out;
  bl::sample_affine(frame, p, a, {}, out);
  CHECK(differing(out, opencv_steps(frame, p, a, {})) == 0);
}

TEST_CASE("bilinear: the chain's unwrap of moving pointings equals the tables' way, drop mask and odd widths too") {
  if (!avx512()) return;
  // The chain's case (chain.cpp): polar samples of a registered grid, sent through each
  // frame's registration onto its raw pixels, the keep-mask's drop on the polar grid. The
  // reference is polar.cpp's table path, which the chain takes without AVX-512.
  const oi::RegisteredGrid grid{300, 300, {149.5, 149.5}, hand_rs_per_px(frame_spec(300, 149.5, 149.5, 60.0, 0.0))};
  const oi::OcculterRadii radii{2.3, 6.8, oi::OcculterRadii::Origin::Caller};
  oi::RegistrationCache cache(grid, oi::annulus_keep_mask(grid, radii));
  int checked = 0;
  // PA steps giving 720 columns and 514 (not a multiple of 16: the last vector is partial).
  for (const double pa_step : {0.5, 0.7}) {
    const oi::PolarGrid polar = oi::make_polar_grid(grid, 2.2, 7.0, pa_step);
    std::optional<oi::PolarSampling> sampling;
    for (const auto& [sx, sy, roll] : {std::tuple{149.5, 149.5, 0.0}, std::tuple{150.7, 148.2, 0.4},
                                       std::tuple{148.9, 150.1, -0.3}, std::tuple{151.3, 151.9, 1.1}}) {
      oi::Header header;
      const oi::GeometrySpec spec = frame_spec(300, sx, sy, 60.0, roll);
      oi::write_geometry(header, spec);
      const oi::Registration& r = cache.for_geometry(oi::read_geometry(header, "t"));
      if (!sampling) {
        sampling = oi::make_polar_sampling(grid, polar, r.drop);
        // A drop mask of its own, whatever the keep-mask's is: every 7th sample and a block.
        sampling->drop = cv::Mat(polar.height_count, polar.pa_count, CV_8UC1, cv::Scalar(0));
        for (int i = 0; i < polar.height_count; ++i)
          for (int j = i % 7; j < polar.pa_count; j += 7) sampling->drop.at<std::uint8_t>(i, j) = 1;
        sampling->drop(cv::Rect(100, 10, 40, 5)).setTo(255);
      }
      cv::Mat raw = random_frame(300, 300, std::uint32_t(10 + checked)), fast, tables;
      raw(cv::Rect(140, 140, 20, 20)).setTo(kNaN);  // an occulter's no data
      bl::sample_affine(raw, sampling->points, r.grid_to_source, sampling->drop, fast);
      oi::to_polar(raw, oi::make_polar_maps(r, *sampling), tables);
      CHECK(differing(fast, tables) == 0);
      CHECK(fast.cols == polar.pa_count);
      CHECK(cv::countNonZero(fast == fast) > fast.total() / 2);  // mostly data
      ++checked;
    }
  }
  CHECK(checked == 8);
}

TEST_CASE("bilinear: the rows shared among threads give what one thread gives") {
  if (!avx512()) return;
  const cv::Mat frame = random_frame(512, 512, 5);
  const oi::RegisteredGrid grid{512, 512, {255.5, 255.5}, 0.02};
  const oi::PolarGrid polar = oi::make_polar_grid(grid, 1.0, 5.0, 0.5);
  const bl::CirclePoints p = oi::polar_points(grid, polar);
  const cv::Matx23d a(1.0, 0.01, 0.6, -0.01, 1.0, -1.2);
  const int threads = cv::getNumThreads();
  cv::Mat one, many;
  cv::setNumThreads(1);
  bl::sample_affine(frame, p, a, {}, one);
  cv::setNumThreads(4);
  bl::sample_affine(frame, p, a, {}, many);
  cv::setNumThreads(threads);
  CHECK(differing(one, many) == 0);
  CHECK(differing(one, opencv_steps(frame, p, a, {})) == 0);
}
