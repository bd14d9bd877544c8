// viewer/pictures.hpp — what the window's displays draw, made once per view by the imaging
// chain (run through fit::image_view, the measurement's imaging part, which the window's
// fit then reuses), and the loader that makes them on a worker thread.
//
// The viewer does not read event files or command lines (DESIGN.md: imaging ← fit ← viewer
// ← app): app/view.cpp hands it a plain list of ViewSource.
//
// Conventions
// - One FramePictures per running difference of the chain, i.e. per usable frame but the
//   first (which has no previous frame to difference with); utc_s is the frame's time.
// - Every image is single-channel CV_32F in FITS row order (row 0 = the bottom, as the
//   chain's grids), NaN = no data, and in σ, so one contrast range in σ suits them all:
//     calibrated          (L − median(L)) / σ̂(L), L = log10 I, I in DN/s on the registered
//                         grid (NaN where I ≤ 0);
//     running_difference  imaging::sigma_difference(frame, previous frame);
//     base_difference     imaging::sigma_difference(frame, base frame) — the base frame is
//                         the last at or before ChainOptions::base_time_utc_s, else the first;
//     nrgf                the normalising-radial-graded filter (Morgan, Habbal & Woo 2006,
//                         Sol. Phys. 236, 263) of I over rings one display pixel wide;
//     polar               the chain's polar running difference (rows = heights, columns = PA).
//   σ̂ is imaging::robust_sigma (1.4826 · MAD).
// - Sky images are downscaled for display (OpenCV INTER_AREA) to at most max_display_px on
//   their longer side; `grid` is the downscaled grid (same Sun centre and field in R☉).
#pragma once

#include <atomic>
#include <filesystem>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include <opencv2/core.hpp>

#include "fit/measurement.hpp"
#include "imaging/chain.hpp"
#include "viewer/state.hpp"

namespace occulta::viewer {

struct ViewSource {
  std::string name;
  std::vector<std::filesystem::path> files;
  imaging::ChainOptions options;  // Cartesian frames are asked for by the loader itself
};

struct FramePictures {
  double utc_s = 0.0;
  cv::Mat calibrated, running_difference, base_difference, nrgf, polar;
  imaging::Observer observer;  // where the frame was taken from (its header or the event file)

  const cv::Mat& image(Display display) const;
};

struct ViewPictures {
  std::string name;
  imaging::RegisteredGrid grid;  // of the display images (downscaled)
  imaging::OcculterRadii radii;
  imaging::PolarGrid polar;
  std::vector<FramePictures> frames;  // oldest first
  std::vector<std::string> problems;  // the chain's sentences
  std::string error;                  // why the view could not be loaded (then no frames)
  // The measurement's imaging part of this view, as the chain made it over `files`
  // (fit/measurement.hpp): the window's fit runs only the rest. Null when not loaded.
  std::shared_ptr<const fit::ViewImaging> imaging;
};

inline constexpr int kDefaultDisplayPx = 512;

// Runs the chain over the view's frames. `progress(done, total)` after each frame. A view
// the chain cannot use comes back with `error` set, never an exception.
ViewPictures load_view(const ViewSource& source, int max_display_px = kDefaultDisplayPx,
                       const std::function<void(int, int)>& progress = {});

// The index of the frame nearest in time to utc_s (the earlier on a tie); −1 when none.
int nearest_frame(const ViewPictures& view, double utc_s);

// Every view's frame times, merged and increasing (the timeline).
std::vector<double> frame_times(const std::vector<ViewPictures>& views);
// One view's (action::ViewFrames).
std::vector<double> frame_times(const ViewPictures& view);

// imaging::robust_sigma-scaled value under a sky position (x_rs west, y_rs north), or under
// its (PA, height) on the polar display; NaN outside the image.
double value_at(const ViewPictures& view, const FramePictures& frame, Display display, double x_rs, double y_rs);

// Loads every view on one worker thread, in order; the window polls it.
class Loader {
 public:
  Loader(std::vector<ViewSource> sources, int max_display_px = kDefaultDisplayPx);
  ~Loader();  // stops the worker after the frame in hand and waits for it
  Loader(const Loader&) = delete;
  Loader& operator=(const Loader&) = delete;

  struct Progress {
    int view = 0, views = 0;        // views finished, of
    int frame = 0, frames = 0;      // frames done in the view being loaded, of
    std::string loading;            // its name
  };
  Progress progress() const;
  // Views finished since the last call, in order.
  std::vector<ViewPictures> take_finished();
  bool done() const { return done_.load(); }

 private:
  std::vector<ViewSource> sources_;
  int max_display_px_;
  mutable std::mutex mutex_;
  Progress progress_;
  std::vector<ViewPictures> finished_;
  std::atomic<bool> done_{false}, stop_{false};
  std::thread worker_;
};

}  // namespace occulta::viewer
