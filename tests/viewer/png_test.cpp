// tests/viewer/png_test.cpp — viewer/png: what libpng encodes, OpenCV's own PNG decoder
// (libopencv_imgcodecs, an independent implementation) reads back pixel for pixel.
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

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

TEST_CASE("png: R,G,B,A bytes encode as the same file as the picture converted to OpenCV's order") {
  // write_png encodes a Framebuffer's R,G,B,A bytes straight (viewer/headless.cpp); before,
  // it converted them with cv::cvtColor and encoded B,G,R(,A). The files must be the same
  // bytes, and read back as the picture.
  cv::RNG rng(11);
  cv::Mat rgba(29, 47, CV_8UC4);
  rng.fill(rgba, cv::RNG::UNIFORM, 0, 256);
  cv::Mat converted;
  cv::cvtColor(rgba, converted, cv::COLOR_RGBA2BGRA);
  const std::vector<unsigned char> translucent = occulta::viewer::encode_png_rgba(rgba, false);
  CHECK(!translucent.empty());
  CHECK(translucent == occulta::viewer::encode_png(converted));
  CHECK(cv::norm(cv::imdecode(translucent, cv::IMREAD_UNCHANGED), converted, cv::NORM_INF) == 0);
  std::vector<cv::Mat> channels;
  cv::split(rgba, channels);
  channels[3].setTo(255);  // opaque: written as RGB
  cv::merge(channels, rgba);
  cv::cvtColor(rgba, converted, cv::COLOR_RGBA2BGR);
  const std::vector<unsigned char> opaque = occulta::viewer::encode_png_rgba(rgba, true);
  CHECK(!opaque.empty());
  CHECK(opaque == occulta::viewer::encode_png(converted));
  CHECK(cv::norm(cv::imdecode(opaque, cv::IMREAD_UNCHANGED), converted, cv::NORM_INF) == 0);
  CHECK(occulta::viewer::encode_png_rgba(converted, true).empty());  // not four channels
}
