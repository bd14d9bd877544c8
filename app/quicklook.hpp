// app/quicklook.hpp — PNG pictures for a person: difference images, polar images and
// time maps, as 8-bit grey with a one-line caption.
//
// Images in occulta keep FITS row order (row 0 = the bottom of the picture); every
// function here flips them so that north (or height, or the later PA) is up on screen.
// Values are shown linearly between −limit and +limit (in σ for differences), no data
// as black. Captions are plain ASCII (OpenCV's Hershey font has no other glyphs).
#pragma once

#include <filesystem>
#include <string>

#include <opencv2/core.hpp>

#include "imaging/polar.hpp"

namespace occulta::app {

// Grey 8-bit picture of a float image: −limit → 16, +limit → 255, NaN → 0; flipped so
// that row 0 is at the bottom; enlarged (nearest neighbour) by an integer factor until it
// is at least min_size pixels on its shorter side.
cv::Mat grey_picture(const cv::Mat& values, double limit, int min_size = 360);

// The integer enlargement grey_picture applies to an image of this size.
int picture_scale(const cv::Mat& values, int min_size = 360);

// Where a value pixel (x, y) of the image — FITS row order, row 0 at the bottom — lands in
// its picture (pixel centres, after the flip and the enlargement by `scale`).
cv::Point2d picture_point(double x, double y, int rows, int scale);

// A polar image (imaging/polar.hpp: rows = height, columns = PA) back on the registered
// grid, bilinear in PA and height, NaN outside the polar grid: the Cartesian picture of any
// running difference, without keeping the Cartesian frames of a sequence in memory.
cv::Mat cartesian_from_polar(const cv::Mat& polar_image, const imaging::RegisteredGrid& grid,
                             const imaging::PolarGrid& polar);

// Adds a caption band above the picture (white text on black, or on the colour picture).
cv::Mat with_caption(const cv::Mat& picture, const std::string& caption);

// Writes a PNG (cv::imwrite); InputError naming the file when it cannot.
void write_png(const std::filesystem::path& path, const cv::Mat& picture);

}  // namespace occulta::app
