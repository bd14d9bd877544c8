// imaging/sequence.hpp — the frames of one view, checked and put in time order, from
// their headers alone (pixels are read later, one frame at a time, by chain.hpp).
//
// Rules, each reported as one readable sentence naming the file(s):
//   - a frame whose header cannot be read, or whose time or geometry is unusable, is
//     skipped and reported; the rest go on;
//   - frames are sorted by time (start of exposure);
//   - frames with the same time (within 1 ms) keep the first in the order given, and the
//     others are reported;
//   - frames of two observers in one view are refused (InputError): different OBSRVTRY or
//     TELESCOP texts, or observer positions more than 3° apart seen from the Sun or more
//     than 3% apart in distance (our thresholds: one observer moves far less during an
//     event, two observers are rarely that close);
//   - fewer than three usable frames are refused (InputError): a running difference needs
//     two and a change needs a third.
// A change of frame size or scale is allowed: registration resamples every frame onto the
// view's grid.
#pragma once

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "imaging/calibrate.hpp"
#include "imaging/geometry.hpp"

namespace occulta::imaging {

struct SequenceFrame {
  std::filesystem::path path;
  double utc_s = 0.0;                  // time.hpp
  std::optional<double> exposure_s;    // EXPTIME / XPOSURE; absent → pixels taken as already per second
  ImageGeometry geometry;
  std::optional<OcculterRadii> header_radii;  // OCC_IN / OCC_OUT
};

struct ViewSequence {
  std::string view;
  std::vector<SequenceFrame> frames;   // oldest first, one per time
  std::vector<std::string> problems;   // sentences: skipped, duplicates, missing exposure
};

// Most frames in one view (a month at a 12-minute cadence is 3600): more is refused.
inline constexpr std::size_t kMaxFramesPerView = 10000;

// `observer` (an event file's) replaces the headers' HGLN_OBS/HGLT_OBS/DSUN_OBS.
ViewSequence scan_view(const std::string& view, const std::vector<std::filesystem::path>& paths,
                       const std::optional<Observer>& observer = std::nullopt);

inline constexpr std::size_t kMinimumFrames = 3;

}  // namespace occulta::imaging
