// imaging/calibrate.cpp — DN/s, occulter and field-stop radii and mask, background.
#include "imaging/calibrate.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "imaging/input_error.hpp"

namespace occulta::imaging {

void to_rate(cv::Mat& pixels, double exposure_s) {
  CV_Assert(exposure_s > 0.0 && pixels.type() == CV_32FC1);
  pixels.convertTo(pixels, CV_32F, 1.0 / exposure_s);  // NaN stays NaN
}

const char* origin_name(OcculterRadii::Origin origin) {
  switch (origin) {
    case OcculterRadii::Origin::Caller: return "event file";
    case OcculterRadii::Origin::Header: return "header";
    case OcculterRadii::Origin::Data: return "data";
  }
  return "?";
}

std::optional<OcculterRadii> header_occulter_radii(const Header& header) {
  const auto in = header.number("OCC_IN"), out = header.number("OCC_OUT");
  if (!in || !out || !(*in >= 0.0) || !(*out > *in)) return std::nullopt;
  return OcculterRadii{*in, *out, OcculterRadii::Origin::Header};
}

OcculterRadii estimate_occulter_radii(const cv::Mat& registered, const RegisteredGrid& grid,
                                      const std::string& source) {
  CV_Assert(registered.type() == CV_32FC1 && registered.rows == grid.height && registered.cols == grid.width);
  const double cx = grid.sun_center_px.x(), cy = grid.sun_center_px.y();
  const int rings = int(std::ceil(std::hypot(std::max(cx, grid.width - 1 - cx), std::max(cy, grid.height - 1 - cy)))) + 2;
  std::vector<int> total(rings, 0), with_data(rings, 0);
  for (int y = 0; y < registered.rows; ++y) {
    const float* p = registered.ptr<float>(y);
    const float dy2 = float((y - cy) * (y - cy));
    for (int x = 0; x < registered.cols; ++x) {
      const float dx = float(x - cx);
      const int ring = int(std::sqrt(dx * dx + dy2) + 0.5f);  // nearest 1-px ring
      ++total[ring];
      if (std::isfinite(p[x]) && p[x] != 0.0f) ++with_data[ring];
    }
  }
  int first = -1, last = -1;
  for (int r = 0; r < rings; ++r) {
    if (total[r] > 0 && 2 * with_data[r] >= total[r]) {
      if (first < 0) first = r;
      last = r;
    }
  }
  if (first < 0)
    throw InputError(source, "it holds no ring of finite, non-zero data around Sun centre, so the occulter "
                             "and field-stop radii cannot be estimated (give them in the event file)");
  if (last <= first)  // (the polar grid needs a field stop beyond the occulter: chain_fuzz found one ring only)
    throw InputError(source, "its data fill a single ring around Sun centre, so no field lies between the occulter "
                             "and the field stop (give the radii in the event file)");
  return {first * grid.rs_per_px, last * grid.rs_per_px, OcculterRadii::Origin::Data};
}

cv::Mat annulus_keep_mask(const RegisteredGrid& grid, const OcculterRadii& radii) {
  cv::Mat keep(grid.height, grid.width, CV_8UC1);
  const double cx = grid.sun_center_px.x(), cy = grid.sun_center_px.y();
  const double in_px = radii.inner_rs / grid.rs_per_px, out_px = radii.outer_rs / grid.rs_per_px;
  const double in2 = in_px * in_px, out2 = out_px * out_px;
  for (int y = 0; y < grid.height; ++y) {
    auto* k = keep.ptr<std::uint8_t>(y);
    for (int x = 0; x < grid.width; ++x) {
      const double d2 = (x - cx) * (x - cx) + (y - cy) * (y - cy);
      k[x] = (d2 >= in2 && d2 <= out2) ? 255 : 0;
    }
  }
  return keep;
}

LowPercentileBackground::LowPercentileBackground(cv::Size size, double percentile, int frame_count) {
  CV_Assert(percentile > 0.0 && percentile < 100.0 && frame_count > 0);
  // The p-th percentile of N values, taken as the k-th smallest, k = ⌈p·N/100⌉ (the
  // "inverted empirical distribution" definition, common practice).
  k_ = std::max(1, int(std::ceil(percentile / 100.0 * frame_count)));
  for (int i = 0; i < k_; ++i) lowest_.emplace_back(size, CV_32FC1, cv::Scalar(std::numeric_limits<double>::infinity()));
  count_ = cv::Mat::zeros(size, CV_32SC1);
}

void LowPercentileBackground::add(const cv::Mat& registered) {
  CV_Assert(registered.type() == CV_32FC1 && registered.size() == count_.size());
  cv::parallel_for_(cv::Range(0, registered.rows), [&](const cv::Range& rows) {
    std::vector<float*> planes(k_);
    for (int y = rows.start; y < rows.end; ++y) {
      const float* v = registered.ptr<float>(y);
      int* n = count_.ptr<int>(y);
      for (int i = 0; i < k_; ++i) planes[i] = lowest_[i].ptr<float>(y);
      for (int x = 0; x < registered.cols; ++x) {
        float value = v[x];
        if (!std::isfinite(value)) continue;
        ++n[x];
        // Insertion into the sorted k lowest (k is small: a few frames).
        for (int i = 0; i < k_; ++i) {
          if (value < planes[i][x]) std::swap(value, planes[i][x]);
        }
      }
    }
  });
}

cv::Mat LowPercentileBackground::result() const {
  cv::Mat out(count_.size(), CV_32FC1);
  for (int y = 0; y < out.rows; ++y) {
    const int* n = count_.ptr<int>(y);
    float* o = out.ptr<float>(y);
    for (int x = 0; x < out.cols; ++x) {
      // A pixel seen fewer than k times takes the largest value it has.
      const int i = std::min(n[x], k_) - 1;
      o[x] = i < 0 ? std::numeric_limits<float>::quiet_NaN() : lowest_[i].ptr<float>(y)[x];
    }
  }
  return out;
}

void subtract_background(cv::Mat& frame, const cv::Mat& background) {
  CV_Assert(frame.type() == CV_32FC1 && background.type() == CV_32FC1 && frame.size() == background.size());
  cv::subtract(frame, background, frame);
}

}  // namespace occulta::imaging
