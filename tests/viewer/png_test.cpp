// tests/viewer/png_test.cpp — viewer/png: what stb encodes, OpenCV's own PNG decoder
// (libopencv_imgcodecs, an independent implementation) reads back pixel for pixel.
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgcodecs.hpp>

#include "viewer/png.hpp"

namespace {

bool round_trips(const cv::Mat& picture) {
  const std::vector<unsigned char> bytes = occulta::viewer::encode_png(picture);
  if (bytes.empty()) return false;
  const cv::Mat back = cv::imdecode(bytes, cv::IMREAD_UNCHANGED);
  return back.size() == picture.size() && back.type() == picture.type() && cv::norm(back, picture, cv::NORM_INF) == 0;
}

}  // namespace

TEST_CASE("png: grey, B,G,R and B,G,R,A pictures come back from OpenCV's decoder unchanged") {
  cv::RNG rng(7);
  for (const int type : {CV_8UC1, CV_8UC3, CV_8UC4}) {
    cv::Mat picture(37, 53, type);
    rng.fill(picture, cv::RNG::UNIFORM, 0, 256);
    CHECK(round_trips(picture));
    // A window of a larger picture: rows not contiguous (stride > width · channels).
    cv::Mat larger(60, 90, type);
    rng.fill(larger, cv::RNG::UNIFORM, 0, 256);
    CHECK(round_trips(larger(cv::Rect(7, 5, 41, 33))));
  }
  // Channel order kept: a pure blue B,G,R picture is blue, not red, after the round trip.
  const cv::Mat blue(4, 4, CV_8UC3, cv::Scalar(255, 0, 0));
  CHECK(round_trips(blue));
}

TEST_CASE("png: pictures that are not 8-bit with 1, 3 or 4 channels give no bytes") {
  CHECK(occulta::viewer::encode_png(cv::Mat(4, 4, CV_32FC1, cv::Scalar(1.0))).empty());
  CHECK(occulta::viewer::encode_png(cv::Mat(4, 4, CV_8UC2, cv::Scalar(1, 2))).empty());
  CHECK(occulta::viewer::encode_png(cv::Mat()).empty());
}
