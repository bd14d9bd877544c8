// imaging/register.hpp — every frame of a view onto one Sun-centred, solar-north-up grid
// of fixed solar radii per pixel, so that pointing drift, roll and a change of detector
// binning leave no false structure in differences.
//
// The grid (one per view, chosen from its first frame) is a gnomonic (TAN) projection
// about Sun centre, as the frames' own WCS are (WCS Paper II §5.1.3). Between two TAN
// projections about the same point the pixel mapping is exactly affine (a rotation,
// scale and shift of the same tangent plane), so each frame is resampled with one affine
// fitted to wcslib's mapping; when a frame's tangent point lies away from Sun centre the
// fit is no longer exact and its worst residual is reported in Registration.
// Pixel distance d from Sun centre on the grid gives the sky-plane height of
// geometry.hpp, D☉ tan ρ / R☉ = d · rs_per_px (to the small-angle difference between
// asin(R☉/D☉) and R☉/D☉, 1e-5 relative at 1 au).
//
// Conventions on the grid: pixels are 0-based centres; x (column) increases to solar west,
// y (row) to solar north. Mat row 0 is the first FITS row, the bottom of the displayed
// image, so displayed with row 0 at the bottom north is up and east is to the LEFT (−x).
//
// Resampling is bilinear (cv::warpAffine with the inverse map; the affine and the mask are
// built once per source geometry and reused while frames keep that geometry — measured
// faster than cv::remap with stored fixed-point tables, whose 6 MB per 1024² frame cost
// more memory traffic than warpAffine's on-the-fly coordinates). No-data (NaN)
// pixels propagate through the interpolation, so no-data regions stay NaN — they grow by
// at most one pixel at their edge — and never smear into data; grid pixels that fall
// outside the frame are NaN. A keep-mask (the occulter/field-stop annulus of calibrate.hpp)
// is applied to every registered frame: masked grid pixels come out NaN.
#pragma once

#include <optional>

#include <Eigen/Core>
#include <opencv2/core.hpp>

#include "imaging/geometry.hpp"

namespace occulta::imaging {

struct RegisteredGrid {
  int width = 0, height = 0;
  Eigen::Vector2d sun_center_px{0.0, 0.0};  // 0-based; the grid's centre
  double rs_per_px = 0.0;                    // solar radii per pixel (sky plane)
};

// The first frame's size and scale, Sun centre in the middle ((w − 1)/2, (h − 1)/2).
RegisteredGrid grid_for_view(const ImageGeometry& first);

// The geometry a grid has for a frame seen from `observer` (its angular scale follows the
// observer's distance so that the scale in R☉ stays fixed). Roll 0: north up.
ImageGeometry grid_geometry(const RegisteredGrid& grid, const Observer& observer);

// Two frames whose pixels map to the sky identically (same size, Sun centre, scale, roll,
// observer distance) — they can share one Registration.
bool same_mapping(const ImageGeometry& a, const ImageGeometry& b);

struct Registration {
  ImageGeometry source;          // the geometry the tables were built for
  cv::Matx23d grid_to_source;    // source pixel = A · (grid x, grid y, 1)
  double max_fit_residual_px = 0.0;  // worst wcslib-vs-affine difference on a 7×7 lattice
  cv::Size size;                 // the grid's
  cv::Mat drop;                  // CV_8UC1 on the grid, non-zero = set to NaN (empty: none)
};

// Builds the affine; `keep` (CV_8UC1 on the grid, non-zero = keep) may be empty.
Registration make_registration(const ImageGeometry& source, const RegisteredGrid& grid, const cv::Mat& keep = {});

// Resamples `source_pixels` (CV_32FC1, the frame `registration` was built for) onto the
// grid. `out` is reallocated only when its size or type differ.
void register_frame(const cv::Mat& source_pixels, const Registration& registration, cv::Mat& out);

// One view's registration tables, rebuilt only when a frame's mapping differs from the
// last one's (owns the tables; the keep-mask is the view's).
class RegistrationCache {
 public:
  RegistrationCache(RegisteredGrid grid, cv::Mat keep = {}) : grid_(grid), keep_(std::move(keep)) {}
  const Registration& for_geometry(const ImageGeometry& source);
  const RegisteredGrid& grid() const { return grid_; }
  int builds() const { return builds_; }  // how many times tables were built (tests, bench)

 private:
  RegisteredGrid grid_;
  cv::Mat keep_;
  cv::Mat drop_;  // keep_ == 0, made at the first build
  std::optional<Registration> last_;
  int builds_ = 0;
};

}  // namespace occulta::imaging
