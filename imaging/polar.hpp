// imaging/polar.hpp — a registered frame unwrapped onto a (position angle, height) grid,
// and the normalising-radial-graded filter for display.
//
// Position angle (PA): degrees counter-clockwise from solar north through east, [0, 360)
// (Thompson 2006; common practice). Heights: R☉ from Sun centre in the plane of the sky.
// On the registered grid (register.hpp) north is +y and west is +x, so east is −x and
//   x = cx − (h / s) sin PA,   y = cy + (h / s) cos PA      (s = rs_per_px)
// i.e. PA 0 is up (north), PA 90 to the left (east) when row 0 is drawn at the bottom.
//
// A polar image is CV_32FC1 with one ROW per height and one COLUMN per PA:
//   row i    ↔ height_rs = height_min_rs + i · height_step_rs   (row 0 lowest)
//   column j ↔ pa_deg   = j · pa_step_deg                        (column 0 = north)
// Bilinear sampling (cv::remap) with tables built once per (registered grid, polar grid)
// and reused for every frame; NaN where the registered frame has no data.
//
// The chain (chain.hpp) samples the RAW frame straight onto the polar grid: each polar
// sample's grid pixel, sent through the registration's affine (register.hpp), is a raw
// pixel, so one remap does both registration and unwrapping — one interpolation instead of
// two, over the polar grid's pixels (720 × a few hundred) instead of the full frame. With
// AVX-512 it is bilinear::sample_affine (bilinear.hpp): the same bits with no tables.
#pragma once

#include <vector>

#include <opencv2/core.hpp>

#include "imaging/bilinear.hpp"
#include "imaging/register.hpp"

namespace occulta::imaging {

struct PolarGrid {
  double pa_step_deg = 0.5;
  int pa_count = 720;              // covers 360° exactly: pa_count · pa_step_deg = 360
  double height_min_rs = 0.0;
  double height_step_rs = 0.0;
  int height_count = 0;

  double pa_deg(int column) const { return column * pa_step_deg; }
  double height_rs(int row) const { return height_min_rs + row * height_step_rs; }
};

// From inner to outer height; height step 0 means the registered grid's R☉ per pixel.
// pa_step_deg must divide 360 (rounded to the nearest step that does).
PolarGrid make_polar_grid(const RegisteredGrid& grid, double inner_rs, double outer_rs, double pa_step_deg = 0.5,
                          double height_step_rs = 0.0);

// Registered-grid pixel of a (PA, height) point (the formula above).
cv::Point2d grid_pixel(const RegisteredGrid& grid, double pa_deg, double height_rs);
// And back: PA in [0, 360), height in R☉.
double grid_pa_deg(const RegisteredGrid& grid, cv::Point2d pixel);
double grid_height_rs(const RegisteredGrid& grid, cv::Point2d pixel);

struct PolarMaps {
  RegisteredGrid grid;
  PolarGrid polar;
  cv::Mat map_xy, map_frac;  // cv::remap tables, fixed point
  cv::Size source;           // the image the tables sample: the grid, or a raw frame
  cv::Mat drop;              // CV_8UC1 on the polar grid, non-zero = set to NaN (empty: none)
};
// From the registered grid.
PolarMaps make_polar_maps(const RegisteredGrid& grid, const PolarGrid& polar);
// From a raw frame of the geometry `registration` was built for, through its affine. Its
// keep-mask comes along as `drop`: the polar samples that would have read a masked grid
// pixel (bilinear from the grid, i.e. within a pixel of the mask) are NaN, as they are when
// a masked registered frame is unwrapped.
PolarMaps make_polar_maps(const Registration& registration, const RegisteredGrid& grid, const PolarGrid& polar);

// Each polar sample's registered-grid pixel (the formula above, in double), in factors:
// row i on the circle of radius height_rs(i) / rs_per_px about Sun centre, column j at
// PA pa_deg(j) (bilinear.hpp's CirclePoints).
bilinear::CirclePoints polar_points(const RegisteredGrid& grid, const PolarGrid& polar);

// What make_polar_maps(registration, grid, polar) computes that does not depend on the
// registration's affine: each polar sample's grid pixel (polar_points) and the polar drop
// mask of the grid's keep-mask. A view whose pointing moves every frame builds this once;
// each new pointing then costs only the affine over the samples and cv::convertMaps, or
// bilinear::sample_affine straight from the points. make_polar_maps(registration,
// sampling) gives tables bit-identical to make_polar_maps(registration, grid, polar) when
// `drop_on_grid` equals registration.drop (the same doubles go through the same
// operations).
struct PolarSampling {
  RegisteredGrid grid;
  PolarGrid polar;
  bilinear::CirclePoints points;
  cv::Mat drop;  // CV_8UC1 on the polar grid (empty: none)
};
PolarSampling make_polar_sampling(const RegisteredGrid& grid, const PolarGrid& polar, const cv::Mat& drop_on_grid);
PolarMaps make_polar_maps(const Registration& registration, const PolarSampling& sampling);
// The same into `maps`, for a caller that makes tables for every frame: the float tables
// are made in `scratch` (CV_32FC2 on the polar grid) and the fixed-point ones in the
// buffers `maps` holds (kept when their size and type match), so that no frame takes
// fresh memory (each fresh page a fault into the kernel, frame_memory.hpp). Nothing else
// may share maps' tables.
void make_polar_maps(const Registration& registration, const PolarSampling& sampling, cv::Mat& scratch,
                     PolarMaps& maps);

// `image` is what the tables sample (maps.source). `out` reallocated only when its size or
// type differ.
void to_polar(const cv::Mat& image, const PolarMaps& maps, cv::Mat& out);

// Normalising-radial-graded filter, Morgan, Habbal & Woo (2006, Sol. Phys. 236, 263):
//   I′(h, PA) = (I(h, PA) − ⟨I(h)⟩_PA) / σ_PA(h)
// mean and standard deviation over the finite PAs of each height row. A row with fewer
// than two finite values, or no spread, becomes NaN. A display filter: returns a new image.
cv::Mat nrgf(const cv::Mat& polar);

}  // namespace occulta::imaging
