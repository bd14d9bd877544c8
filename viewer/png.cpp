// viewer/png.cpp — PNG encoding through libpng.
#include "viewer/png.hpp"

#include <csetjmp>

#include <png.h>
#include <zlib.h>

namespace occulta::viewer {

namespace {

void append(png_structp png, png_bytep data, png_size_t size) {
  auto* out = static_cast<std::vector<unsigned char>*>(png_get_io_ptr(png));
  out->insert(out->end(), data, data + size);
}

void no_flush(png_structp) {}

// libpng reports errors by longjmp: nothing with a destructor lives in this frame.
// `bgr`: the rows hold B,G,R(,A); `filler`: each pixel has a fourth byte after R,G,B that
// the PNG leaves out (libpng's png_set_filler).
bool encode(const cv::Mat& picture, int color_type, bool bgr, bool filler, std::vector<unsigned char>* out) {
  png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, nullptr, nullptr, nullptr);
  if (!png) return false;
  png_infop info = png_create_info_struct(png);
  if (!info || setjmp(png_jmpbuf(png))) {
    png_destroy_write_struct(&png, &info);
    return false;
  }
  png_set_write_fn(png, out, append, no_flush);
  // OpenCV's own PNG writer's defaults (zlib level 1, run-length strategy, the "sub"
  // filter on every row): fast, and the files come out as cv::imwrite wrote them. Letting
  // libpng choose the filter per row costs twice the time.
  png_set_compression_level(png, 1);
  png_set_compression_strategy(png, Z_RLE);
  png_set_filter(png, PNG_FILTER_TYPE_BASE, PNG_FILTER_SUB);
  png_set_IHDR(png, info, png_uint_32(picture.cols), png_uint_32(picture.rows), 8, color_type, PNG_INTERLACE_NONE,
               PNG_COMPRESSION_TYPE_DEFAULT, PNG_FILTER_TYPE_DEFAULT);
  png_write_info(png, info);
  if (bgr) png_set_bgr(png);
  if (filler) png_set_filler(png, 0, PNG_FILLER_AFTER);
  for (int y = 0; y < picture.rows; ++y) png_write_row(png, picture.ptr<png_byte>(y));
  png_write_end(png, nullptr);
  png_destroy_write_struct(&png, &info);
  return true;
}

}  // namespace

std::vector<unsigned char> encode_png(const cv::Mat& picture) {
  std::vector<unsigned char> out;
  if (picture.empty() || picture.depth() != CV_8U) return out;
  int color_type = 0;
  switch (picture.channels()) {
    case 1: color_type = PNG_COLOR_TYPE_GRAY; break;
    case 3: color_type = PNG_COLOR_TYPE_RGB; break;
    case 4: color_type = PNG_COLOR_TYPE_RGB_ALPHA; break;
    default: return out;
  }
  if (!encode(picture, color_type, picture.channels() > 1, false, &out)) out.clear();  // OpenCV's B,G,R(,A) order
  return out;
}

std::vector<unsigned char> encode_png_rgba(const cv::Mat& rgba, bool opaque) {
  std::vector<unsigned char> out;
  if (rgba.type() != CV_8UC4) return out;
  if (!encode(rgba, opaque ? PNG_COLOR_TYPE_RGB : PNG_COLOR_TYPE_RGB_ALPHA, false, opaque, &out)) out.clear();
  return out;
}

}  // namespace occulta::viewer
