// tests/imaging/median_filter_test.cpp — the median filter (imaging/difference.hpp): the
// networks of the 5×5 kernel (imaging/sorting_network.hpp, median5.hpp) on every 0–1
// input, and every pixel of the filter against one whole-frame cv::medianBlur with the
// no-data pixels put back, which is its definition.
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgproc.hpp>

#include "imaging/avx512.hpp"
#include "imaging/difference.hpp"
#include "imaging/median5.hpp"
#include "imaging/sorting_network.hpp"

namespace oi = occulta::imaging;
namespace sn = occulta::imaging::sorting_network;

namespace {

constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();

// A network's outputs for `inputs`, one value at a time.
std::vector<int> run(const sn::Network& net, const std::vector<int>& inputs) {
  std::vector<int> value(inputs);
  for (int i = 0; i < net.count; ++i) {
    const sn::Op& op = net.ops[std::size_t(i)];
    const int a = value[std::size_t(op.a)], b = value[std::size_t(op.b)];
    value.push_back(op.max ? std::max(a, b) : std::min(a, b));
  }
  std::vector<int> out;
  for (int k = 0; k < net.outputs; ++k) out.push_back(value[std::size_t(net.out[std::size_t(k)])]);
  return out;
}

// A sorted run of n zeros and ones with `ones` ones.
std::vector<int> run_of(int n, int ones) {
  std::vector<int> v(std::size_t(n), 0);
  std::fill(v.end() - ones, v.end(), 1);
  return v;
}

// Bit for bit, NaN as NaN: how many pixels of `filtered` differ from one cv::medianBlur of
// the whole of `image` with its no-data pixels put back (difference.hpp), or gained data.
int differences_from_whole_frame(const cv::Mat& image, const cv::Mat& filtered, int size) {
  cv::Mat reference;
  cv::medianBlur(image, reference, size);
  int differ = 0;
  for (int y = 0; y < image.rows; ++y)
    for (int x = 0; x < image.cols; ++x) {
      const float in = image.at<float>(y, x), a = filtered.at<float>(y, x), b = std::isnan(in) ? in : reference.at<float>(y, x);
      if (!(a == b || (std::isnan(a) && std::isnan(b)))) ++differ;
      if (std::isnan(in) && !std::isnan(a)) ++differ;  // no data never gains a value
    }
  return differ;
}

// A frame like a coronagraph's: noise around `level` quantised to whole numbers (ties,
// as int16 frames have), NaN inside the occulter and beyond the field stop (radii as
// fractions of the width, centre off the pixel grid) and in specks, one in `speck`.
cv::Mat coronagraph_like(int rows, int cols, double occulter, double stop, int speck, std::uint64_t seed) {
  cv::RNG rng(seed);
  cv::Mat image(rows, cols, CV_32FC1);
  rng.fill(image, cv::RNG::NORMAL, 100.0, 12.0);
  const double cx = 0.5 * cols + 2.3, cy = 0.5 * rows - 1.6;
  for (int y = 0; y < rows; ++y)
    for (int x = 0; x < cols; ++x) {
      float& v = image.at<float>(y, x);
      v = std::round(v);
      const double r = std::hypot(x - cx, y - cy);
      if (r < occulter * cols || r > stop * cols || (speck > 0 && rng.uniform(0, speck) == 0)) v = kNaN;
    }
  return image;
}

}  // namespace

TEST_CASE("median filter: each network of the 5×5 kernel is right on every 0–1 input") {
  // By the 0–1 principle (Knuth, TAOCP vol. 3 §5.3.4) a min/max network that sorts (or
  // merges) every sequence of zeros and ones does so for every input.
  const sn::Network sort = sn::sort5();
  CHECK(sort.count == 18);
  for (int bits = 0; bits < 32; ++bits) {
    std::vector<int> in;
    for (int k = 0; k < 5; ++k) in.push_back((bits >> k) & 1);
    std::vector<int> expected = in;
    std::sort(expected.begin(), expected.end());
    CAPTURE(bits);
    CHECK(run(sort, in) == expected);
  }
  // Merges of two sorted runs: all (n + 1)² pairs of 0–1 runs.
  for (const auto& [runs, ranks_from, ranks] : {std::tuple{5, 0, 10}, std::tuple{10, 7, 6}}) {
    const int n = runs, first = ranks_from, count = ranks;  // (clang 14 cannot capture a structured binding)
    const sn::Network merge = sn::merge(n, first, count);
    for (int ones_a = 0; ones_a <= n; ++ones_a)
      for (int ones_b = 0; ones_b <= n; ++ones_b) {
        std::vector<int> in = run_of(n, ones_a), b = run_of(n, ones_b);
        in.insert(in.end(), b.begin(), b.end());
        std::vector<int> all = in;
        std::sort(all.begin(), all.end());
        const std::vector<int> expected(all.begin() + first, all.begin() + first + count);
        CAPTURE(n);
        CAPTURE(ones_a);
        CAPTURE(ones_b);
        CHECK(run(merge, in) == expected);
      }
  }
  // The pruning kept only what the ranks asked for need (median5.cpp quotes these counts).
  CHECK(sn::merge(5, 0, 10).count == 26);
  CHECK(sn::merge(10, 7, 6).count == 36);
}

TEST_CASE("median filter: the 5×5 kernel equals cv::medianBlur wherever a window holds no NaN") {
  // Frames without NaN (so no pixel is left for the caller): quantised noise (many ties),
  // zeros and ones only, and values with +∞ here and there; widths that end in every
  // place of a vector and of a 128-column chunk.
  if (!oi::has_avx512()) {
    MESSAGE("this CPU has no AVX-512: the kernel is not used (cv::medianBlur is), nothing to check");
    return;
  }
  cv::RNG rng(5);
  int frames = 0;
  for (const int width : {64, 65, 77, 129, 200, 1000, 1024})
    for (const int kind : {0, 1, 2}) {
      cv::Mat ints(41, width, CV_32SC1), image;
      if (kind == 1)
        rng.fill(ints, cv::RNG::UNIFORM, 0, 2);  // 0 or 1
      else
        rng.fill(ints, cv::RNG::NORMAL, 0.0, 3.0);  // rounded: ties
      ints.convertTo(image, CV_32FC1);
      if (kind == 2)
        for (int k = 0; k < width; ++k)
          image.at<float>(rng.uniform(0, image.rows), rng.uniform(0, width)) = std::numeric_limits<float>::infinity();
      cv::Mat reference, out(image.size(), CV_32FC1, cv::Scalar(-7.0f));
      cv::medianBlur(image, reference, 5);
      oi::median5::Scratch scratch;
      std::vector<std::vector<int>> next_to_nan;
      // In two calls, as the filter's bands do.
      oi::median5::rows(image, 0, 17, 0, width, out, scratch, next_to_nan);
      for (const auto& row : next_to_nan) CHECK(row.empty());
      oi::median5::rows(image, 17, image.rows, 0, width, out, scratch, next_to_nan);
      for (const auto& row : next_to_nan) CHECK(row.empty());
      CAPTURE(width);
      CAPTURE(kind);
      CHECK(cv::countNonZero(out != reference) == 0);
      ++frames;
    }
  CHECK(frames == 21);
}

TEST_CASE("median filter: 5×5 on coronagraph-like frames equals one whole-frame cv::medianBlur, edges included") {
  // The frames median5 computes with cv::medianBlur left the pixels next to no data: the
  // occulter's edge, the field stop's, specks, and data reaching every edge of the frame
  // (where cv::medianBlur computes some columns one by one, median_filter.cpp), ±∞ of
  // both signs in one window. Each pixel must equal the whole-frame cv::medianBlur's.
  int frames = 0;
  for (const int width : {64, 100, 333, 1000, 1024, 1031})
    for (const int rows : {8, 9, 290})
      for (const double stop : {0.47, 0.75}) {  // inside the frame; beyond its edges and corners
        cv::Mat image = coronagraph_like(rows, width, 0.08, stop, 150, std::uint64_t(width * 7 + rows));
        image(cv::Rect(0, 0, width, 1)).setTo(3.0f);              // data along the top edge,
        image(cv::Rect(width - 3, rows / 2, 3, 3)).setTo(2.0f);   // at the right edge,
        image.at<float>(rows - 1, 0) = 1.0f;                      // in a corner with NaN round it
        image.at<float>(rows / 2, width / 3) = std::numeric_limits<float>::infinity();
        image.at<float>(rows / 2 + 1, width / 3 + 1) = -std::numeric_limits<float>::infinity();
        cv::Mat filtered = image.clone();
        oi::median_filter(filtered, 5);
        CAPTURE(width);
        CAPTURE(rows);
        CAPTURE(stop);
        CHECK(differences_from_whole_frame(image, filtered, 5) == 0);
        ++frames;
      }
  CHECK(frames == 36);
}

TEST_CASE("median filter: removes an isolated hit and keeps no-data as NaN") {
  cv::Mat image(32, 32, CV_32FC1, cv::Scalar(5.0));
  image.at<float>(10, 10) = 1e5f;  // a cosmic-ray hit
  image.rowRange(20, 24).setTo(std::numeric_limits<float>::quiet_NaN());
  oi::median_filter(image, 3);
  CHECK(image.at<float>(10, 10) == 5.0f);
  CHECK(std::isnan(image.at<float>(21, 5)));
  CHECK(image.at<float>(5, 5) == 5.0f);
}

TEST_CASE("median filter: cut to the columns with data equals one whole-frame cv::medianBlur") {
  // Frames whose field stop leaves their corners without data, as a coronagraph's do: the
  // filter leaves those columns out of each band (difference.cpp). Widths that put the
  // data at every place in the vector lanes and the frame's last, partial vector; data
  // that touch the left or right edge in some rows; NaN specks; a field stop near the
  // edge and one well inside. Each must give exactly one whole-frame medianBlur.
  cv::RNG rng(11);
  int frames = 0;
  for (const int width : {256, 301, 333, 512, 517}) {
    for (const double stop : {0.47, 0.36}) {
      cv::Mat image(290, width, CV_32FC1);
      rng.fill(image, cv::RNG::NORMAL, 100.0, 10.0);
      const double cx = 0.5 * width + 3.3, cy = 141.7, r_out = stop * width, r_in = 0.06 * width;
      for (int y = 0; y < image.rows; ++y)
        for (int x = 0; x < width; ++x) {
          const double r = std::hypot(x - cx, y - cy);
          if (r < r_in || r > r_out || rng.uniform(0, 300) == 0) image.at<float>(y, x) = std::numeric_limits<float>::quiet_NaN();
        }
      image(cv::Rect(0, 100, 7, 30)).setTo(55.0f);           // data at the left edge in some rows
      image(cv::Rect(width - 5, 160, 5, 40)).setTo(66.0f);   // and at the right edge
      for (int size : {3, 5}) {
        cv::Mat filtered = image.clone();
        oi::median_filter(filtered, size);
        CAPTURE(width);
        CAPTURE(stop);
        CAPTURE(size);
        CHECK(differences_from_whole_frame(image, filtered, size) == 0);
        ++frames;
      }
    }
  }
  CHECK(frames == 20);
}

TEST_CASE("median filter: banded, equals one whole-frame cv::medianBlur, no data kept as NaN") {
  // A frame as the chain has it: data in an annulus, NaN inside the occulter and outside
  // the field stop, some NaN specks within; the banded filter must not change a value.
  cv::Mat image(300, 260, CV_32FC1);
  cv::RNG rng(7);
  rng.fill(image, cv::RNG::NORMAL, 100.0, 10.0);
  for (int y = 0; y < image.rows; ++y)
    for (int x = 0; x < image.cols; ++x) {
      const double r = std::hypot(x - 131.3, y - 148.6);
      if (r < 30.0 || r > 125.0 || rng.uniform(0, 200) == 0) image.at<float>(y, x) = std::numeric_limits<float>::quiet_NaN();
    }
  image.col(0).setTo(42.0f);  // data touching the frame's edge: the replicated border
  for (int size : {3, 5}) {
    cv::Mat reference;
    cv::medianBlur(image, reference, size);
    for (int y = 0; y < image.rows; ++y)  // no data stays no data (difference.hpp)
      for (int x = 0; x < image.cols; ++x)
        if (std::isnan(image.at<float>(y, x))) reference.at<float>(y, x) = image.at<float>(y, x);
    cv::Mat banded = image.clone();
    oi::median_filter(banded, size);
    int differ = 0;
    for (int y = 0; y < image.rows; ++y)
      for (int x = 0; x < image.cols; ++x) {
        const float a = banded.at<float>(y, x), b = reference.at<float>(y, x);
        if (!(a == b || (std::isnan(a) && std::isnan(b)))) ++differ;
        if (std::isnan(image.at<float>(y, x)) && !std::isnan(a)) ++differ;  // no data never gains a value
      }
    CHECK(differ == 0);
  }
}
