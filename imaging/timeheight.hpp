// imaging/timeheight.hpp — time–height maps along a PA band and time–PA maps at a height,
// from a sequence of polar images (polar.hpp: row = height, column = PA).
//
// Time stays real: a map stores one column per frame with that frame's own time (UTC s
// since 2000-01-01, time.hpp), so gaps and uneven cadence are kept as they are, and
// render_on_time_axis() draws the columns on a uniform time axis, leaving gaps empty.
#pragma once

#include <cstddef>
#include <functional>
#include <vector>

#include <opencv2/core.hpp>

#include "imaging/polar.hpp"
#include "imaging/polar_frames.hpp"

namespace occulta::imaging {

// Polar frames of one view, oldest first, all on `polar`; the frames in memory or in a
// temporary file (polar_frames.hpp: a caller whose memory must stay flat in frames).
struct PolarSequence {
  PolarGrid polar;
  std::vector<double> utc_s;
  PolarFrames frames;  // CV_32FC1, polar.height_count × polar.pa_count
};

// The median, over the PAs of the band [pa − half_width, pa + half_width] (wrapping
// through north), of each height row of one polar image: one value per height (NaN where
// the band has no data).
std::vector<float> band_profile(const cv::Mat& polar, const PolarGrid& grid, double pa_deg, double half_width_deg);

// The median over heights [height − half_band, height + half_band] of each PA column:
// one value per PA.
std::vector<float> ring_profile(const cv::Mat& polar, const PolarGrid& grid, double height_rs, double half_band_rs);

struct TimeMap {
  std::vector<double> utc_s;  // per column
  cv::Mat values;             // CV_32FC1: rows = heights (time–height) or PAs (time–PA), one column per frame
  double axis_start = 0.0, axis_step = 0.0;  // row i ↔ axis_start + i · axis_step (R☉ or deg)
};

TimeMap time_height(const PolarSequence& sequence, double pa_deg, double half_width_deg);
// The same for frames not held together (maps reads them back from its cube one at a
// time): frame(k) is frame k of utc_s.size(), on `polar`. Frames are taken on several
// threads at once: `frame` must be safe so.
TimeMap time_height(const PolarGrid& polar, const std::vector<double>& utc_s,
                    const std::function<cv::Mat(std::size_t)>& frame, double pa_deg, double half_width_deg);
TimeMap time_pa(const PolarSequence& sequence, double height_rs, double half_band_rs);

// The map on a uniform time axis of `columns` columns spanning [t_start, t_end]: each
// output column shows the frame whose time is nearest, if that frame lies within
// max_gap_s / 2 of it; otherwise NaN (a gap). max_gap_s ≤ 0 means 1.5 × the median
// spacing of the frames (common practice for "a missing frame").
cv::Mat render_on_time_axis(const TimeMap& map, double t_start, double t_end, int columns, double max_gap_s = 0.0);

}  // namespace occulta::imaging
