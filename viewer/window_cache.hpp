// viewer/window_cache.hpp — what the window's frames reuse from one frame to the next: the
// coloured sky images and time–height maps (colour_table.hpp texels), the shell outlines
// (shell_overlay.hpp) and the height–time panels' kinematic fits (height_time.hpp). Each entry is plain data kept beside everything that determines it,
// and is made anew only when one of those changes; the window stays a function of plain
// state each frame (STYLE.md), the cache only spares it work whose answer it already has.
//
// What determines an entry:
//   sky image       the image itself (its pixels' buffer, held, so that the address cannot
//                   be reused while the entry lives: view, frame and display in one), the
//                   colour table, the range lo–hi and the no-data colour;
//   time–height map the view's polar frames (their buffers, held), the PA, the band, and
//                   the colouring as above;
//   shell outline   the shell controls, the frame's observer and the frame's time;
//   kinematic fit   the view's points (times and heights) and its polar grid's height step.
// Texture id, extent, label and sampling are set on each frame's copy (they say where and
// how the texels are drawn, not what they are).
//
// Conventions: as image_panel.hpp and shell_overlay.hpp. A cache belongs to one window loop
// (one thread); none given (nullptr): everything is made for the frame, as before.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <opencv2/core.hpp>

#include "fit/kinematics.hpp"
#include "viewer/image_panel.hpp"
#include "viewer/pictures.hpp"
#include "viewer/shell_overlay.hpp"

namespace occulta::viewer {

using OutlineRuns = std::vector<std::vector<OutlinePoint>>;

struct WindowCache {
  struct Colouring {
    std::vector<cv::Mat> sources;  // the image, or the view's polar frames (a time–height map)
    double pa_deg = 0.0, band_deg = 0.0;  // a time–height map's; 0 for a sky image
    bool map = false;
    ColourTable table = ColourTable::grey;
    double lo = 0.0, hi = 1.0;
    ImU32 no_data = 0;
    int width = 0, height = 0;
    std::shared_ptr<const std::vector<std::uint8_t>> texels;
    std::uint64_t used = 0;  // the cache's clock when last asked for
  };
  struct Outline {
    ShellControls controls;
    imaging::Observer observer;
    double utc_s = 0.0;
    OutlineRuns runs;
    std::uint64_t used = 0;
  };
  struct KinematicFit {
    std::string view;
    std::vector<std::pair<double, double>> points;  // the view's (time, height) in the list's order
    double height_step_rs = 0.0;                    // the polar grid's: the fit's resolution floor
    std::optional<fit::HeightTimeFit> fit;
    std::uint64_t used = 0;
  };
  std::vector<Colouring> colourings;
  std::vector<Outline> outlines;
  std::vector<KinematicFit> fits;
  std::uint64_t clock = 0;
  std::uint64_t made = 0;  // colourings and outlines made so far (not taken from the cache)
  // Beyond these the least recently asked-for entries go: 128 MiB of texels hold every
  // display of a few hundred 512² frames; an outline is a few hundred points.
  std::size_t max_texel_bytes = std::size_t(128) << 20;
  std::size_t max_outlines = 512;
  std::size_t max_fits = 64;
};

// A sky image through `scale` (make_image_panel), its texels from the cache when it has them.
ImagePanel cached_image_panel(WindowCache* cache, const cv::Mat& values, const ImageExtent& extent, const ColourScale& scale,
                              ImTextureID id, Sampling sampling);

// The view's time–height map along pa_deg (height_time.hpp time_height_map, time_height_extent)
// through `scale`, drawn nearest, its texels from the cache when it has them.
ImagePanel cached_time_height_panel(WindowCache* cache, const ViewPictures& view, double pa_deg, const ColourScale& scale,
                                    ImTextureID id, double band_deg = 2.0);

// shell_outline(controls, observer, utc_s), from the cache when it has it.
OutlineRuns cached_shell_outline(WindowCache* cache, const ShellControls& controls, const imaging::Observer& observer,
                                 double utc_s);

// height_time_fit(state, view) (height_time.hpp), from the cache when it has the fit of the
// same points.
std::optional<fit::HeightTimeFit> cached_height_time_fit(WindowCache* cache, const WindowState& state, const ViewPictures& view);

// Work done ahead, in a quiet frame (nothing asked, nothing made; after it is shown): what
// shown_views will ask for at the next frame time (wrapping at the end when playing, as
// stepping does), or, when that is ready, at the previous one — so that stepping and
// playing find their pictures and outlines made. At most one frame time's worth per call
// (both views' images, maps and outlines). Returns whether anything was made.
bool prepare_neighbours(WindowCache& cache, const WindowState& state, const std::vector<ViewPictures>& views);

}  // namespace occulta::viewer
