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

// Empty when the picture has another type or stb fails.
std::vector<unsigned char> encode_png(const cv::Mat& picture);

}  // namespace occulta::viewer
