// imaging/register.cpp — affine from wcslib's pixel mapping, remap tables, resampling.
#include "imaging/register.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

#include <Eigen/Dense>
#include <opencv2/imgproc.hpp>

#include "imaging/constants.hpp"

namespace occulta::imaging {

RegisteredGrid grid_for_view(const ImageGeometry& first) {
  RegisteredGrid grid;
  grid.width = first.width;
  grid.height = first.height;
  grid.sun_center_px = {0.5 * (first.width - 1), 0.5 * (first.height - 1)};
  grid.rs_per_px = first.rs_per_px;
  return grid;
}

ImageGeometry grid_geometry(const RegisteredGrid& grid, const Observer& observer) {
  GeometrySpec spec;
  spec.width = grid.width;
  spec.height = grid.height;
  spec.observer = observer;
  spec.sun_center_px = grid.sun_center_px;
  // rs_per_px = arcsec_per_px / solar angular radius (geometry.hpp), solved for arcsec.
  spec.arcsec_per_px = grid.rs_per_px * solar_angular_radius_rad(observer.dist_km) * kArcsecPerRad;
  spec.roll_deg = 0.0;
  Header header;
  write_geometry(header, spec);
  return read_geometry(header, "registered grid");
}

bool same_mapping(const ImageGeometry& a, const ImageGeometry& b) {
  // Differences below these move no pixel by more than ~1e-6 px across a 4096² frame.
  const auto close = [](double x, double y, double tol) { return std::abs(x - y) <= tol; };
  return a.width == b.width && a.height == b.height && close(a.sun_center_px.x(), b.sun_center_px.x(), 1e-7) &&
         close(a.sun_center_px.y(), b.sun_center_px.y(), 1e-7) &&
         close(a.arcsec_per_px, b.arcsec_per_px, 1e-10 * a.arcsec_per_px) &&
         close(a.roll_deg, b.roll_deg, 1e-9) &&
         close(a.observer.dist_km, b.observer.dist_km, 1e-10 * a.observer.dist_km);
}

Registration make_registration(const ImageGeometry& source, const RegisteredGrid& grid, const cv::Mat& keep) {
  CV_Assert(keep.empty() || (keep.type() == CV_8UC1 && keep.rows == grid.height && keep.cols == grid.width));
  const ImageGeometry target = grid_geometry(grid, source.observer);

  // Least-squares affine grid pixel → source pixel through the sky (wcslib both ways),
  // on a 7×7 lattice spanning the grid.
  constexpr int kSide = 7;
  std::vector<Eigen::Vector2d> grid_px, hpc(kSide * kSide);
  for (int j = 0; j < kSide; ++j)
    for (int i = 0; i < kSide; ++i)
      grid_px.emplace_back((grid.width - 1) * i / double(kSide - 1), (grid.height - 1) * j / double(kSide - 1));
  hpc_from_pixels(target, grid_px, hpc);
  // Lattice points wcslib cannot map (behind a tangent plane) are left out of the fit.
  std::vector<std::pair<Eigen::Vector2d, Eigen::Vector2d>> pairs;
  for (std::size_t k = 0; k < grid_px.size(); ++k) {
    const Eigen::Vector2d s = hpc[k].allFinite() ? pixel_from_hpc(source, hpc[k]) : Eigen::Vector2d::Constant(NAN);
    if (s.allFinite()) pairs.emplace_back(grid_px[k], s);
  }
  CV_Assert(pairs.size() >= 3);
  Eigen::MatrixXd design(pairs.size(), 3);
  Eigen::MatrixXd rhs(pairs.size(), 2);
  for (std::size_t k = 0; k < pairs.size(); ++k) {
    design.row(k) << pairs[k].first.x(), pairs[k].first.y(), 1.0;
    rhs.row(k) = pairs[k].second.transpose();
  }
  const Eigen::MatrixXd coef = design.colPivHouseholderQr().solve(rhs);  // 3×2
  Registration r;
  r.source = source;
  for (int c = 0; c < 3; ++c) {
    r.grid_to_source(0, c) = coef(c, 0);
    r.grid_to_source(1, c) = coef(c, 1);
  }
  const Eigen::MatrixXd residual = design * coef - rhs;
  r.max_fit_residual_px = residual.rowwise().norm().maxCoeff();

  if (!keep.empty()) r.drop = keep == 0;
  r.size = cv::Size(grid.width, grid.height);
  return r;
}

void register_frame(const cv::Mat& source_pixels, const Registration& registration, cv::Mat& out) {
  CV_Assert(source_pixels.type() == CV_32FC1);
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  cv::warpAffine(source_pixels, out, registration.grid_to_source, registration.size,
                 cv::INTER_LINEAR | cv::WARP_INVERSE_MAP, cv::BORDER_CONSTANT, cv::Scalar(kNaN));
  if (!registration.drop.empty()) out.setTo(kNaN, registration.drop);
}

const Registration& RegistrationCache::for_geometry(const ImageGeometry& source) {
  if (!last_ || !same_mapping(last_->source, source)) {
    // The drop mask is the same for every registration of the view: made once, shared.
    if (!keep_.empty() && drop_.empty()) drop_ = keep_ == 0;
    last_ = make_registration(source, grid_);
    last_->drop = drop_;
    ++builds_;
  }
  return *last_;
}

}  // namespace occulta::imaging
