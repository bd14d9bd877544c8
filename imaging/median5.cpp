// imaging/median5.cpp — the 5×5 median by sorting networks shared between windows.
//
// The steps for the window of pixel (y, x), columns x − 2 … x + 2, rows y − 2 … y + 2:
//   1. sort each column's 5 values (s₀ ≤ … ≤ s₄), once per column and row: the five
//      windows that hold the column share it;
//   2. merge each pair of neighbouring sorted columns (x, x + 1) into a sorted 10, once
//      per pair: the windows that hold both columns share it;
//   3. merge the pairs (x − 1, x) and (x + 1, x + 2) — columns x − 1 … x + 2, 20 values —
//      keeping only their ranks 8 … 13. The window adds the 5 values of column x − 2, so
//      its 13th smallest (the median of 25) is at least the 20's 8th (at most 5 of the 13
//      smallest are the column's) and at most their 13th; the 20's 7 smallest lie below
//      it and their 7 largest above it, and dropping 7 from each end leaves the median
//      of the 11 that remain, their 6th smallest;
//   4. that 6th smallest of the 6 kept and the column's sorted 5: for two sorted runs
//      a₁ ≤ a₂ ≤ … and b₁ ≤ b₂ ≤ …, the k-th smallest of both is the least over i of
//      max(aᵢ, b_{k−i}) (the k smallest hold some i of a and k − i of b; any other split
//      has a larger maximum; a₀ = b₀ = −∞): five max and five min.
// The networks are built at compile time (sorting_network.hpp). The tests check each on
// every 0–1 input and the whole against cv::medianBlur
// (tests/imaging/median_filter_test.cpp).
//
// Each step runs on a row's columns in SIMD lanes of 16 floats (AVX-512), a chunk of 128
// columns at a time so that the sorted columns stay in the first-level cache.
#include "imaging/median5.hpp"

#include "imaging/avx512.hpp"
#include "imaging/sorting_network.hpp"

#include <algorithm>
#include <array>
#include <cstdint>
#include <cstring>
#include <utility>

namespace occulta::imaging::median5 {

namespace {

using sorting_network::Network;
constexpr Network kSortColumn = sorting_network::sort5();           // step 1: 18 min/max
constexpr Network kMergePair = sorting_network::merge(5, 0, 10);    // step 2: 26
constexpr Network kMergeMiddle = sorting_network::merge(10, 7, 6);  // step 3: ranks 8 … 13 of 20, 36

struct Args {
  const cv::Mat& image;
  int y0, y1, x0, x1;
  cv::Mat& out;
  Scratch& scratch;
  std::vector<std::vector<int>>& next_to_nan;
};

constexpr int kChunk = 128;  // columns a chunk
constexpr int kHalo = 16;    // padding columns on each side of a padded row

// The kernel is compiled wholly for AVX-512 (F, DQ, BW and VL: x86-64-v4), helpers and
// all (avx512.hpp says why). An AVX2 copy was tried: GCC 12 spills its 16 registers and
// takes 8.5 ms, slower than cv::medianBlur, so without AVX-512 cv::medianBlur does it.
// GCC's vector extensions (which clang shares): a comparison gives −1 in a lane where it
// holds, 0 where not.
OCCULTA_AVX512_BEGIN

constexpr int W = 16;  // floats a vector
typedef float V __attribute__((vector_size(64)));
typedef std::int32_t Mask __attribute__((vector_size(64)));

[[gnu::always_inline]] inline void set_min(V& out, const V& a, const V& b) {
  out = a < b ? a : b;
}
[[gnu::always_inline]] inline void set_max(V& out, const V& a, const V& b) {
  out = a < b ? b : a;
}

// One operation, its operands and kind fixed when compiled (a constexpr copy: read
// through the Network at run time they would be loads and branches).
template <const Network& net, std::size_t I>
[[gnu::always_inline]] inline void run_op(V* v) {
  constexpr sorting_network::Op op = net.ops[I];
  if constexpr (op.max)
    set_max(v[net.inputs + int(I)], v[op.a], v[op.b]);
  else
    set_min(v[net.inputs + int(I)], v[op.a], v[op.b]);
}
template <const Network& net, std::size_t... I>
[[gnu::always_inline]] inline void run_ops(V* v, std::index_sequence<I...>) {
  (run_op<net, I>(v), ...);
}
// Runs `net` on v[0, net.inputs) (the inputs) and v[net.inputs, …) (the results).
template <const Network& net>
[[gnu::always_inline]] inline void run(V* v) {
  run_ops<net>(v, std::make_index_sequence<std::size_t(net.count)>{});
}

// Output K of `net` in v, its place fixed when compiled (a place read from the table at
// run time would keep all of v in memory).
template <const Network& net, int K>
[[gnu::always_inline]] inline const V& output(const V* v) {
  constexpr int at = net.out[std::size_t(K)];
  return v[at];
}
// Outputs 0 … count − 1 of `net` in v, stored `stride` floats apart from p.
template <const Network& net, std::size_t... K>
[[gnu::always_inline]] inline void store_outputs(float* p, int stride, const V* v, std::index_sequence<K...>) {
  (std::memcpy(p + int(K) * stride, &output<net, int(K)>(v), sizeof(V)), ...);
}

[[gnu::always_inline]] inline void load(V& v, const float* p) {
  std::memcpy(&v, p, sizeof v);
}
[[gnu::always_inline]] inline void store(float* p, const V& v) {
  std::memcpy(p, &v, sizeof v);
}

// The kernel, W lanes a vector.
void kernel(const Args& args) {
  const cv::Mat& image = args.image;
  const int width = image.cols, height = image.rows, x0 = args.x0, x1 = args.x1;
  const int in0 = std::max(0, args.y0 - 2), in1 = std::min(height, args.y1 + 2);

  // The band's rows, columns [x0 − kHalo, x1 + kHalo + W), the frame's edge replicated
  // (cv::BORDER_REPLICATE): every vector load below lies inside.
  const int padded = (x1 - x0) + 2 * kHalo + W;
  std::vector<float>& rows = args.scratch.rows;
  rows.resize(std::size_t(in1 - in0) * std::size_t(padded));
  for (int r = in0; r < in1; ++r) {
    const float* in = image.ptr<float>(r);
    float* row = rows.data() + std::size_t(r - in0) * std::size_t(padded);
    const int from = std::max(0, x0 - kHalo), to = std::min(width, x0 - kHalo + padded);  // inside the frame
    std::fill(row, row + (from - (x0 - kHalo)), in[0]);
    std::copy(in + from, in + to, row + (from - (x0 - kHalo)));
    std::fill(row + (to - (x0 - kHalo)), row + padded, in[width - 1]);
  }

  // Per chunk: the sorted columns s₀ … s₄, each column's sum (NaN when it holds a NaN),
  // and the merged pairs m₀ … m₉, column x at index x − c0 + 8; then a flag per pixel.
  constexpr int kPlane = kChunk + 2 * W + 24;
  std::vector<float>& planes = args.scratch.planes;
  if (planes.size() < std::size_t(17 * kPlane)) planes.assign(std::size_t(17 * kPlane), 0.0f);
  float* const sorted = planes.data();
  float* const sums = sorted + 5 * kPlane;
  float* const pairs = sums + kPlane;
  std::int32_t* const flags = reinterpret_cast<std::int32_t*>(pairs + 10 * kPlane);  // per pixel: next to no data

  args.next_to_nan.resize(std::size_t(args.y1 - args.y0));
  for (auto& columns : args.next_to_nan) columns.clear();
  for (int y = args.y0; y < args.y1; ++y) {
    std::array<const float*, 5> row{};  // rows y − 2 … y + 2, at column x0 − kHalo
    for (int k = 0; k < 5; ++k)
      row[k] = rows.data() + std::size_t(std::clamp(y - 2 + k, 0, height - 1) - in0) * std::size_t(padded);
    float* out = args.out.ptr<float>(y);
    std::vector<int>& near = args.next_to_nan[std::size_t(y - args.y0)];
    for (int c0 = x0; c0 < x1; c0 += kChunk) {
      const int c1 = std::min(x1, c0 + kChunk);
      // Step 1 for columns [c0 − 2, c1 + 2).
      for (int x = c0 - 2; x < c1 + 2; x += W) {
        const int at = x - x0 + kHalo;
        V v[kSortColumn.inputs + kSortColumn.count];
        for (int k = 0; k < 5; ++k) load(v[k], row[k] + at);
        const V sum = v[0] + v[1] + v[2] + v[3] + v[4];
        run<kSortColumn>(v);
        float* s = sorted + (x - c0 + 8);
        store_outputs<kSortColumn>(s, kPlane, v, std::make_index_sequence<5>{});
        store(sums + (x - c0 + 8), sum);
      }
      // Step 2: the pair (x, x + 1) for x in [c0 − 1, c1 + 1).
      for (int x = c0 - 1; x < c1 + 1; x += W) {
        const float* s = sorted + (x - c0 + 8);
        V v[kMergePair.inputs + kMergePair.count];
        for (int k = 0; k < 5; ++k) {
          load(v[k], s + k * kPlane);
          load(v[5 + k], s + k * kPlane + 1);
        }
        run<kMergePair>(v);
        float* p = pairs + (x - c0 + 8);
        store_outputs<kMergePair>(p, kPlane, v, std::make_index_sequence<10>{});
      }
      // Steps 3 and 4 for the pixels [c0, c1). Lanes past c1 hold what no one reads.
      Mask any_near{};
      for (int x = c0; x < c1; x += W) {
        V v[kMergeMiddle.inputs + kMergeMiddle.count];
        const float* left = pairs + (x - 1 - c0 + 8);  // columns x − 1, x
        const float* right = pairs + (x + 1 - c0 + 8); // columns x + 1, x + 2
        for (int k = 0; k < 10; ++k) {
          load(v[k], left + k * kPlane);
          load(v[10 + k], right + k * kPlane);
        }
        run<kMergeMiddle>(v);
        const std::array<V, 6> c{output<kMergeMiddle, 0>(v), output<kMergeMiddle, 1>(v), output<kMergeMiddle, 2>(v),
                                 output<kMergeMiddle, 3>(v), output<kMergeMiddle, 4>(v), output<kMergeMiddle, 5>(v)};
        std::array<V, 5> e;  // column x − 2, sorted
        for (int k = 0; k < 5; ++k) load(e[std::size_t(k)], sorted + (x - 2 - c0 + 8) + k * kPlane);
        V median = c[5], term;
        for (int i = 0; i < 5; ++i) {
          set_max(term, c[std::size_t(i)], e[std::size_t(4 - i)]);
          set_min(median, median, term);
        }
        V window_sum, column_sum, centre;
        load(window_sum, sums + (x - 2 - c0 + 8));
        for (int k = 1; k < 5; ++k) {
          load(column_sum, sums + (x - 2 + k - c0 + 8));
          window_sum += column_sum;
        }
        load(centre, row[2] + (x - x0 + kHalo));
        // NaN is the value that is not equal to itself (v == v: an ordered compare, one
        // vector instruction; GCC 12 spells v != v lane by lane).
        const Mask has_data = centre == centre;
        const V result = has_data ? median : centre;
        if (x + W <= c1) {
          store(out + x, result);
        } else {
          std::array<float, W> tail;
          store(tail.data(), result);
          std::copy_n(tail.data(), c1 - x, out + x);
        }
        const Mask near_nan = has_data & ~(window_sum == window_sum);
        std::memcpy(flags + (x - c0), &near_nan, sizeof near_nan);
        any_near |= near_nan;
      }
      // The chunk's pixels next to no data, if any (rare: the occulter's and the field
      // stop's edges).
      std::array<std::uint64_t, W / 2> words;
      std::memcpy(words.data(), &any_near, sizeof any_near);
      std::uint64_t any = 0;
      for (const std::uint64_t word : words) any |= word;
      if (any)
        for (int x = c0; x < c1; ++x)
          if (flags[x - c0]) near.push_back(x);
    }
  }
}

OCCULTA_AVX512_END

}  // namespace

void rows(const cv::Mat& image, int y0, int y1, int x0, int x1, cv::Mat& out, Scratch& scratch,
          std::vector<std::vector<int>>& next_to_nan) {
  CV_Assert(image.type() == CV_32FC1 && image.isContinuous() && out.size() == image.size() && out.type() == CV_32FC1);
  CV_Assert(0 <= y0 && y0 <= y1 && y1 <= image.rows && 0 <= x0 && x0 <= x1 && x1 <= image.cols);
  CV_Assert(has_avx512());
  kernel(Args{image, y0, y1, x0, x1, out, scratch, next_to_nan});
}

}  // namespace occulta::imaging::median5
