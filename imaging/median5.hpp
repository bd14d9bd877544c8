// imaging/median5.hpp — the 5×5 median of a float frame's rows by sorting networks shared
// between neighbouring windows (used by median_filter, difference.hpp).
//
// cv::medianBlur sorts each 5×5 window afresh: 99 compare-exchanges a pixel. Here each
// column of 5 is sorted once for the five windows that hold it, each pair of neighbouring
// sorted columns is merged once for the two windows that hold it, and a window's median
// comes from merging what it shares with its neighbours (median5.cpp shows the steps):
// about 45 compare-exchanges a pixel, in SIMD lanes along the row (AVX-512). Measured on
// one core, 1024² floats: 1.8 ms against cv::medianBlur's 4.6 ms.
//
// The median is a selection, so where the window holds no NaN the value is exactly
// cv::medianBlur's (BORDER_REPLICATE, as cv::medianBlur uses). Next to a NaN there is no
// order and cv::medianBlur's answer depends on its code path; those pixels are left to
// the caller to take from cv::medianBlur (median_filter, difference.cpp). (A ±0 may come
// out with the other sign: they compare equal.)
//
// Pixels: row y, column x, origin at the frame's first pixel; borders replicated.
#pragma once

#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging::median5 {

// The kernel is built for AVX-512 (imaging/avx512.hpp: has_avx512() says whether this CPU
// runs it). Without it cv::medianBlur is the faster of the two.

// Room a thread keeps between calls (padded rows and the sorted columns), so that a
// stream of frames allocates nothing new.
struct Scratch {
  std::vector<float> rows, planes;
};

// Rows [y0, y1) and columns [x0, x1) of the 5×5 median of `image` (CV_32FC1,
// continuous), written into the same rows and columns of `out` (same size and type; other
// pixels untouched). A pixel whose own value is NaN gets that NaN (no data stays no
// data). A pixel with data whose window holds a NaN, or +∞ and −∞ together, is left for
// the caller: its column is appended to next_to_nan[y − y0] (in increasing order; the
// vector is resized to y1 − y0 and cleared first). Needs has_avx512().
void rows(const cv::Mat& image, int y0, int y1, int x0, int x1, cv::Mat& out, Scratch& scratch,
          std::vector<std::vector<int>>& next_to_nan);

}  // namespace occulta::imaging::median5
