// imaging/difference.cpp — differences, MAD noise, normalisation (the median filter: median_filter.cpp).
#include "imaging/difference.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>

#include <opencv2/core.hpp>

namespace occulta::imaging {

namespace {

constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();
constexpr int kMinSamples = 8;

// The k-th smallest (0-based) of `values`, all finite: the value std::nth_element puts
// at k (a zero may come with the other sign; ±0 compare equal). A radix selection over
// the floats' bits made to sort as unsigned integers (the sign bit set on positives, every
// bit flipped on negatives: the usual key for sorting IEEE 754 floats as integers), 8 bits
// a pass from the top, keeping only the candidates in the bucket that holds the k-th. On
// noise nth_element mispredicts most of its branches; this has almost none (5 × faster
// on the polar rows' 240 values, measured). `keys` is scratch.
float kth_smallest(const std::vector<float>& values, std::size_t k, std::vector<std::uint32_t>& keys) {
  const std::size_t n = values.size();
  keys.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const auto u = std::bit_cast<std::uint32_t>(values[i]);
    keys[i] = (u & 0x80000000u) ? ~u : (u | 0x80000000u);
  }
  std::size_t m = n;  // candidates: keys[0, m)
  for (int shift = 24; shift >= 0 && m > 1; shift -= 8) {
    std::array<std::uint32_t, 256> count{};
    for (std::size_t i = 0; i < m; ++i) ++count[(keys[i] >> shift) & 255u];
    unsigned digit = 0;
    while (k >= count[digit]) k -= count[digit++];
    std::size_t kept = 0;
    for (std::size_t i = 0; i < m; ++i) {
      const std::uint32_t key = keys[i];
      keys[kept] = key;
      kept += ((key >> shift) & 255u) == digit;
    }
    m = kept;
  }
  const std::uint32_t key = keys[0];
  return std::bit_cast<float>((key & 0x80000000u) ? (key & 0x7fffffffu) : ~key);
}

// 1.4826 · median |v − median v| of `values` (finite; reordered in place when the MAD is 0).
float mad_sigma(std::vector<float>& values) {
  if (values.size() < kMinSamples) return kNaN;
  const std::size_t k = values.size() / 2;
  thread_local std::vector<std::uint32_t> keys;
  thread_local std::vector<float> deviations;
  const float median = kth_smallest(values, k, keys);
  deviations.resize(values.size());
  for (std::size_t i = 0; i < values.size(); ++i) deviations[i] = std::abs(values[i] - median);
  // The median's sign of zero does not matter: |v − (+0)| and |v − (−0)| are the same.
  const float mad = kth_smallest(deviations, k, keys);
  if (mad > 0.0f) return 1.4826f * mad;  // common practice: Gaussian σ = MAD / Φ⁻¹(3/4)
  // More than half the values equal (quantised data, a change confined to few pixels):
  // the MAD says nothing, the RMS deviation from the median still measures the spread.
  // Summed as before (in the order std::nth_element leaves the values), so that its
  // last bits are the same.
  const auto mid = values.begin() + std::ptrdiff_t(k);
  std::nth_element(values.begin(), mid, values.end());
  const float nth_median = *mid;
  double sum2 = 0.0;
  for (float& v : values) {
    v = std::abs(v - nth_median);
    sum2 += double(v) * v;
  }
  return float(std::sqrt(sum2 / values.size()));
}

}  // namespace

void difference(const cv::Mat& current, const cv::Mat& previous, double scale, cv::Mat& out) {
  CV_Assert(current.type() == CV_32FC1 && previous.type() == CV_32FC1 && current.size() == previous.size());
  cv::addWeighted(current, scale, previous, -scale, 0.0, out);
}

float robust_sigma(const cv::Mat& image, int stride) {
  CV_Assert(image.type() == CV_32FC1 && stride >= 1);
  std::vector<float> values;
  values.reserve(std::size_t(image.rows / stride + 1) * std::size_t(image.cols / stride + 1));
  for (int y = 0; y < image.rows; y += stride) {
    const float* p = image.ptr<float>(y);
    for (int x = 0; x < image.cols; x += stride)
      if (std::isfinite(p[x])) values.push_back(p[x]);
  }
  return mad_sigma(values);
}

std::vector<float> ring_sigma(const cv::Mat& polar, int smooth_rings, int pa_stride) {
  CV_Assert(polar.type() == CV_32FC1 && smooth_rings >= 0 && pa_stride >= 1);
  std::vector<float> per_row(polar.rows, kNaN);
  cv::parallel_for_(cv::Range(0, polar.rows), [&](const cv::Range& rows) {
    std::vector<float> values;
    for (int i = rows.start; i < rows.end; ++i) {
      values.clear();
      const float* p = polar.ptr<float>(i);
      for (int j = 0; j < polar.cols; j += pa_stride)
        if (std::isfinite(p[j])) values.push_back(p[j]);
      per_row[i] = mad_sigma(values);
    }
  });
  if (smooth_rings == 0) return per_row;
  std::vector<float> smooth(polar.rows, kNaN), window;
  for (int i = 0; i < polar.rows; ++i) {
    if (!std::isfinite(per_row[i])) continue;  // a ring without data stays without σ
    window.clear();
    for (int k = std::max(0, i - smooth_rings); k <= std::min(polar.rows - 1, i + smooth_rings); ++k)
      if (std::isfinite(per_row[k])) window.push_back(per_row[k]);
    const auto mid = window.begin() + window.size() / 2;
    std::nth_element(window.begin(), mid, window.end());
    smooth[i] = *mid;
  }
  return smooth;
}

void divide_by(cv::Mat& image, float sigma) {
  CV_Assert(image.type() == CV_32FC1);
  if (std::isnan(sigma)) {
    image.setTo(kNaN);
    return;
  }
  // 0 · NaN stays NaN, so no-data pixels survive a zero σ.
  image.convertTo(image, CV_32F, sigma > 0.0f ? 1.0 / sigma : 0.0);
}

void divide_by_rows(cv::Mat& polar, const std::vector<float>& sigma) {
  CV_Assert(polar.type() == CV_32FC1 && int(sigma.size()) == polar.rows);
  cv::parallel_for_(cv::Range(0, polar.rows), [&](const cv::Range& rows) {
    for (int i = rows.start; i < rows.end; ++i) {
      cv::Mat row = polar.row(i);
      divide_by(row, sigma[i]);
    }
  });
}

}  // namespace occulta::imaging
