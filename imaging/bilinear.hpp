// imaging/bilinear.hpp — bilinear samples of a float frame at points on circles about one
// centre, sent through an affine, in one pass: bit for bit what the two OpenCV steps give
// (used by the chain's unwrap onto the polar grid, chain.cpp, for every frame of a moving
// pointing).
//
// The OpenCV way (polar.cpp, make_polar_maps then to_polar) makes, for each new pointing,
// float tables float(A · xy), turns them into fixed-point ones (cv::convertMaps, CV_16SC2:
// the point rounded to 1/32 pixel) and then samples (cv::remap, INTER_LINEAR,
// BORDER_CONSTANT NaN): ~2.5 ms a 720 × 423 polar frame on one core of this machine, much
// of it waiting for the frame's pixels. Here the same numbers are formed in SIMD lanes of
// 16 (AVX-512) with no tables (1.0 ms), and the pixels of a row's points are asked for
// (prefetched) a few rows before they are needed. For row r and column c:
//   x = cx − ρ_r s_c,   y = cy + ρ_r k_c     (the point, in double; s_c, k_c: sin[c], cos[c])
//   u = float((a₀₀ x + a₀₁ y) + a₀₂),  v = float((a₁₀ x + a₁₁ y) + a₁₂)
//   U = round(32 u),  V = round(32 v)    (to the nearest integer, ties to even, as
//                                          cv::convertMaps' cvRound)
//   i = U >> 5, j = V >> 5 (source column and row), p = (U & 31) / 32, q = (V & 31) / 32
//   out = ((S(j, i) w₀ + S(j, i+1) w₁) + S(j+1, i) w₂) + S(j+1, i+1) w₃
//   w₀ = (1 − q)(1 − p), w₁ = (1 − q) p, w₂ = q (1 − p), w₃ = q p
// (cv::remap's weight table for INTER_LINEAR, as OpenCV 4.6's source builds it — from
// memory; the tests confirm it bit for bit: the products are exact in float), every
// product and sum rounded in that order, none fused; NaN where any of the four pixels lies
// outside the frame (0 ≤ i < width − 1 and 0 ≤ j < height − 1 hold data: with a NaN
// border cv::remap gives NaN there too). The tests hold it to the OpenCV steps on every
// sample (tests/imaging/bilinear_test.cpp).
//
// Pixels: 0-based centres, x a column and y a row of the frame's Mat, as cv::remap's.
#pragma once

#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging::bilinear {

// Points on circles about (cx, cy): row r on the circle of radius `radius[r]`, column c at
// the angle whose sine and cosine are sin[c] and cos[c], counted from +y towards −x:
//   x = cx − radius[r] · sin[c],   y = cy + radius[r] · cos[c]
// (polar.hpp's position angle on the registered grid).
struct CirclePoints {
  double cx = 0.0, cy = 0.0;
  std::vector<double> radius, sin, cos;
  int rows() const { return int(radius.size()); }
  int cols() const { return int(sin.size()); }
};

// Whether this CPU has the vector instructions the kernel is built for (AVX-512 F, DQ,
// BW and VL), and the frame is one it takes (CV_32FC1, at most 32 767 pixels a side, as
// the fixed-point tables' int16 hold). Otherwise the OpenCV steps are the way.
bool available(const cv::Mat& frame);

// out(r, c) = the frame sampled at A · (x, y) of point (r, c) (the formulas above). `drop`
// empty or CV_8UC1 of the points' rows × cols (non-zero: NaN there). `out` is CV_32FC1 of
// that size, reallocated only when its size or type differ. Rows are shared among
// OpenCV's threads (cv::parallel_for_), as cv::remap shares them. Needs available(frame).
void sample_affine(const cv::Mat& frame, const CirclePoints& points, const cv::Matx23d& a, const cv::Mat& drop,
                   cv::Mat& out);

}  // namespace occulta::imaging::bilinear
