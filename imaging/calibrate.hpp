// imaging/calibrate.hpp — from detector numbers to a brightness rate with its no-data
// regions marked: DN → DN/s, occulter and field-stop mask, background.
//
// Radii are heights in R☉ from Sun centre (sky plane, geometry.hpp). The mask is built on
// a view's registered grid (register.hpp: Sun-centred, fixed R☉ per pixel), where an
// annulus in R☉ is one fixed set of pixels for the whole view, and is folded into the
// registration tables. NaN marks no data everywhere.
//
// Background, chosen per run:
//   - the pre-event base frame (subtracting it makes each frame a base difference), or
//   - a low percentile per pixel over the whole sequence — this needs a pass over all
//     frames before the differences can start (LowPercentileBackground; it keeps the k
//     lowest values per pixel, k = ⌈p·N⌉, so its memory is k frames, not N).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/fits.hpp"
#include "imaging/register.hpp"

namespace occulta::imaging {

// In place: pixels / exposure (s). Exposure must be > 0.
void to_rate(cv::Mat& pixels, double exposure_s);

struct OcculterRadii {
  enum class Origin { Caller, Header, Data };
  double inner_rs = 0.0;  // data starts here (occulter edge)
  double outer_rs = 0.0;  // and ends here (field stop)
  Origin origin = Origin::Caller;
};
const char* origin_name(OcculterRadii::Origin origin);  // "event file", "header", "data"

// OCC_IN / OCC_OUT (our keywords, R☉), when both are present and 0 ≤ in < out.
std::optional<OcculterRadii> header_occulter_radii(const Header& header);

// From a registered frame: the radii where data begins and ends. A ring (1 px wide) has
// data when at least half of its pixels inside the grid are finite and non-zero (zero is
// how many pipelines fill masked areas). Throws InputError(source, ...) when no ring has.
OcculterRadii estimate_occulter_radii(const cv::Mat& registered, const RegisteredGrid& grid, const std::string& source);

// CV_8UC1 on the grid: 255 where inner_rs ≤ height ≤ outer_rs, else 0.
cv::Mat annulus_keep_mask(const RegisteredGrid& grid, const OcculterRadii& radii);

// Per-pixel low percentile over a sequence of registered frames (NaN ignored).
class LowPercentileBackground {
 public:
  // percentile in (0, 100); frame_count: how many frames will be added (fixes k).
  LowPercentileBackground(cv::Size size, double percentile, int frame_count);
  void add(const cv::Mat& registered);
  cv::Mat result() const;  // CV_32FC1; NaN where a pixel never had data
  int k() const { return k_; }

 private:
  int k_;
  std::vector<cv::Mat> lowest_;  // lowest_[i](y, x): the (i+1)-th smallest value so far
  cv::Mat count_;                // CV_32SC1: finite values seen per pixel
};

// In place: frame − background (NaN where either is NaN).
void subtract_background(cv::Mat& frame, const cv::Mat& background);

}  // namespace occulta::imaging
