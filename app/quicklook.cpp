#include "app/quicklook.hpp"

#include <cmath>
#include <string_view>
#include <vector>

#include <opencv2/imgproc.hpp>

#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"
#include "imaging/polar.hpp"
#include "viewer/png.hpp"

namespace occulta::app {

cv::Mat grey_picture(const cv::Mat& values, double limit, int min_size) {
  cv::Mat picture(values.rows, values.cols, CV_8UC1);
  for (int y = 0; y < values.rows; ++y) {
    const float* in = values.ptr<float>(y);
    uchar* out = picture.ptr<uchar>(values.rows - 1 - y);  // row 0 at the bottom
    for (int x = 0; x < values.cols; ++x) {
      const double v = in[x];
      if (!std::isfinite(v)) {
        out[x] = 0;
        continue;
      }
      const double u = std::clamp((v + limit) / (2.0 * limit), 0.0, 1.0);
      out[x] = static_cast<uchar>(16.0 + u * 239.0 + 0.5);
    }
  }
  const int factor = picture_scale(values, min_size);
  if (factor > 1) cv::resize(picture, picture, cv::Size(), factor, factor, cv::INTER_NEAREST);
  return picture;
}

int picture_scale(const cv::Mat& values, int min_size) {
  const int shorter = std::max(1, std::min(values.rows, values.cols));
  return std::max(1, (min_size + shorter - 1) / shorter);
}

cv::Mat cartesian_from_polar(const cv::Mat& polar_image, const imaging::RegisteredGrid& grid,
                             const imaging::PolarGrid& polar) {
  cv::Mat map_x(grid.height, grid.width, CV_32FC1), map_y(grid.height, grid.width, CV_32FC1);
  for (int y = 0; y < grid.height; ++y)
    for (int x = 0; x < grid.width; ++x) {
      const cv::Point2d p(x, y);
      map_x.at<float>(y, x) = float(imaging::grid_pa_deg(grid, p) / polar.pa_step_deg);
      map_y.at<float>(y, x) = float((imaging::grid_height_rs(grid, p) - polar.height_min_rs) / polar.height_step_rs);
    }
  // PA wraps through north: one column of the far side appended lets the remap interpolate across.
  cv::Mat wrapped;
  cv::hconcat(polar_image, polar_image.col(0), wrapped);
  cv::Mat out;
  cv::remap(wrapped, out, map_x, map_y, cv::INTER_LINEAR, cv::BORDER_CONSTANT, cv::Scalar(NAN));
  return out;
}

cv::Point2d picture_point(double x, double y, int rows, int scale) {
  return {(x + 0.5) * scale, (rows - 1 - y + 0.5) * scale};
}

cv::Mat with_caption(const cv::Mat& picture, const std::string& caption) {
  const int band = 26;
  int baseline = 0;
  const cv::Size text = cv::getTextSize(caption, cv::FONT_HERSHEY_SIMPLEX, 0.5, 1, &baseline);
  // A caption wider than the picture widens the canvas (black margins) rather than being cut.
  const int width = std::max(picture.cols, text.width + 12);
  cv::Mat framed(picture.rows + band, width, picture.type(), cv::Scalar::all(0));
  picture.copyTo(framed(cv::Rect((width - picture.cols) / 2, band, picture.cols, picture.rows)));
  cv::putText(framed, caption, cv::Point(6, 18), cv::FONT_HERSHEY_SIMPLEX, 0.5, cv::Scalar::all(255), 1, cv::LINE_AA);
  return framed;
}

void write_png(const std::filesystem::path& path, const cv::Mat& picture) {
  // Encoded in memory (viewer/png.hpp), then written whole or not at all
  // (imaging/output_file.hpp): a killed run never leaves a truncated picture under its
  // final name.
  const std::vector<unsigned char> bytes = viewer::encode_png(picture);
  if (bytes.empty()) throw imaging::InputError(path.string(), "cannot be encoded as PNG");
  imaging::write_file_atomically(path, std::string_view(reinterpret_cast<const char*>(bytes.data()), bytes.size()));
}

}  // namespace occulta::app
