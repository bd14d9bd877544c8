// tests/imaging/register_test.cpp — imaging/register: frames with shifted, rotated and
// rescaled WCS land on one north-up grid where the hand model of the WCS
// (frame_maker.hpp) says they should.
#include <cmath>
#include <limits>
#include <vector>

#include <doctest/doctest.h>

#include "imaging/register.hpp"
#include "tests/imaging/frame_maker.hpp"

namespace oi = occulta::imaging;
using occulta::test::frame_spec;
using occulta::test::gaussian;
using occulta::test::hand_rs_per_px;
using occulta::test::paint;

namespace {

struct SkyPoint {
  double west_rs, north_rs;
};
const std::vector<SkyPoint> kBlobs = {{3.1, 1.7}, {-4.2, 2.5}, {0.7, -5.3}, {-2.2, -2.9}, {5.5, -1.1}};

// Intensity-weighted centroid in a window around `guess` (background is zero).
cv::Point2d centroid(const cv::Mat& image, cv::Point2d guess, int half) {
  double sum = 0, sx = 0, sy = 0;
  for (int y = int(guess.y) - half; y <= int(guess.y) + half; ++y)
    for (int x = int(guess.x) - half; x <= int(guess.x) + half; ++x) {
      const float v = image.at<float>(y, x);
      REQUIRE(std::isfinite(v));
      sum += v;
      sx += v * x;
      sy += v * y;
    }
  return {sx / sum, sy / sum};
}

// Registers a frame of `spec` with blobs at kBlobs onto `grid`; returns the worst error
// of the blob centroids against where north-up, west-+x says they must be.
double worst_blob_error(const oi::GeometrySpec& spec, const oi::RegisteredGrid& grid, double sigma_grid_px) {
  const double sigma_rs = sigma_grid_px * grid.rs_per_px;
  const cv::Mat pixels = paint(spec, [&](double w, double n) {
    double v = 0;
    for (const auto& b : kBlobs) v += gaussian(w - b.west_rs, n - b.north_rs, sigma_rs);
    return v;
  });
  oi::Header header;
  oi::write_geometry(header, spec);
  const oi::ImageGeometry geometry = oi::read_geometry(header, "test frame");
  const oi::Registration registration = oi::make_registration(geometry, grid);
  CHECK(registration.max_fit_residual_px < 1e-3);  // both TAN about Sun centre: exactly affine
  cv::Mat registered;
  oi::register_frame(pixels, registration, registered);
  double worst = 0;
  for (const auto& b : kBlobs) {
    const cv::Point2d expected(grid.sun_center_px.x() + b.west_rs / grid.rs_per_px,
                               grid.sun_center_px.y() + b.north_rs / grid.rs_per_px);
    const cv::Point2d found = centroid(registered, expected, int(std::ceil(5 * sigma_grid_px)));
    worst = std::max(worst, std::hypot(found.x - expected.x, found.y - expected.y));
  }
  MESSAGE("worst blob error " << worst << " px");
  return worst;
}

oi::RegisteredGrid reference_grid() {
  const auto spec = frame_spec(384, 191.5, 191.5, 60.0, 0.0);
  return {384, 384, {191.5, 191.5}, hand_rs_per_px(spec)};
}

}  // namespace

TEST_CASE("register: recovers a known sub-pixel shift and rotation to 0.05 px") {
  // Same scale as the grid, Sun centre off by (+7.37, −4.19) px, roll 23.4°.
  const auto grid = reference_grid();
  CHECK(worst_blob_error(frame_spec(384, 198.87, 187.31, 60.0, 23.4), grid, 2.2) < 0.05);
  // A negative roll, a shift of a fraction of a pixel only.
  CHECK(worst_blob_error(frame_spec(384, 191.73, 191.06, 60.0, -31.0), grid, 2.2) < 0.05);
}

TEST_CASE("register: a frame of another size and scale lands on the same grid") {
  // Half the pixels at twice the angular scale (binned 2×2), and rolled: a size change mid
  // sequence is resampled onto the common grid.
  const auto grid = reference_grid();
  CHECK(worst_blob_error(frame_spec(192, 96.2, 95.1, 120.0, 12.0), grid, 3.0) < 0.05);
}

TEST_CASE("register: no-data regions stay NaN and never smear into data") {
  const auto grid = reference_grid();
  const auto spec = frame_spec(384, 195.4, 188.8, 60.0, 17.0);
  const double hole_rs = 40 * grid.rs_per_px;
  cv::Mat pixels = paint(spec, [&](double w, double n) {
    return std::hypot(w, n) < hole_rs ? std::numeric_limits<double>::quiet_NaN() : 1.0;
  });
  oi::Header header;
  oi::write_geometry(header, spec);
  const auto registration = oi::make_registration(oi::read_geometry(header, "t"), grid);
  cv::Mat registered;
  oi::register_frame(pixels, registration, registered);
  int finite = 0, nan_inside = 0, inside = 0, beyond_edge_finite = 0;
  for (int y = 0; y < grid.height; ++y)
    for (int x = 0; x < grid.width; ++x) {
      const float v = registered.at<float>(y, x);
      const double d = std::hypot(x - grid.sun_center_px.x(), y - grid.sun_center_px.y());
      if (std::isfinite(v)) {
        ++finite;
        CHECK_MESSAGE(std::abs(v - 1.0f) < 1e-6f, "smear at " << x << "," << y);  // a mix of NaN and 1 would not be 1
      }
      if (d < 40 - 1.5) {
        ++inside;
        if (std::isnan(v)) ++nan_inside;
      }
      // The rotated frame leaves the grid's corners uncovered: those must be NaN, not 0.
      const cv::Vec2d src = registration.grid_to_source * cv::Vec3d(x, y, 1.0);
      if ((src[0] < -1 || src[1] < -1 || src[0] > spec.width || src[1] > spec.height) && std::isfinite(v))
        ++beyond_edge_finite;
    }
  CHECK(finite > grid.width * grid.height / 2);
  CHECK(nan_inside == inside);
  CHECK(beyond_edge_finite == 0);
}

TEST_CASE("register: tables are built once per geometry and reused") {
  const auto grid = reference_grid();
  oi::RegistrationCache cache(grid);
  oi::Header a, b;
  oi::write_geometry(a, frame_spec(384, 195.4, 188.8, 60.0, 17.0));
  oi::write_geometry(b, frame_spec(384, 195.9, 188.8, 60.0, 17.0));
  const auto ga = oi::read_geometry(a, "a"), gb = oi::read_geometry(b, "b");
  cache.for_geometry(ga);
  cache.for_geometry(oi::read_geometry(a, "a again"));
  CHECK(cache.builds() == 1);
  cache.for_geometry(gb);
  CHECK(cache.builds() == 2);
}
