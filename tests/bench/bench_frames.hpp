// tests/bench/bench_frames.hpp — the benchmarks' synthetic frames: 1024² int16
// Rice-compressed FITS, a corona falling off with height, photon-like noise, occulter and
// field stop, a bright front moving out; and a pointing that moves every frame, as a
// spacecraft's does (issue 18): the Sun centre steps by up to ±2 px per axis from one frame
// to the next, and the scene moves with it. Deterministic (fixed seed).
#pragma once

#include <cmath>
#include <filesystem>
#include <limits>
#include <string>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/constants.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/time.hpp"

namespace occulta::bench {

constexpr int kFrameSize = 1024;
constexpr double kFirstFrameUtcS = 9.7e8;  // an invented time in 2030
constexpr double kCadenceS = 720.0;

// Frame k's Sun centre: around (511.7, 514.2), moved by ±1 px per axis (uniform), so two
// consecutive frames differ by up to ±2 px.
inline Eigen::Vector2d bench_sun_center(cv::RNG& rng) {
  return {511.7 + rng.uniform(-1.0, 1.0), 514.2 + rng.uniform(-1.0, 1.0)};
}

inline std::vector<std::filesystem::path> write_bench_frames(const std::filesystem::path& dir, int count,
                                                             bool moving_pointing = true) {
  imaging::GeometrySpec spec;
  spec.width = spec.height = kFrameSize;
  spec.observer = imaging::observer_from_degrees(0.0, 3.0, 0.99 * occulta::kAuKm);
  const double rs_arcsec = imaging::solar_angular_radius_rad(spec.observer.dist_km) * occulta::kArcsecPerRad;
  const double rs_per_px = 16.0 / 512.0;
  spec.arcsec_per_px = rs_per_px * rs_arcsec;
  spec.roll_deg = 1.5;
  cv::RNG rng(424242), pointing(2718);
  std::vector<std::filesystem::path> paths;
  cv::Mat pixels(kFrameSize, kFrameSize, CV_32FC1), noise(kFrameSize, kFrameSize, CV_32FC1);
  for (int k = 0; k < count; ++k) {
    spec.sun_center_px = moving_pointing ? bench_sun_center(pointing) : Eigen::Vector2d(511.7, 514.2);
    rng.fill(noise, cv::RNG::NORMAL, 0.0, 1.0);
    const double front_rs = 3.0 + 0.6 * k;
    for (int y = 0; y < kFrameSize; ++y)
      for (int x = 0; x < kFrameSize; ++x) {
        const double dx = (x - spec.sun_center_px.x()) * rs_per_px, dy = (y - spec.sun_center_px.y()) * rs_per_px;
        const double h = std::hypot(dx, dy);
        if (h < 2.2 || h > 15.5) {
          pixels.at<float>(y, x) = std::numeric_limits<float>::quiet_NaN();
          continue;
        }
        const double pa = std::atan2(-dx, dy);
        double v = 4e4 / (h * h * h) * (1.0 + 0.3 * std::cos(2 * pa));
        if (std::abs(pa - 1.2) < 0.4 && std::abs(h - front_rs) < 0.4) v *= 1.3;
        // DN for a 10 s exposure; noise ∝ √signal as photon noise is.
        pixels.at<float>(y, x) = float(10.0 * (v + std::sqrt(v) * noise.at<float>(y, x)));
      }
    imaging::Header header;
    imaging::write_geometry(header, spec);
    header.set_text("DATE-OBS", imaging::iso_from_utc_seconds(kFirstFrameUtcS + kCadenceS * k));
    header.set_real("EXPTIME", 10.0);
    paths.push_back(dir / ("frame" + std::to_string(1000 + k) + ".fits"));
    imaging::FitsWriteOptions options;
    options.pixels = imaging::FitsWriteOptions::Pixels::ScaledInt16;
    options.rice = true;
    imaging::write_fits(paths.back(), pixels, header, options);
  }
  return paths;
}

}  // namespace occulta::bench
