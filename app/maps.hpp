// app/maps.hpp — `occulta maps EVENT --out DIR [--pa DEG ...] [--pa-step DEG]
// [--height-step RS] [--median N] [--nrgf]`: per view, the noise-normalised polar running
// differences as a FITS cube, and quicklooks a person can check by eye.
//
// Writes DIR/<view>/polar.fits: float32 cube, NAXIS1 = PA (deg, from 0, CCW from solar
// north through east), NAXIS2 = height (R☉), NAXIS3 = frame (each frame minus the one
// before, in σ of the noise at that height), with linear axis keywords and a binary table
// FRAMES (TIME as ISO 8601 UTC, UTC_S as seconds since 2000-01-01, STEP_S since the
// frame before); and PNGs: running_difference.png (the last one, north up),
// polar_running_difference.png (PA across, height up), time_height_pa<PA>.png for each
// --pa (default: the PA of strongest outward change), nrgf.png with --nrgf.
#pragma once

#include <iosfwd>
#include <string>
#include <vector>

namespace occulta::app {

struct MapsOptions {
  std::string event;
  std::string out_dir;
  std::vector<double> pa_deg;     // time–height maps at these PAs; empty: strongest change
  double pa_step_deg = 0.5;
  double height_step_rs = 0.0;    // 0: the registered grid's R☉ per pixel
  int median = 5;                 // median filter size against cosmic-ray tracks (0 = off)
  bool nrgf = false;
};

int maps(const MapsOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
