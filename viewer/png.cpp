// viewer/png.cpp — PNG encoding through stb_image_write.
#include "viewer/png.hpp"

#include <opencv2/imgproc.hpp>
#include <stb_image_write.h>

namespace occulta::viewer {

namespace {

void append(void* context, void* data, int size) {
  auto* out = static_cast<std::vector<unsigned char>*>(context);
  const auto* bytes = static_cast<const unsigned char*>(data);
  out->insert(out->end(), bytes, bytes + size);
}

}  // namespace

std::vector<unsigned char> encode_png(const cv::Mat& picture) {
  std::vector<unsigned char> out;
  if (picture.empty() || picture.depth() != CV_8U) return out;
  cv::Mat rgb;
  switch (picture.channels()) {
    case 1: rgb = picture; break;
    case 3: cv::cvtColor(picture, rgb, cv::COLOR_BGR2RGB); break;
    case 4: cv::cvtColor(picture, rgb, cv::COLOR_BGRA2RGBA); break;
    default: return out;
  }
  if (!stbi_write_png_to_func(append, &out, rgb.cols, rgb.rows, rgb.channels(), rgb.data, int(rgb.step)))
    out.clear();
  return out;
}

}  // namespace occulta::viewer
