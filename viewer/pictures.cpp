// viewer/pictures.cpp — see pictures.hpp.
#include "viewer/pictures.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include <opencv2/imgproc.hpp>

#include "imaging/difference.hpp"
#include "imaging/input_error.hpp"

namespace occulta::viewer {
namespace {

constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();

// (I − median) / σ̂ over the finite pixels (every 4th each way, as sigma_difference samples).
cv::Mat standardized(const cv::Mat& image) {
  std::vector<float> values;
  for (int r = 0; r < image.rows; r += 4)
    for (int c = 0; c < image.cols; c += 4)
      if (const float v = image.at<float>(r, c); std::isfinite(v)) values.push_back(v);
  cv::Mat out = image.clone();
  if (values.empty()) return out;
  const auto mid = values.begin() + std::ptrdiff_t(values.size() / 2);
  std::nth_element(values.begin(), mid, values.end());
  const float median = *mid;
  out -= median;
  imaging::divide_by(out, imaging::robust_sigma(out, 4));
  return out;
}

// log10 I where I > 0, NaN elsewhere: coronal brightness falls by orders of magnitude
// over the field, so a linear scale shows only the inner corona (common practice).
cv::Mat log_brightness(const cv::Mat& image) {
  cv::Mat out(image.size(), CV_32F);
  for (int r = 0; r < image.rows; ++r)
    for (int c = 0; c < image.cols; ++c) {
      const float v = image.at<float>(r, c);
      out.at<float>(r, c) = v > 0 ? std::log10(v) : kNaN;
    }
  return out;
}

// NRGF (Morgan, Habbal & Woo 2006): each ring of radius round(r) pixels about Sun centre,
// minus its mean, over its standard deviation; rings with under two values or no spread NaN.
cv::Mat ring_nrgf(const cv::Mat& image, const imaging::RegisteredGrid& grid) {
  const double cx = grid.sun_center_px.x(), cy = grid.sun_center_px.y();
  const int rings = int(std::ceil(std::hypot(std::max(cx, image.cols - cx), std::max(cy, image.rows - cy)))) + 2;
  std::vector<double> sum(std::size_t(rings), 0.0), sum2(std::size_t(rings), 0.0);
  std::vector<int> count(std::size_t(rings), 0);
  cv::Mat ring(image.size(), CV_32S);
  for (int r = 0; r < image.rows; ++r)
    for (int c = 0; c < image.cols; ++c) {
      const int k = int(std::lround(std::hypot(c - cx, r - cy)));
      ring.at<int>(r, c) = k;
      if (const float v = image.at<float>(r, c); std::isfinite(v)) {
        sum[std::size_t(k)] += v;
        sum2[std::size_t(k)] += double(v) * v;
        ++count[std::size_t(k)];
      }
    }
  cv::Mat out(image.size(), CV_32F, cv::Scalar(kNaN));
  for (int r = 0; r < image.rows; ++r)
    for (int c = 0; c < image.cols; ++c) {
      const float v = image.at<float>(r, c);
      const auto k = std::size_t(ring.at<int>(r, c));
      if (!std::isfinite(v) || count[k] < 2) continue;
      const double mean = sum[k] / count[k];
      const double var = (sum2[k] - count[k] * mean * mean) / (count[k] - 1);
      if (var > 0) out.at<float>(r, c) = float((v - mean) / std::sqrt(var));
    }
  return out;
}

// INTER_AREA averages over each output pixel's footprint; a NaN anywhere in it spreads, so
// the no-data regions (occulter, corners) grow by under one display pixel.
cv::Mat for_display(const cv::Mat& image, cv::Size size) {
  if (image.empty() || image.size() == size) return image.clone();
  cv::Mat out;
  cv::resize(image, out, size, 0, 0, cv::INTER_AREA);
  return out;
}

struct Stopped {};

}  // namespace

const cv::Mat& FramePictures::image(Display display) const {
  switch (display) {
    case Display::calibrated: return calibrated;
    case Display::running_difference: return running_difference;
    case Display::base_difference: return base_difference;
    case Display::nrgf: return nrgf;
    case Display::polar: return polar;
  }
  return running_difference;
}

ViewPictures load_view(const ViewSource& source, int max_display_px, const std::function<void(int, int)>& progress) {
  ViewPictures view;
  view.name = source.name;
  imaging::ChainOptions options = source.options;
  options.cartesian = imaging::ChainOptions::Cartesian::Every;
  const int total = int(source.files.size());
  cv::Mat base;  // the base frame on the registered grid (full size)
  const auto base_time = options.base_time_utc_s;
  cv::Size display;
  try {
    if (source.files.empty()) throw imaging::InputError(source.name, "no files match the view's globs");
    // The chain through the measurement's imaging part: the fit reuses what it keeps.
    fit::ViewImaging run = fit::image_view(source.name, source.files, options, [&](const imaging::ChainFrame& f) {
      const cv::Mat& now = f.registered;
      if (view.frames.empty()) {
        base = f.previous_registered.clone();  // the first frame, the default base
        const double scale = std::min(1.0, double(max_display_px) / std::max(now.cols, now.rows));
        display = cv::Size(std::max(1, int(std::lround(now.cols * scale))), std::max(1, int(std::lround(now.rows * scale))));
      }
      if (base_time && f.frame.utc_s <= *base_time) base = now.clone();
      FramePictures p;
      p.utc_s = f.frame.utc_s;
      p.observer = f.frame.geometry.observer;
      p.calibrated = for_display(standardized(log_brightness(now)), display);
      p.running_difference = for_display(imaging::sigma_difference(now, f.previous_registered), display);
      p.base_difference = for_display(imaging::sigma_difference(now, base), display);
      p.nrgf = for_display(now, display);  // DN/s for now: filtered below, once the display grid is known
      view.frames.push_back(std::move(p));
      if (progress) progress(int(view.frames.size()) + 1, total);
    });
    // The display grid: the same field in R☉, fewer pixels.
    const double sx = double(display.width) / run.grid.width, sy = double(display.height) / run.grid.height;
    view.grid.width = display.width;
    view.grid.height = display.height;
    view.grid.sun_center_px = {(run.grid.sun_center_px.x() + 0.5) * sx - 0.5, (run.grid.sun_center_px.y() + 0.5) * sy - 0.5};
    view.grid.rs_per_px = run.grid.rs_per_px / sx;
    for (std::size_t k = 0; k < view.frames.size(); ++k) {
      view.frames[k].nrgf = ring_nrgf(view.frames[k].nrgf, view.grid);
      view.frames[k].polar = run.polar.frames[k];  // shared with the imaging, not copied
    }
    view.radii = run.radii;
    view.polar = run.polar.polar;
    view.problems = run.problems;
    view.imaging = std::make_shared<const fit::ViewImaging>(std::move(run));
  } catch (const imaging::InputError& e) {
    view.frames.clear();
    view.error = e.what();
  } catch (const cv::Exception& e) {
    view.frames.clear();
    view.error = source.name + ": the imaging chain failed (" + e.msg + ").";
  }
  return view;
}

int nearest_frame(const ViewPictures& view, double utc_s) {
  int best = -1;
  for (int i = 0; i < int(view.frames.size()); ++i)
    if (best < 0 || std::abs(view.frames[std::size_t(i)].utc_s - utc_s) < std::abs(view.frames[std::size_t(best)].utc_s - utc_s))
      best = i;
  return best;
}

std::vector<double> frame_times(const std::vector<ViewPictures>& views) {
  std::vector<double> times;
  for (const ViewPictures& v : views)
    for (const FramePictures& f : v.frames) times.push_back(f.utc_s);
  std::sort(times.begin(), times.end());
  times.erase(std::unique(times.begin(), times.end()), times.end());
  return times;
}

std::vector<double> frame_times(const ViewPictures& view) {
  std::vector<double> times;
  for (const FramePictures& f : view.frames) times.push_back(f.utc_s);
  return times;
}

double value_at(const ViewPictures& view, const FramePictures& frame, Display display, double x_rs, double y_rs) {
  const cv::Mat& image = frame.image(display);
  if (image.empty()) return std::numeric_limits<double>::quiet_NaN();
  double col = 0, row = 0;
  if (display == Display::polar) {
    // PA counter-clockwise from north through east (east = −x): PA = atan2(−x, y).
    double pa = std::atan2(-x_rs, y_rs) * 180.0 / std::numbers::pi;
    if (pa < 0) pa += 360.0;
    col = pa / view.polar.pa_step_deg;
    row = (std::hypot(x_rs, y_rs) - view.polar.height_min_rs) / view.polar.height_step_rs;
  } else {
    col = view.grid.sun_center_px.x() + x_rs / view.grid.rs_per_px;
    row = view.grid.sun_center_px.y() + y_rs / view.grid.rs_per_px;
  }
  const int c = int(std::lround(col)), r = int(std::lround(row));
  if (display == Display::polar && c == image.cols) return image.at<float>(std::clamp(r, 0, image.rows - 1), 0);
  if (c < 0 || r < 0 || c >= image.cols || r >= image.rows) return std::numeric_limits<double>::quiet_NaN();
  return image.at<float>(r, c);
}

Loader::Loader(std::vector<ViewSource> sources, int max_display_px)
    : sources_(std::move(sources)), max_display_px_(max_display_px) {
  progress_.views = int(sources_.size());
  worker_ = std::thread([this] {
    for (const ViewSource& source : sources_) {
      {
        std::lock_guard lock(mutex_);
        progress_.loading = source.name;
        progress_.frame = 0;
        progress_.frames = int(source.files.size());
      }
      ViewPictures view;
      try {
        view = load_view(source, max_display_px_, [this](int done, int total) {
          if (stop_) throw Stopped{};  // out of the chain, between frames
          std::lock_guard lock(mutex_);
        progress_.frame = done;
          progress_.frames = total;
        });
      } catch (const Stopped&) {
        break;
      }
      std::lock_guard lock(mutex_);
      finished_.push_back(std::move(view));
      ++progress_.view;
    }
    done_ = true;
  });
}

Loader::~Loader() {
  stop_ = true;
  if (worker_.joinable()) worker_.join();
}

Loader::Progress Loader::progress() const {
  std::lock_guard lock(mutex_);
  return progress_;
}

std::vector<ViewPictures> Loader::take_finished() {
  std::lock_guard lock(mutex_);
  return std::exchange(finished_, {});
}

}  // namespace occulta::viewer
