// app/arrival_picture.hpp — a PNG histogram of one target's arrival times, for a person:
// hours after the boundary time across, member counts up, the 5th/50th/95th percentiles
// marked and labelled. Plain ASCII text (OpenCV's Hershey font has no other glyphs).
#pragma once

#include <filesystem>

#include <opencv2/core.hpp>

#include "fit/arrival.hpp"

namespace occulta::app {

// The picture (8-bit BGR). boundary_utc_s: the time the hours are counted from.
cv::Mat arrival_histogram(const fit::TargetArrival& arrival, double boundary_utc_s);

// The same written as a PNG; InputError naming the file when it cannot be.
void write_arrival_histogram(const std::filesystem::path& path, const fit::TargetArrival& arrival,
                             double boundary_utc_s);

}  // namespace occulta::app
