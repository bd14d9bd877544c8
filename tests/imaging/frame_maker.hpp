// tests/imaging/frame_maker.hpp — synthetic coronagraph frames for the chain's tests,
// painted from a hand model of the WCS that does not use imaging/geometry:
//
// TAN projection about Sun centre (WCS Paper II §5.1.3, from memory): the tangent-plane
// radius is R_θ = (180°/π) tan ρ, ρ the elongation, so the sky-plane height D☉ tan ρ / R☉
// of a pixel at offset q from Sun centre is |q| · CDELT(rad) · D☉ / R☉. The PC matrix of a
// roll ρ (write_geometry, the CROTA2 → PC rule of WCS Paper II §6.1, checked in
// geometry_test against astropy.wcs) takes solar west to pixel direction (cos ρ, −sin ρ)
// and solar north to (sin ρ, cos ρ).
#pragma once

#include <cmath>
#include <filesystem>
#include <string>

#include <opencv2/core.hpp>

#include "imaging/constants.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/time.hpp"

namespace occulta::test {

inline imaging::Observer near_earth() { return imaging::observer_from_degrees(0.0, 2.0, 0.99 * kAuKm); }

inline imaging::GeometrySpec frame_spec(int size, double sun_x, double sun_y, double arcsec_per_px, double roll_deg,
                                        imaging::Observer observer = near_earth()) {
  imaging::GeometrySpec spec;
  spec.width = spec.height = size;
  spec.sun_center_px = {sun_x, sun_y};
  spec.arcsec_per_px = arcsec_per_px;
  spec.roll_deg = roll_deg;
  spec.observer = observer;
  return spec;
}

// R☉ per pixel in the sky plane, by the hand model above.
inline double hand_rs_per_px(const imaging::GeometrySpec& spec) {
  return spec.arcsec_per_px / kArcsecPerRad * spec.observer.dist_km / kSolarRadiusKm;
}

// Pixels whose value is f(west_rs, north_rs) of the sky point each pixel sees.
template <class F>
cv::Mat paint(const imaging::GeometrySpec& spec, F f) {
  cv::Mat out(spec.height, spec.width, CV_32FC1);
  const double s = hand_rs_per_px(spec), r = spec.roll_deg * kRadPerDeg;
  const double c = std::cos(r), sn = std::sin(r);
  for (int y = 0; y < spec.height; ++y)
    for (int x = 0; x < spec.width; ++x) {
      const double qx = x - spec.sun_center_px.x(), qy = y - spec.sun_center_px.y();
      // Inverse of the orthonormal map (west, north) → q: project q on each direction.
      const double west = (qx * c - qy * sn) * s, north = (qx * sn + qy * c) * s;
      out.at<float>(y, x) = float(f(west, north));
    }
  return out;
}

inline double gaussian(double dx, double dy, double sigma) {
  return std::exp(-(dx * dx + dy * dy) / (2.0 * sigma * sigma));
}

// A frame file: geometry, DATE-OBS, EXPTIME, and optional extra cards.
inline imaging::Header frame_header(const imaging::GeometrySpec& spec, double utc_s, double exposure_s) {
  imaging::Header header;
  imaging::write_geometry(header, spec);
  header.set_text("DATE-OBS", imaging::iso_from_utc_seconds(utc_s));
  header.set_real("EXPTIME", exposure_s);
  return header;
}

inline void write_frame(const std::filesystem::path& path, const cv::Mat& pixels, const imaging::Header& header) {
  imaging::write_fits(path, pixels, header);
}

}  // namespace occulta::test
