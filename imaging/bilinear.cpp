// imaging/bilinear.cpp — the affine bilinear samples of bilinear.hpp, 16 a vector.
//
// Each step rounds as the OpenCV steps it stands for (bilinear.hpp): the affine in double
// (a₀₀ x + a₀₁ y, then + a₀₂, as polar.cpp's tables), converted to float; × 32 and
// rounded with the CPU's rounding (to nearest, ties to even: cvRound); the four products
// and three sums in cv::remap's order. This file is compiled with -ffp-contract=off
// (imaging/CMakeLists.txt): a fused multiply-add rounds once where those round twice.
#include "imaging/bilinear.hpp"

#include <immintrin.h>

#include <cstdint>
#include <limits>

#include "imaging/avx512.hpp"

namespace occulta::imaging::bilinear {

namespace {

constexpr int kFracBits = 5;  // cv::remap's INTER_BITS: points rounded to 1/32 pixel
constexpr int kMaxSide = 32767;  // the fixed-point tables hold a pixel's column and row in int16
constexpr int kAhead = 8;        // rows: a row's pixels are prefetched while the row this far before it is sampled

struct Frame {
  const float* pixels;
  std::int32_t step;    // floats a row
  std::int32_t last_x;  // width − 1: columns 0 … width − 2 have a right neighbour
  std::int32_t last_y;  // height − 1
};

// Compiled wholly for AVX-512, helpers and all (avx512.hpp says why).
OCCULTA_AVX512_BEGIN

// Where 16 points fall: their fixed-point coordinates (1/32 pixel), the offset of each
// one's top-left pixel, and the lanes whose four pixels all lie in the frame.
struct Located {
  __m512i u, v, at;
  __mmask16 inside;
};

// float((b₀ x + b₁ y) + b₂), 8 lanes.
[[gnu::always_inline]] inline __m256 apply(const double (&b)[3], __m512d x, __m512d y) {
  const __m512d bx = _mm512_mul_pd(_mm512_set1_pd(b[0]), x), by = _mm512_mul_pd(_mm512_set1_pd(b[1]), y);
  return _mm512_cvtpd_ps(_mm512_add_pd(_mm512_add_pd(bx, by), _mm512_set1_pd(b[2])));
}

// Points c … c + 15 of the row on the circle of radius `radius` (the lanes in `lanes`).
[[gnu::always_inline]] inline Located locate(const Frame& f, const bilinear::CirclePoints& points, double radius,
                                             int c, __mmask16 lanes, const double (&a)[2][3]) {
  const __m512d r = _mm512_set1_pd(radius), cx = _mm512_set1_pd(points.cx), cy = _mm512_set1_pd(points.cy);
  __m256 u_half[2], v_half[2];
  for (int h = 0; h < 2; ++h) {
    const __mmask8 m = __mmask8(lanes >> (8 * h));
    const __m512d sin = _mm512_maskz_loadu_pd(m, points.sin.data() + c + 8 * h);
    const __m512d cos = _mm512_maskz_loadu_pd(m, points.cos.data() + c + 8 * h);
    const __m512d x = _mm512_sub_pd(cx, _mm512_mul_pd(r, sin)), y = _mm512_add_pd(cy, _mm512_mul_pd(r, cos));
    u_half[h] = apply(a[0], x, y);
    v_half[h] = apply(a[1], x, y);
  }
  const __m512 scale = _mm512_set1_ps(float(1 << kFracBits));
  const __m512 u = _mm512_insertf32x8(_mm512_castps256_ps512(u_half[0]), u_half[1], 1);
  const __m512 v = _mm512_insertf32x8(_mm512_castps256_ps512(v_half[0]), v_half[1], 1);
  Located at;
  at.u = _mm512_cvtps_epi32(_mm512_mul_ps(u, scale));  // the CPU's rounding: to nearest, ties to even
  at.v = _mm512_cvtps_epi32(_mm512_mul_ps(v, scale));
  const __m512i i = _mm512_srai_epi32(at.u, kFracBits), j = _mm512_srai_epi32(at.v, kFracBits);
  // 0 ≤ i < width − 1 and 0 ≤ j < height − 1, compared unsigned: a negative one is huge.
  at.inside = _mm512_mask_cmplt_epu32_mask(_mm512_cmplt_epu32_mask(i, _mm512_set1_epi32(f.last_x)) & lanes, j,
                                           _mm512_set1_epi32(f.last_y));
  at.at = _mm512_add_epi32(_mm512_mullo_epi32(j, _mm512_set1_epi32(f.step)), i);
  return at;
}

// The pixels at `at` (floats from `row`) and their right neighbours, for the lanes in
// `inside` (NaN in the others): each pixel with its neighbour one 64-bit element, half the
// elements a float gather would take.
[[gnu::always_inline]] inline void pairs(const float* row, __m512i at, __mmask16 inside, __m512& left, __m512& right) {
  const __m512i nan2 = _mm512_set1_epi32(0x7fc00000);
  const __m512i lo = _mm512_mask_i32gather_epi64(nan2, __mmask8(inside), _mm512_castsi512_si256(at), row, 4);
  const __m512i hi = _mm512_mask_i32gather_epi64(nan2, __mmask8(inside >> 8), _mm512_extracti64x4_epi64(at, 1), row, 4);
  const __m512i even = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26, 28, 30);
  const __m512i odd = _mm512_setr_epi32(1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31);
  left = _mm512_castsi512_ps(_mm512_permutex2var_epi32(lo, even, hi));
  right = _mm512_castsi512_ps(_mm512_permutex2var_epi32(lo, odd, hi));
}

// Row r of the output. `ahead`: the radius of a later row, whose pixels are asked for
// (prefetched) meanwhile; nullptr: none. A frame is megabytes, read along circles, in an
// order the CPU cannot foresee: without this each row waits for its pixels to come from
// memory (maps_bench: −8 % of the run's CPU with rows 8 ahead; 4 and 16 gained less).
void sample_row(const Frame& f, const bilinear::CirclePoints& points, int r, const double* ahead,
                const std::uint8_t* drop, const double (&a)[2][3], float* out) {
  const __m512 nan = _mm512_set1_ps(std::numeric_limits<float>::quiet_NaN());
  const __m512 unit = _mm512_set1_ps(1.0f / float(1 << kFracBits)), one = _mm512_set1_ps(1.0f);
  const __m512i frac_mask = _mm512_set1_epi32((1 << kFracBits) - 1);
  const int n = points.cols();
  const double radius = points.radius[std::size_t(r)];
  for (int c = 0; c < n; c += 16) {
    const __mmask16 lanes = __mmask16(n - c >= 16 ? 0xffffu : (1u << (n - c)) - 1u);
    if (ahead) {
      const Located later = locate(f, points, *ahead, c, lanes, a);
      alignas(64) std::int32_t index[16];
      _mm512_store_si512(index, _mm512_maskz_mov_epi32(later.inside, later.at));
      for (int k = 0; k < 16; ++k) {
        _mm_prefetch(reinterpret_cast<const char*>(f.pixels + index[k]), _MM_HINT_T0);
        _mm_prefetch(reinterpret_cast<const char*>(f.pixels + f.step + index[k]), _MM_HINT_T0);
      }
    }
    const Located at = locate(f, points, radius, c, lanes, a);
    __m512 s00, s01, s10, s11;
    pairs(f.pixels, at.at, at.inside, s00, s01);
    pairs(f.pixels + f.step, at.at, at.inside, s10, s11);
    const __m512 p = _mm512_mul_ps(_mm512_cvtepi32_ps(_mm512_and_si512(at.u, frac_mask)), unit);
    const __m512 q = _mm512_mul_ps(_mm512_cvtepi32_ps(_mm512_and_si512(at.v, frac_mask)), unit);
    const __m512 p1 = _mm512_sub_ps(one, p), q1 = _mm512_sub_ps(one, q);
    __m512 sum = _mm512_add_ps(_mm512_mul_ps(s00, _mm512_mul_ps(q1, p1)), _mm512_mul_ps(s01, _mm512_mul_ps(q1, p)));
    sum = _mm512_add_ps(sum, _mm512_mul_ps(s10, _mm512_mul_ps(q, p1)));
    sum = _mm512_add_ps(sum, _mm512_mul_ps(s11, _mm512_mul_ps(q, p)));
    if (drop) {
      const __mmask16 dropped = _mm512_test_epi32_mask(_mm512_cvtepu8_epi32(_mm_maskz_loadu_epi8(lanes, drop + c)),
                                                       _mm512_set1_epi32(0xff));
      sum = _mm512_mask_mov_ps(sum, dropped, nan);
    }
    _mm512_mask_storeu_ps(out + c, lanes, sum);
  }
}

OCCULTA_AVX512_END

}  // namespace

bool available(const cv::Mat& frame) {
  return has_avx512() && frame.type() == CV_32FC1 && frame.cols >= 1 && frame.rows >= 1 && frame.cols <= kMaxSide &&
         frame.rows <= kMaxSide && frame.step1() <= std::size_t(std::numeric_limits<std::int32_t>::max() / kMaxSide);
}

void sample_affine(const cv::Mat& frame, const CirclePoints& points, const cv::Matx23d& a, const cv::Mat& drop,
                   cv::Mat& out) {
  CV_Assert(available(frame) && points.sin.size() == points.cos.size());
  CV_Assert(drop.empty() || (drop.type() == CV_8UC1 && drop.rows == points.rows() && drop.cols == points.cols()));
  out.create(points.rows(), points.cols(), CV_32FC1);
  const Frame f{frame.ptr<float>(), std::int32_t(frame.step1()), frame.cols - 1, frame.rows - 1};
  const double b[2][3] = {{a(0, 0), a(0, 1), a(0, 2)}, {a(1, 0), a(1, 1), a(1, 2)}};
  // Stripes as cv::remap makes them (one per 64 K samples), for the same threads.
  cv::parallel_for_(
      cv::Range(0, points.rows()),
      [&](const cv::Range& rows) {
        for (int r = rows.start; r < rows.end; ++r)
          sample_row(f, points, r, r + kAhead < rows.end ? &points.radius[std::size_t(r + kAhead)] : nullptr,
                     drop.empty() ? nullptr : drop.ptr<std::uint8_t>(r), b, out.ptr<float>(r));
      },
      double(out.total()) / double(1 << 16));
}

}  // namespace occulta::imaging::bilinear
