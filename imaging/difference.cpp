// imaging/difference.cpp — differences, MAD noise, normalisation, median filter.
#include "imaging/difference.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>

#include <opencv2/imgproc.hpp>

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

namespace {

// Whether a row holds any value that is not NaN (x == x fails for NaN alone). No early
// exit, so that the compiler vectorises it.
bool any_value(const float* row, int n) {
  int values = 0;
  for (int x = 0; x < n; ++x) values |= row[x] == row[x];
  return values != 0;
}

// out = in where in is NaN (no data stays no data), else the filtered value.
void keep_no_data(const float* __restrict in, const float* __restrict filtered, float* __restrict out, int n) {
  for (int x = 0; x < n; ++x) out[x] = in[x] != in[x] ? in[x] : filtered[x];
}

}  // namespace

void median_filter(cv::Mat& image, int size, cv::Mat& scratch) {
  CV_Assert(image.type() == CV_32FC1 && (size == 3 || size == 5));
  // cv::medianBlur is single-threaded, so it runs on bands of rows in parallel, each band
  // read with the filter's half-width of rows above and below: every output row's window
  // lies inside its band's input, so the result equals one medianBlur of the whole frame.
  // A band whose rows hold no finite value is NaN in and NaN out, and is skipped.
  //
  // Near NaN the sorting network's answer depends on how a column is computed: OpenCV
  // takes the first two columns and the last few (fewer than two vectors' width) one by
  // one with std::min/std::max, the rest a vector at a time with SIMD min/max, and the two
  // treat NaN differently. So a band is cut to narrower columns only where that changes
  // nothing: the columns left out hold no data in the band's input rows (their pixels
  // stay NaN), and every pixel with data lies at least kMargin columns inside the cut
  // (and inside the frame's edge on a side that is cut), where both the frame and the cut
  // compute it a vector at a time; the cut starts at a multiple of kAlign columns, so each
  // column even keeps its place in the vector lanes. Outside a coronagraph's field stop a
  // frame's corners hold no data: the cut leaves them out (on maps_bench's 1024² frames,
  // whose field stop nears the edge, the network does 13 % fewer instructions).
  const int half = size / 2;
  constexpr int kBand = 32, kMargin = 48, kAlign = 32;
  if (!image.isContinuous()) image = image.clone();
  scratch.create(image.size(), CV_32FC1);
  const int width = image.cols;
  cv::parallel_for_(cv::Range(0, (image.rows + kBand - 1) / kBand), [&](const cv::Range& bands) {
    // Each worker keeps room for a band and its filtered copy from frame to frame (fresh
    // ones per band were allocated, and their pages faulted in, 32 times a frame); a
    // smaller band is written into the first rows (cv::Mat::create keeps a buffer of the
    // same size and type).
    thread_local cv::Mat room_in, room_out;
    if (room_out.cols != width || room_out.rows < kBand + 2 * half) {
      room_in.create(kBand + 2 * half, width, CV_32FC1);
      room_out.create(kBand + 2 * half, width, CV_32FC1);
    }
    for (int b = bands.start; b < bands.end; ++b) {
      const int y0 = b * kBand, y1 = std::min(image.rows, y0 + kBand);
      const int in0 = std::max(0, y0 - half), in1 = std::min(image.rows, y1 + half);
      // The columns with data in the band's input rows: [first, last).
      int first = width, last = 0;
      for (int y = in0; y < in1; ++y) {
        const float* row = image.ptr<float>(y);
        int a = 0, z = width;
        while (a < std::min(first, z) && row[a] != row[a]) ++a;
        while (z > std::max(last, a) && row[z - 1] != row[z - 1]) --z;
        if (a < z) first = std::min(first, a), last = std::max(last, z);
      }
      bool any = false;
      for (int y = y0; y < y1 && !any; ++y) any = any_value(image.ptr<float>(y), width);
      if (!any || first >= last) {
        for (int y = y0; y < y1; ++y) std::fill_n(scratch.ptr<float>(y), width, kNaN);
        continue;
      }
      const int x0 = first >= kMargin ? (first - kMargin) / kAlign * kAlign : 0;
      const int x1 = width - last >= kMargin ? last + kMargin : width;
      cv::Mat band;
      if (x0 == 0 && x1 == width) {
        // Whole rows of a continuous frame are themselves continuous: read in place.
        band = image.rowRange(in0, in1);
      } else {
        // A continuous copy of the cut, as a whole frame's rows are.
        band = cv::Mat(in1 - in0, x1 - x0, CV_32FC1, room_in.data);
        image(cv::Rect(x0, in0, x1 - x0, in1 - in0)).copyTo(band);
      }
      cv::Mat filtered(band.rows, band.cols, CV_32FC1, room_out.data);
      cv::medianBlur(band, filtered, size);
      CV_Assert(filtered.data == room_out.data);  // written in place, not reallocated
      // No data stays no data: a pixel whose input is NaN is NaN again (cv::compare does
      // not flag NaN in OpenCV 4, so this is a test per pixel). Outside the cut every
      // pixel is NaN, and stays the NaN it was.
      for (int y = y0; y < y1; ++y) {
        const float* in = image.ptr<float>(y);
        float* out = scratch.ptr<float>(y);
        std::copy(in, in + x0, out);
        keep_no_data(in + x0, filtered.ptr<float>(y - in0), out + x0, x1 - x0);
        std::copy(in + x1, in + width, out + x1);
      }
    }
  });
  std::swap(image, scratch);
}

void median_filter(cv::Mat& image, int size) {
  cv::Mat scratch;
  median_filter(image, size, scratch);
}

}  // namespace occulta::imaging
