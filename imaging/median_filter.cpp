// imaging/median_filter.cpp — the median filter against cosmic-ray hits (difference.hpp).
//
// The result is defined as one cv::medianBlur of the whole frame (BORDER_REPLICATE) with
// the no-data pixels put back as NaN; every path below gives exactly that, and the tests
// compare each pixel (tests/imaging/median_filter_test.cpp).
//
// Near NaN the sorting network's answer depends on how a column is computed: OpenCV
// takes the first two columns and the last few (fewer than two vectors' width) one by one
// with std::min/std::max, the rest a vector at a time with SIMD min/max, and the two
// treat NaN differently; a vector's lanes all do the same, so the answer at a pixel the
// vectors compute depends on its window alone. Every cut of the frame handed to
// cv::medianBlur below keeps each pixel it is asked for in the same kind of column as
// in the whole frame.
#include "imaging/difference.hpp"

#include <algorithm>
#include <limits>
#include <vector>

#include <opencv2/imgproc.hpp>

#include "imaging/avx512.hpp"
#include "imaging/median5.hpp"

namespace occulta::imaging {

namespace {

constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();

// Whether a row holds any value that is not NaN (x == x fails for NaN alone). No early
// exit, so that the compiler vectorises it.
bool any_value(const float* row, int n) {
  int values = 0;
  for (int x = 0; x < n; ++x) values |= row[x] == row[x];
  return values != 0;
}

// The first column in [a, z) with data (a value that is not NaN), z when there is none;
// and the end of the last one, a when there is none. A run of 16 at a time is tested
// whole (a loop the compiler vectorises): a frame's corners outside the field stop are
// long runs of NaN, and each row is searched from both ends.
int first_value(const float* row, int a, int z) {
  for (; a + 16 <= z; a += 16) {
    int values = 0;
    for (int k = 0; k < 16; ++k) values |= row[a + k] == row[a + k];
    if (values) break;
  }
  while (a < z && row[a] != row[a]) ++a;
  return a;
}
int last_value_end(const float* row, int a, int z) {
  for (; z - 16 >= a; z -= 16) {
    int values = 0;
    for (int k = 1; k <= 16; ++k) values |= row[z - k] == row[z - k];
    if (values) break;
  }
  while (z > a && row[z - 1] != row[z - 1]) --z;
  return z;
}

// out = in where in is NaN (no data stays no data), else the filtered value.
void keep_no_data(const float* __restrict in, const float* __restrict filtered, float* __restrict out, int n) {
  for (int x = 0; x < n; ++x) out[x] = in[x] != in[x] ? in[x] : filtered[x];
}

// Columns from an edge of the frame within which cv::medianBlur may compute a pixel one
// by one rather than in a vector: its first two, and at the end fewer than two vectors
// of 16 floats (AVX-512) and the two replicated columns.
constexpr int kEdge = 40;
// Cuts that reach the frame's right edge start at a multiple of this: the cut's width
// then leaves the same remainder as the frame's in vectors of 4, 8 or 16 floats, and its
// last columns are computed the way the frame's are.
constexpr int kAlign = 32;

// The pixels next to no data in rows [y0, y1) (median5::rows left them: their columns in
// next_to_nan[y − y0]), from cv::medianBlur. The band's rows go in groups of kGroup; a
// group's columns next to no data gather into segments (neighbours up to 4 apart join
// one). A segment away from the frame's edges is cut out with the 2 columns and rows
// its windows need and packed beside the others into one strip of kGroup + 4 rows, with
// 2 columns before and kEdge after, so that cv::medianBlur computes all of them a vector
// at a time as it does in the whole frame (a pixel's window lies inside its own piece).
// A segment at an edge gets a cut of its own reaching that edge.
void next_to_no_data(const cv::Mat& image, int y0, int y1, const std::vector<std::vector<int>>& next_to_nan,
                     cv::Mat& out, cv::Mat& strip, cv::Mat& filtered, std::vector<int>& columns) {
  constexpr int kGroup = 4;
  const int width = image.cols, height = image.rows;
  struct Piece {
    int y, a, b, at;  // the group's first row; columns [a, b] next to no data; strip column of a − 2
  };
  std::vector<Piece> pieces;
  int strip_width = 2;
  // Writes the filtered value of each pixel next to no data in rows [y, y + kGroup) and
  // columns [a, b], from `from`, where frame column x is at from column x − shift and
  // frame row y at from row y − row_shift.
  const auto put = [&](int y, int a, int b, const cv::Mat& from, int row_shift, int shift) {
    for (int r = y; r < std::min(y + kGroup, y1); ++r)
      for (const int x : next_to_nan[std::size_t(r - y0)])
        if (a <= x && x <= b) out.at<float>(r, x) = from.at<float>(r - row_shift, x - shift);
  };
  for (int y = y0; y < y1; y += kGroup) {
    columns.clear();
    for (int r = y; r < std::min(y + kGroup, y1); ++r)
      columns.insert(columns.end(), next_to_nan[std::size_t(r - y0)].begin(), next_to_nan[std::size_t(r - y0)].end());
    std::sort(columns.begin(), columns.end());
    for (std::size_t i = 0; i < columns.size();) {
      const int a = columns[i];
      int b = a;
      while (i < columns.size() && columns[i] <= b + 4) b = columns[i++];
      if (a >= 2 && b < width - kEdge) {
        pieces.push_back({y, a, b, strip_width});
        strip_width += b - a + 5;
        continue;
      }
      // At an edge: rows [r0, r1) and columns [c0, c1) of the frame, as they are there.
      const int r0 = std::max(0, y - 2), r1 = std::min(height, y + kGroup + 2);
      const int c0 = a < 2 ? 0 : (a - 4) / kAlign * kAlign;
      const int c1 = b >= width - kEdge ? width : std::min(width, b + 1 + kEdge);
      cv::Mat cut(r1 - r0, c1 - c0, CV_32FC1);
      image(cv::Rect(c0, r0, c1 - c0, r1 - r0)).copyTo(cut);
      cv::Mat cut_filtered;
      cv::medianBlur(cut, cut_filtered, 5);
      put(y, a, b, cut_filtered, r0, c0);
    }
  }
  if (pieces.empty()) return;
  strip_width += kEdge;
  strip.create(kGroup + 4, strip_width, CV_32FC1);
  strip.setTo(0.0f);
  for (const Piece& piece : pieces)
    for (int r = 0; r < kGroup + 4; ++r) {
      const float* in = image.ptr<float>(std::clamp(piece.y - 2 + r, 0, height - 1));
      std::copy(in + piece.a - 2, in + piece.b + 3, strip.ptr<float>(r) + piece.at);
    }
  cv::medianBlur(strip, filtered, 5);
  for (const Piece& piece : pieces) put(piece.y, piece.a, piece.b, filtered, piece.y - 2, piece.a - 2 - piece.at);
}

}  // namespace

void median_filter(cv::Mat& image, int size, cv::Mat& scratch) {
  CV_Assert(image.type() == CV_32FC1 && (size == 3 || size == 5));
  // The frame goes in bands of rows in parallel, each band read with the filter's
  // half-width of rows above and below: every output row's window lies inside its band's
  // input. A band whose rows hold no finite value is NaN in and NaN out, and is skipped.
  //
  // 5×5 on a CPU with AVX-512 (and a frame of at least 64 × 8): median5 computes the
  // band's columns with data, and cv::medianBlur the pixels next to no data
  // (next_to_no_data).
  //
  // Otherwise cv::medianBlur (single-threaded) runs on each band, cut to narrower columns
  // only where that changes nothing: the columns left out hold no data in the band's
  // input rows (their pixels stay NaN), and every pixel with data lies at least kMargin
  // columns inside the cut (and inside the frame's edge on a side that is cut), where
  // both the frame and the cut compute it a vector at a time; the cut starts at a
  // multiple of kAlign columns. Outside a coronagraph's field stop a frame's corners hold
  // no data: the cut leaves them out.
  const int half = size / 2;
  constexpr int kBand = 32, kMargin = 48;
  if (!image.isContinuous()) image = image.clone();
  scratch.create(image.size(), CV_32FC1);
  const int width = image.cols;
  const bool shared_networks = size == 5 && has_avx512() && width >= 64 && image.rows >= 8;
  cv::parallel_for_(cv::Range(0, (image.rows + kBand - 1) / kBand), [&](const cv::Range& bands) {
    // Each worker keeps its room from frame to frame (fresh buffers per band were
    // allocated, and their pages faulted in, 32 times a frame); a smaller band is written
    // into the first rows (cv::Mat::create keeps a buffer of the same size and type).
    thread_local cv::Mat room_in, room_out, strip, strip_filtered;
    thread_local median5::Scratch room5;
    thread_local std::vector<std::vector<int>> next_to_nan;
    thread_local std::vector<int> columns;
    if (!shared_networks && (room_out.cols != width || room_out.rows < kBand + 2 * half)) {
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
        // Searched only where it can move [first, last): up to `first` from the left, down
        // to `last` from the right.
        const int a = first_value(row, 0, std::min(first, width));
        const int z = last_value_end(row, std::max(last, a), width);
        if (a < z) first = std::min(first, a), last = std::max(last, z);
      }
      bool any = false;
      for (int y = y0; y < y1 && !any; ++y) any = any_value(image.ptr<float>(y), width);
      if (!any || first >= last) {
        for (int y = y0; y < y1; ++y) std::fill_n(scratch.ptr<float>(y), width, kNaN);
        continue;
      }
      if (shared_networks) {
        median5::rows(image, y0, y1, first, last, scratch, room5, next_to_nan);
        for (int y = y0; y < y1; ++y) {  // no data outside [first, last): it stays the NaN it was
          const float* in = image.ptr<float>(y);
          float* out = scratch.ptr<float>(y);
          std::copy(in, in + first, out);
          std::copy(in + last, in + width, out + last);
        }
        next_to_no_data(image, y0, y1, next_to_nan, scratch, strip, strip_filtered, columns);
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
