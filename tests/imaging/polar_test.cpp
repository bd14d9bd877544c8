// tests/imaging/polar_test.cpp — imaging/polar: rings become flat lines, PA counts
// counter-clockwise from solar north through east whatever the roll, and the NRGF.
#include <cmath>
#include <cstdint>
#include <limits>
#include <optional>
#include <tuple>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgproc.hpp>

#include "imaging/calibrate.hpp"
#include "imaging/constants.hpp"
#include "imaging/polar.hpp"
#include "imaging/register.hpp"
#include "tests/imaging/frame_maker.hpp"

namespace oi = occulta::imaging;
using occulta::test::frame_spec;
using occulta::test::gaussian;
using occulta::test::hand_rs_per_px;
using occulta::test::paint;

namespace {

// A frame of `spec` through registration (grid from a north-up reference) to polar form.
cv::Mat polar_of(const oi::GeometrySpec& spec, const cv::Mat& pixels, oi::RegisteredGrid& grid, oi::PolarGrid& polar,
                 double inner_rs, double outer_rs, double pa_step_deg) {
  grid = {spec.width, spec.height, {0.5 * (spec.width - 1), 0.5 * (spec.height - 1)}, hand_rs_per_px(spec)};
  oi::Header header;
  oi::write_geometry(header, spec);
  cv::Mat registered, out;
  oi::register_frame(pixels, oi::make_registration(oi::read_geometry(header, "t"), grid), registered);
  polar = oi::make_polar_grid(grid, inner_rs, outer_rs, pa_step_deg);
  oi::to_polar(registered, oi::make_polar_maps(grid, polar), out);
  return out;
}

// Column of the largest value in a polar image.
int brightest_column(const cv::Mat& polar) {
  cv::Point at;
  cv::minMaxLoc(polar, nullptr, nullptr, nullptr, &at);
  return at.x;
}

}  // namespace

TEST_CASE("polar: a ring of radius R drawn at a known centre becomes a flat line at R") {
  // Ring drawn about the frame's Sun centre (off the frame centre, rolled frame).
  const auto spec = frame_spec(400, 207.3, 193.6, 60.0, 14.0);
  const double ring_rs = 4.0, width_rs = 0.08;
  const cv::Mat pixels = paint(spec, [&](double w, double n) {
    const double d = std::hypot(w, n) - ring_rs;
    return std::exp(-d * d / (2 * width_rs * width_rs));
  });
  oi::RegisteredGrid grid;
  oi::PolarGrid polar;
  const cv::Mat p = polar_of(spec, pixels, grid, polar, 2.0, 6.0, 1.0);
  REQUIRE(polar.pa_count == 360);
  double worst = 0, sum = 0;
  for (int j = 0; j < polar.pa_count; ++j) {
    int best = 1;
    for (int i = 1; i + 1 < polar.height_count; ++i)
      if (p.at<float>(i, j) > p.at<float>(best, j)) best = i;
    // Parabola through the peak and its neighbours (common practice for a sub-bin peak).
    const double a = p.at<float>(best - 1, j), b = p.at<float>(best, j), c = p.at<float>(best + 1, j);
    const double h = polar.height_rs(best) + 0.5 * (a - c) / (a - 2 * b + c) * polar.height_step_rs;
    worst = std::max(worst, std::abs(h - ring_rs));
    sum += h;
  }
  MESSAGE("ring: worst |h − R| = " << worst << " R☉ (" << worst / grid.rs_per_px << " px), mean " << sum / 360);
  CHECK(worst < 0.1 * grid.rs_per_px);
}

TEST_CASE("polar: a sky point due east lands at PA 90° and keeps it when the header rolls by 30°") {
  // PA counter-clockwise from solar north through east (Thompson 2006; common practice):
  // north 0°, east 90°, south 180°, west 270°. East is −θx (solar west is +θx).
  struct Case {
    double west_rs, north_rs, pa_deg;
  };
  for (const Case& point : {Case{-5.0, 0.0, 90.0}, Case{0.0, 5.0, 0.0}, Case{0.0, -5.0, 180.0}, Case{5.0, 0.0, 270.0},
                            Case{-5.0 * std::sin(0.5), 5.0 * std::cos(0.5), 0.5 * occulta::kDegPerRad}}) {
    for (double roll : {0.0, 30.0}) {
      CAPTURE(point.pa_deg);
      CAPTURE(roll);
      const auto spec = frame_spec(400, 199.5, 199.5, 60.0, roll);
      const cv::Mat pixels =
          paint(spec, [&](double w, double n) { return gaussian(w - point.west_rs, n - point.north_rs, 0.15); });
      oi::RegisteredGrid grid;
      oi::PolarGrid polar;
      const cv::Mat p = polar_of(spec, pixels, grid, polar, 2.0, 7.0, 0.5);
      const double found = polar.pa_deg(brightest_column(p));
      CHECK(std::abs(std::remainder(found - point.pa_deg, 360.0)) <= 0.5 * polar.pa_step_deg + 1e-9);
    }
  }
  // On the north-up grid, east is to the left (−x) and north up (+y, row 0 at the bottom).
  const oi::RegisteredGrid grid{101, 101, {50.0, 50.0}, 0.1};
  CHECK(oi::grid_pixel(grid, 90.0, 2.0).x == doctest::Approx(30.0));
  CHECK(oi::grid_pixel(grid, 0.0, 2.0).y == doctest::Approx(70.0));
  CHECK(oi::grid_pa_deg(grid, {30.0, 50.0}) == doctest::Approx(90.0));
  CHECK(oi::grid_pa_deg(grid, {50.0, 70.0}) == doctest::Approx(0.0));
  CHECK(oi::grid_pa_deg(grid, {70.0, 50.0}) == doctest::Approx(270.0));
}

TEST_CASE("polar: NRGF gives every height zero mean and unit spread over PA") {
  // Morgan, Habbal & Woo (2006): I′ = (I − ⟨I⟩_PA) / σ_PA at each height. A brightness
  // a(h) + b(h)·g(PA) therefore filters to the standardised g, whatever a and b are.
  cv::Mat polar(50, 360, CV_32FC1);
  std::vector<double> g(360);
  double gm = 0;
  for (int j = 0; j < 360; ++j) gm += (g[j] = std::sin(3 * j * occulta::kRadPerDeg) + 0.3 * std::cos(j * 0.05));
  gm /= 360;
  double gs = 0;
  for (double v : g) gs += (v - gm) * (v - gm);
  gs = std::sqrt(gs / 359);
  for (int i = 0; i < 50; ++i)
    for (int j = 0; j < 360; ++j) polar.at<float>(i, j) = float(1e3 / std::pow(2.0 + i * 0.1, 3) * (1 + 0.2 * g[j]) + i);
  polar.at<float>(7, 11) = std::numeric_limits<float>::quiet_NaN();
  const cv::Mat f = oi::nrgf(polar);
  CHECK(std::isnan(f.at<float>(7, 11)));
  for (int i : {0, 20, 49})
    for (int j : {0, 90, 200}) CHECK(f.at<float>(i, j) == doctest::Approx((g[j] - gm) / gs).epsilon(1e-3));
}

TEST_CASE("polar: tables from a shared sampling equal tables built from scratch, bit for bit, for moving pointings") {
  // The chain builds the affine-free part (PolarSampling) once per view and only the affine
  // part per pointing. Reference: the tables written out here the way make_polar_maps built
  // them before the split (grid pixel in double, the affine in double, rounded to float,
  // cv::convertMaps; the drop mask from the grid's masked pattern through the grid's tables).
  const oi::RegisteredGrid grid{300, 300, {149.5, 149.5}, hand_rs_per_px(frame_spec(300, 149.5, 149.5, 60.0, 0.0))};
  const oi::PolarGrid polar = oi::make_polar_grid(grid, 2.2, 7.0, 1.0);
  const oi::OcculterRadii radii{2.3, 6.8, oi::OcculterRadii::Origin::Caller};
  oi::RegistrationCache cache(grid, oi::annulus_keep_mask(grid, radii));
  const auto reference = [&](const oi::Registration& r) {
    cv::Mat map(polar.height_count, polar.pa_count, CV_32FC2), id(map.size(), CV_32FC2);
    for (int i = 0; i < polar.height_count; ++i)
      for (int j = 0; j < polar.pa_count; ++j) {
        const double rr = polar.height_rs(i) / grid.rs_per_px, pa = polar.pa_deg(j) * occulta::kRadPerDeg;
        const double x = grid.sun_center_px.x() - rr * std::sin(pa), y = grid.sun_center_px.y() + rr * std::cos(pa);
        const cv::Matx23d& a = r.grid_to_source;
        map.at<cv::Vec2f>(i, j) = {float(a(0, 0) * x + a(0, 1) * y + a(0, 2)), float(a(1, 0) * x + a(1, 1) * y + a(1, 2))};
        id.at<cv::Vec2f>(i, j) = {float(x), float(y)};
      }
    oi::PolarMaps maps;
    cv::convertMaps(map, cv::noArray(), maps.map_xy, maps.map_frac, CV_16SC2);
    oi::PolarMaps grid_maps;
    cv::convertMaps(id, cv::noArray(), grid_maps.map_xy, grid_maps.map_frac, CV_16SC2);
    cv::Mat pattern(grid.height, grid.width, CV_32FC1, cv::Scalar(0.0)), unwrapped;
    pattern.setTo(std::numeric_limits<double>::quiet_NaN(), r.drop);
    cv::remap(pattern, unwrapped, grid_maps.map_xy, grid_maps.map_frac, cv::INTER_LINEAR, cv::BORDER_CONSTANT,
              cv::Scalar(std::numeric_limits<double>::quiet_NaN()));
    maps.drop = cv::Mat(unwrapped.size(), CV_8UC1);
    for (int i = 0; i < unwrapped.rows; ++i)
      for (int j = 0; j < unwrapped.cols; ++j) maps.drop.at<std::uint8_t>(i, j) = std::isnan(unwrapped.at<float>(i, j)) ? 255 : 0;
    return maps;
  };
  const auto same = [](const cv::Mat& a, const cv::Mat& b) {
    return a.size() == b.size() && a.type() == b.type() && cv::norm(a, b, cv::NORM_INF) == 0.0;
  };
  std::optional<oi::PolarSampling> sampling;
  int checked = 0;
  // Sun centres stepping by up to ±2 px, rolls and scales a little off the grid's.
  for (const auto& [sx, sy, roll] : {std::tuple{149.5, 149.5, 0.0}, std::tuple{150.7, 148.2, 0.4},
                                     std::tuple{148.9, 150.1, -0.3}, std::tuple{151.3, 151.9, 1.1}}) {
    oi::Header header;
    oi::write_geometry(header, frame_spec(300, sx, sy, 60.0, roll));
    const oi::Registration& r = cache.for_geometry(oi::read_geometry(header, "t"));
    if (!sampling) sampling = oi::make_polar_sampling(grid, polar, r.drop);
    const oi::PolarMaps fast = oi::make_polar_maps(r, *sampling), expected = reference(r);
    CHECK(same(fast.map_xy, expected.map_xy));
    CHECK(same(fast.map_frac, expected.map_frac));
    CHECK(same(fast.drop, expected.drop));
    CHECK(cv::countNonZero(fast.drop) > polar.pa_count);  // the mask does cut samples here
    ++checked;
  }
  CHECK(cache.builds() == checked);  // a new pointing each time
}

TEST_CASE("polar: the keep-mask drops the samples within a pixel of the occulter and the field stop, whole rings") {
  // A registered frame masked outside the annulus is NaN there, and a bilinear sample that
  // reads a masked grid pixel is NaN: so every sample below the inner radius or above the
  // outer one (by more than a pixel) is dropped, and none well inside. Until 2026-12 the
  // mask was all but empty (cv::compare's CMP_NE does not flag NaN in its vector code).
  const oi::RegisteredGrid grid{400, 400, {199.5, 199.5}, 0.05};
  const oi::OcculterRadii radii{2.5, 8.0, oi::OcculterRadii::Origin::Caller};
  const cv::Mat keep = oi::annulus_keep_mask(grid, radii);
  for (const double pa_step : {0.5, 0.7, 1.0}) {
    const oi::PolarGrid polar = oi::make_polar_grid(grid, 2.2, 8.4, pa_step);
    const oi::PolarSampling sampling = oi::make_polar_sampling(grid, polar, keep == 0);
    REQUIRE(sampling.drop.size() == cv::Size(polar.pa_count, polar.height_count));
    int outside = 0, inside = 0;
    for (int i = 0; i < polar.height_count; ++i) {
      const double h = polar.height_rs(i), pixel = grid.rs_per_px;
      const int dropped = cv::countNonZero(sampling.drop.row(i));
      if (h < radii.inner_rs - 1.5 * pixel || h > radii.outer_rs + 1.5 * pixel) {
        CHECK(dropped == polar.pa_count);
        ++outside;
      } else if (h > radii.inner_rs + 1.5 * pixel && h < radii.outer_rs - 1.5 * pixel) {
        CHECK(dropped == 0);
        ++inside;
      }
    }
    CHECK(outside >= 8);  // rows below 2.43 R☉ and above 8.07 R☉
    CHECK(inside > 100);
  }
}
