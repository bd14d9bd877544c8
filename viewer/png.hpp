// viewer/png.hpp — 8-bit pictures encoded as PNG in memory, with libpng (Debian's
// libpng-dev), with the settings OpenCV's PNG writer uses by default.
//
// Why not cv::imwrite / cv::imencode: Debian's libopencv_imgcodecs pulls in GDAL, GDCM,
// libheif and ~110 more shared libraries, whose loading and static set-up cost every
// occulta process about 0.2 s of CPU at start (issue 18: measured against a program
// linking only opencv_core and opencv_imgproc) — more than `maps` spends on a dozen frames.
// (stb_image_write, linked already for Dear ImGui, was tried: ~10× slower than libpng.)
//
// Conventions: OpenCV's — CV_8UC1 grey, CV_8UC3 B,G,R, CV_8UC4 B,G,R,A; row 0 is the
// picture's top row. The PNG holds the same pixel values (PNG's own order: R,G,B(,A)).
#pragma once

#include <vector>

#include <opencv2/core.hpp>

namespace occulta::viewer {

// Empty when the picture has another type or libpng fails.
std::vector<unsigned char> encode_png(const cv::Mat& picture);

// A CV_8UC4 picture whose bytes are R,G,B,A (a Framebuffer's), as RGB when `opaque` (the
// alpha bytes left out as libpng writes each row) and RGBA otherwise: the same bytes as
// encode_png of the picture converted to OpenCV's B,G,R(,A), without that conversion's
// copy of the picture. Empty when the picture has another type or libpng fails.
std::vector<unsigned char> encode_png_rgba(const cv::Mat& rgba, bool opaque);

}  // namespace occulta::viewer
