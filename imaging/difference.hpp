// imaging/difference.hpp — running and base differences, and their robust noise
// normalisation so that thresholds are in units of σ.
//
// Noise: σ̂ = 1.4826 · MAD, MAD = median |v − median v| over the finite values; 1.4826 =
// 1/Φ⁻¹(3/4) makes it the standard deviation for Gaussian noise (common practice). Noise
// in a coronagraph difference falls with height (photon noise of a brightness ∝ h⁻²…h⁻³),
// so on polar images σ̂ is taken per ring of height (one row) and smoothed over ±n rings;
// a CME covering a minority of a ring's PAs barely moves its MAD (breakdown point 50%).
// Where more than half the values are equal the MAD is 0 (quantised data with little
// noise); σ̂ then falls back to the RMS deviation from the median.
//
// All images CV_32FC1, NaN = no data (propagates: a difference with no data on either side
// has none).
#pragma once

#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging {

// out = (current − previous) · scale. For a running difference scaled to a common time
// step Δt_ref, scale = Δt_ref / (t_current − t_previous); 1 otherwise.
void difference(const cv::Mat& current, const cv::Mat& previous, double scale, cv::Mat& out);

// σ̂ over all finite values (every `stride`-th in each direction, for speed on big images).
// NaN when there are fewer than 8 finite values.
float robust_sigma(const cv::Mat& image, int stride = 1);

// σ̂ per row of a polar image (one ring of height), from every `pa_stride`-th PA, then the
// median of each row's value over ±smooth_rings rows. NaN for a row without enough data.
std::vector<float> ring_sigma(const cv::Mat& polar, int smooth_rings = 2, int pa_stride = 1);

// In place: each row divided by its σ̂. A row whose σ̂ is 0 (no variation at all, e.g.
// identical frames) has nothing to normalise and becomes 0 where it has data; a NaN σ̂
// makes the row NaN.
void divide_by_rows(cv::Mat& polar, const std::vector<float>& sigma);

// In place: divided by one σ̂ (same rules).
void divide_by(cv::Mat& image, float sigma);

// In place: median filter of size 3 or 5 against cosmic-ray hits (cv::medianBlur), with
// no-data pixels kept NaN (the filter's comparisons are not NaN-aware, so NaN inputs are
// restored afterwards).
void median_filter(cv::Mat& image, int size);
// The same with a caller-kept scratch frame (swapped with `image`), so that a stream of
// frames allocates no new frame each time.
void median_filter(cv::Mat& image, int size, cv::Mat& scratch);

}  // namespace occulta::imaging
