#include "app/demo.hpp"

#include <cmath>
#include <filesystem>
#include <ostream>

#include "app/inspect.hpp"
#include "imaging/constants.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// A stand-in frame while there is no committed sample: a radially falling corona
// (∝ r⁻³, roughly the K corona's brightness fall-off — common practice) between an
// occulter at 2.5 R☉ and a field stop at 15 R☉, seen from 1 au on the Sun–Earth line.
fs::path write_standin_frame(const fs::path& dir) {
  imaging::GeometrySpec spec;
  spec.width = spec.height = 256;
  spec.observer = imaging::observer_from_degrees(0.0, 0.0, kAuKm);
  spec.sun_center_px = {127.5, 127.5};
  const double rsun_arcsec = imaging::solar_angular_radius_rad(kAuKm) * kArcsecPerRad;
  spec.arcsec_per_px = 2.0 * 16.0 * rsun_arcsec / spec.width;  // ±16 R☉ across
  cv::Mat pixels(spec.height, spec.width, CV_32F);
  for (int y = 0; y < spec.height; ++y)
    for (int x = 0; x < spec.width; ++x) {
      const double r_rs = std::hypot(x - spec.sun_center_px.x(), y - spec.sun_center_px.y()) *
                          spec.arcsec_per_px / rsun_arcsec;
      pixels.at<float>(y, x) = (r_rs < 2.5 || r_rs > 15.0) ? NAN : float(1e4 * std::pow(r_rs, -3.0));
    }
  imaging::Header header;
  imaging::write_geometry(header, spec);
  header.set_text("DATE-OBS", imaging::iso_from_utc_seconds(imaging::utc_seconds_from_iso("2031-03-14T06:00:00"), 3),
                  "start of exposure, UTC");
  header.set_real("EXPTIME", 10.0, "exposure time, s");
  header.set_text("OBSRVTRY", "occulta stand-in", "invented observer");
  fs::create_directories(dir);
  const fs::path path = dir / "standin.fits";
  imaging::write_fits(path, pixels, header, {imaging::FitsWriteOptions::Pixels::ScaledInt16, true});
  return path;
}

}  // namespace

int demo(const DemoOptions& options, std::ostream& out, std::ostream& err) {
  std::vector<std::string> paths;
  if (fs::is_directory(options.sample_dir)) {
    out << "demo: inspecting the sample event in " << options.sample_dir << "\n";
    paths.push_back(options.sample_dir);
  } else {
    out << "demo: no " << options.sample_dir << "/ yet — writing a frame of our own and inspecting it\n";
    paths.push_back(write_standin_frame(options.out_dir).string());
  }
  return inspect({paths, false}, out, err);
}

}  // namespace occulta::app
