// imaging/chain.cpp — one view, frame by frame.
#include "imaging/chain.hpp"

#include <cstdio>
#include <exception>
#include <deque>
#include <future>
#include <mutex>
#include <optional>
#include <limits>

#include "imaging/bilinear.hpp"
#include "imaging/difference.hpp"
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

// Reads and calibrates frames of one view onto its polar grid (and, when asked, its
// registered grid); remembers frames that failed so that a second pass skips them without
// a second report.
//
// read_frame may run on several threads at once (the stream reads ahead, chain.hpp), each
// on its own frame: a frame's failure flag and sentence are written only by the thread
// reading it, and the main thread reports them (report) when it takes that frame, so the
// problems keep frame order whatever order the reads finish in. The pixel buffers of
// finished frames go round through `buffers` (under its mutex) instead of being allocated
// and faulted in anew for every read.
struct FrameLoader {
  FrameLoader(const ViewSequence& sequence_, const ChainOptions& options_, const RegisteredGrid& grid,
              std::vector<std::string>& problems_)
      : sequence(sequence_), options(options_), cache(grid), problems(problems_),
        failed(sequence_.frames.size(), 0), failure(sequence_.frames.size()) {}
  const ViewSequence& sequence;
  const ChainOptions& options;
  RegistrationCache cache;
  std::vector<std::string>& problems;
  std::vector<char> failed;            // per frame, written by its reader only
  std::vector<std::string> failure;    // per frame: the sentence not yet reported
  PolarGrid polar;         // set before the first to_polar_frame
  PolarMaps source_maps;   // raw frame → polar grid, for the cache's current registration
  // What the tables of every registration share (the samples' grid pixels, the keep-mask
  // unwrapped): built at the first to_polar_frame, after the cache got the view's mask.
  std::optional<PolarSampling> sampling;
  int maps_built_for = 0;  // cache.builds() when source_maps were made
  // make_polar_maps' float tables, kept from pointing to pointing; on the heap, in 4 KiB
  // pages (a matrix of 2.4 MB would be a 2 MiB-page mapping of 4 MiB, frame_memory.hpp,
  // resident for the whole stream).
  std::vector<cv::Vec2f> table_floats;
  cv::Mat table_scratch;
  cv::Mat background, grid_background;  // polar and registered grid; empty: none
  std::mutex buffers_mutex;
  std::vector<cv::Mat> buffers;  // finished frames' pixel buffers, for the next reads

  cv::Mat take_buffer() {
    const std::lock_guard lock(buffers_mutex);
    if (buffers.empty()) return {};
    cv::Mat m = std::move(buffers.back());
    buffers.pop_back();
    return m;
  }
  void give_buffer(cv::Mat m) {
    if (m.empty()) return;
    const std::lock_guard lock(buffers_mutex);
    buffers.push_back(std::move(m));
  }

  // The frame's pixels; nullopt when the frame cannot be read (its sentence kept for
  // report). Safe on several threads for different frames.
  std::optional<FitsImage> read_frame(std::size_t k) {
    if (failed[k]) return std::nullopt;
    const SequenceFrame& frame = sequence.frames[k];
    try {
      FitsImage image = read_fits(frame.path, take_buffer());
      if (image.pixels.cols != frame.geometry.width || image.pixels.rows != frame.geometry.height)
        throw InputError(frame.path.string(), "its pixels are " + std::to_string(image.pixels.cols) + "×" +
                                                  std::to_string(image.pixels.rows) + " but its header says " +
                                                  std::to_string(frame.geometry.width) + "×" +
                                                  std::to_string(frame.geometry.height));
      // The median filter runs on the raw frame, where cosmic-ray hits lie (a few detector
      // pixels long), before any resampling; so it runs on the read-ahead threads too. On
      // the polar grid it would not be equivalent: near the occulter a 0.5° PA step is a
      // fraction of a pixel, a 4-pixel track spans many PA columns and survives a 5×5
      // window (tried: front_test's quiet sequences then show false detections). The
      // filter swaps its scratch with the image: the scratch then holds the buffer the
      // image gave up, which nothing else refers to, and goes back to the round.
      if (options.median_filter) {
        cv::Mat scratch = take_buffer();
        median_filter(image.pixels, options.median_filter, scratch);
        give_buffer(std::move(scratch));
      }
      return image;
    } catch (const std::exception& e) {
      failed[k] = 1;
      failure[k] = std::string(e.what()) + " The frame is skipped.";
      return std::nullopt;
    }
  }
  // Main thread only: frame k's failure into the problems, once.
  void report(std::size_t k) {
    if (!failure[k].empty()) problems.push_back(std::move(failure[k]));
    failure[k].clear();
  }
  std::optional<FitsImage> read(std::size_t k) {
    std::optional<FitsImage> image = read_frame(k);
    if (!image) report(k);
    return image;
  }

  // Straight from the raw frame to the polar grid: one bilinear sampling at the points
  // where the registration's affine sends the polar samples' grid pixels (polar.hpp). With
  // AVX-512, in one pass with no tables (bilinear.hpp); otherwise through cv::remap's
  // tables, rebuilt only when the cache builds a new registration (the frame's geometry
  // changed: real pointing moves every frame, so then only the affine part is redone).
  // Both give the same bits (bilinear_test, polar_test).
  void to_polar_frame(std::size_t k, const FitsImage& image, cv::Mat& out) {
    const SequenceFrame& frame = sequence.frames[k];
    const Registration& registration = cache.for_geometry(frame.geometry);
    // Every registration of one cache carries the same drop mask (the cache's keep-mask).
    if (!sampling) sampling = make_polar_sampling(cache.grid(), polar, registration.drop);
    if (bilinear::available(image.pixels)) {
      bilinear::sample_affine(image.pixels, sampling->points, registration.grid_to_source, sampling->drop, out);
    } else {
      if (cache.builds() != maps_built_for) {
        if (table_floats.empty()) {
          table_floats.resize(std::size_t(polar.height_count) * std::size_t(polar.pa_count));
          table_scratch = cv::Mat(polar.height_count, polar.pa_count, CV_32FC2, table_floats.data());
        }
        make_polar_maps(registration, *sampling, table_scratch, source_maps);
        maps_built_for = cache.builds();
      }
      to_polar(image.pixels, source_maps, out);
    }
    // Scaling commutes with the (linear) resampling, so DN/s is applied on the polar grid.
    if (frame.exposure_s) to_rate(out, *frame.exposure_s);
    if (!background.empty()) subtract_background(out, background);
  }

  // The same frame on the registered grid (quicklooks only).
  void to_grid(std::size_t k, const FitsImage& image, cv::Mat& out) {
    const SequenceFrame& frame = sequence.frames[k];
    register_frame(image.pixels, cache.for_geometry(frame.geometry), out);
    if (frame.exposure_s) to_rate(out, *frame.exposure_s);
    if (!grid_background.empty()) subtract_background(out, grid_background);
  }
};

int pa_stride(const PolarGrid& polar) { return std::max(1, polar.pa_count / 240); }

}  // namespace

ViewRun run_view(const std::string& view, const std::vector<std::filesystem::path>& paths,
                 const ChainOptions& options, const std::function<void(const ChainFrame&)>& on_frame) {
  using Cartesian = ChainOptions::Cartesian;
  ViewSequence sequence = scan_view(view, paths, options.observer);
  const std::size_t n = sequence.frames.size();
  ViewRun run;
  run.view = view;
  run.problems = sequence.problems;
  run.grid = grid_for_view(sequence.frames.front().geometry);

  // Occulter and field-stop radii: event file, else header, else the first readable frame
  // (registered onto the grid, where the radii are found; its raw pixels start the stream).
  FrameLoader loader(sequence, options, run.grid, run.problems);
  // The stream reads ahead: frames k + 1 … k + kAhead are read, decompressed and
  // median-filtered each on its own thread while frame k is processed, so the reads keep
  // both cores busy when the rest of the chain does not (the read and the median are
  // most of a frame's cost). When frames are read once in order (no background pass, no
  // base frame), the reads start at once, beside the start-up work on this thread (the
  // occulter radii from the first frame, the polar sampling). Costs kAhead raw frames of
  // memory (and their median scratch). Only read_frame runs on those threads.
  constexpr std::size_t kAhead = 2;
  std::deque<std::pair<std::size_t, std::future<std::optional<FitsImage>>>> ahead;
  std::size_t next_read = 0;
  const auto read_ahead = [&](std::size_t skip) {
    for (; ahead.size() < kAhead && next_read < n; ++next_read)
      if (next_read != skip)
        ahead.emplace_back(next_read, std::async(std::launch::async,
                                                 [&loader, k = next_read] { return loader.read_frame(k); }));
  };
  const bool need_base = options.base_difference || options.background == ChainOptions::Background::BaseFrame;
  const bool read_once = !need_base && options.background == ChainOptions::Background::None;
  std::optional<FitsImage> first_image;
  std::size_t first_index = n;
  if (options.occulter_rs) {
    run.radii = {options.occulter_rs->first, options.occulter_rs->second, OcculterRadii::Origin::Caller};
  } else if (sequence.frames.front().header_radii) {
    run.radii = *sequence.frames.front().header_radii;
  } else {
    std::size_t k = 0;
    while (k < n && !(first_image = loader.read(k))) ++k;
    if (k == n) throw InputError("view " + view, "none of its frames could be read");
    first_index = k;
    if (read_once) {
      next_read = k + 1;  // the frames before it failed, and were reported
      read_ahead(first_index);
    }
    cv::Mat first_registered;
    loader.to_grid(k, *first_image, first_registered);
    run.radii = estimate_occulter_radii(first_registered, run.grid, sequence.frames[k].path.string());
  }
  if (read_once && first_index == n) read_ahead(n);
  char note[300];
  std::snprintf(note, sizeof note, "view %s: data are used from %.2f to %.2f R☉ (occulter and field stop, from the %s).",
                view.c_str(), run.radii.inner_rs, run.radii.outer_rs, origin_name(run.radii.origin));
  run.notes.emplace_back(note);
  loader.cache = RegistrationCache(run.grid, annulus_keep_mask(run.grid, run.radii));
  loader.maps_built_for = loader.cache.builds();

  run.polar = make_polar_grid(run.grid, run.radii.inner_rs, run.radii.outer_rs, options.pa_step_deg,
                              options.height_step_rs);
  loader.polar = run.polar;

  // The pre-event frame: the last at or before base_time (the first when none is given).
  std::size_t base = 0;
  if (options.base_time_utc_s)
    for (std::size_t k = 0; k < n; ++k)
      if (sequence.frames[k].utc_s <= *options.base_time_utc_s) base = k;
  cv::Mat base_polar, base_registered;
  if (need_base) {
    std::optional<FitsImage> image;
    while (base < n && !(image = loader.read(base))) ++base;
    if (base == n) throw InputError("view " + view, "none of its frames could be read");
    loader.to_polar_frame(base, *image, base_polar);
    if (options.cartesian != Cartesian::None && options.background == ChainOptions::Background::BaseFrame)
      loader.to_grid(base, *image, base_registered);
  }
  run.base_utc_s = sequence.frames[std::min(base, n - 1)].utc_s;

  // Backgrounds are taken on the polar grid (and on the registered grid only for the
  // Cartesian frames a caller asked for).
  if (options.background == ChainOptions::Background::BaseFrame) {
    loader.background = base_polar.clone();
    loader.grid_background = base_registered;
  } else if (options.background == ChainOptions::Background::LowPercentile) {
    // A pass over every frame before any difference can be formed.
    LowPercentileBackground low(cv::Size(run.polar.pa_count, run.polar.height_count), options.background_percentile,
                                int(n));
    std::optional<LowPercentileBackground> low_grid;
    if (options.cartesian != Cartesian::None)
      low_grid.emplace(cv::Size(run.grid.width, run.grid.height), options.background_percentile, int(n));
    cv::Mat frame;
    for (std::size_t k = 0; k < n; ++k) {
      const auto image = k == first_index ? std::optional<FitsImage>(*first_image) : loader.read(k);
      if (!image) continue;
      loader.to_polar_frame(k, *image, frame);
      low.add(frame);
      if (low_grid) {
        loader.to_grid(k, *image, frame);
        low_grid->add(frame);
      }
    }
    loader.background = low.result();
    if (low_grid) loader.grid_background = low_grid->result();
  }
  if (options.base_difference && !loader.background.empty()) subtract_background(base_polar, loader.background);

  cv::Mat current_polar, previous_polar, running, base_diff, current_grid, previous_grid;
  std::vector<float> sigma, base_sigma;
  const SequenceFrame* last = nullptr;
  // Cartesian::Last: the raw frames of the latest difference, registered after the stream.
  std::optional<FitsImage> newer, older;
  std::size_t newer_k = 0, older_k = 0;
  for (std::size_t k = 0; k < n; ++k) {
    std::optional<FitsImage> image;
    if (k == first_index) {
      image = std::move(first_image);
    } else {
      read_ahead(first_index);
      if (!ahead.empty() && ahead.front().first == k) {
        image = ahead.front().second.get();
        ahead.pop_front();
      } else {
        image = loader.read_frame(k);  // before the first readable frame, whose reads began after it: failed
      }
    }
    read_ahead(first_index);
    if (!image) {
      loader.report(k);
      continue;
    }
    ++run.frames_used;
    loader.to_polar_frame(k, *image, current_polar);
    if (options.cartesian == Cartesian::Every) loader.to_grid(k, *image, current_grid);
    const SequenceFrame& frame = sequence.frames[k];
    if (last) {
      const double step_s = frame.utc_s - last->utc_s;
      const double scale = options.common_step_s > 0.0 ? options.common_step_s / step_s : 1.0;
      difference(current_polar, previous_polar, scale, running);
      sigma = ring_sigma(running, options.noise_smooth_rings, pa_stride(run.polar));
      divide_by_rows(running, sigma);
      if (options.base_difference) {
        difference(current_polar, base_polar, 1.0, base_diff);
        base_sigma = ring_sigma(base_diff, options.noise_smooth_rings, pa_stride(run.polar));
        divide_by_rows(base_diff, base_sigma);
      }
      on_frame(ChainFrame{frame, step_s, current_grid, previous_grid, running, sigma,
                          options.base_difference ? &base_diff : nullptr, run.polar});
    }
    last = &frame;
    std::swap(current_grid, previous_grid);
    std::swap(current_polar, previous_polar);
    if (options.cartesian == Cartesian::Last) {
      if (older) loader.give_buffer(std::move(older->pixels));
      older = std::move(newer);
      older_k = newer_k;
      newer = std::move(image);
      newer_k = k;
    } else {
      loader.give_buffer(std::move(image->pixels));
    }
  }
  run.registration_builds = loader.cache.builds();
  if (run.frames_used < int(kMinimumFrames)) {
    std::string text = "only " + std::to_string(run.frames_used) + " of its frames could be read; running differences "
                                                                   "need at least three";
    for (const auto& p : run.problems) text += " " + p;
    throw InputError("view " + view, text);
  }
  if (older && newer) {
    loader.to_grid(older_k, *older, run.last_previous_registered);
    loader.to_grid(newer_k, *newer, run.last_registered);
  }
  return run;
}

PolarRun polar_running_differences(const std::string& view, const std::vector<std::filesystem::path>& paths,
                                   const ChainOptions& options) {
  PolarRun out;
  out.run = run_view(view, paths, options, [&](const ChainFrame& f) {
    out.running.utc_s.push_back(f.frame.utc_s);
    out.running.frames.push_back(f.polar_running.clone());
  });
  out.running.polar = out.run.polar;
  return out;
}

cv::Mat sigma_difference(const cv::Mat& current, const cv::Mat& previous, double scale) {
  cv::Mat out;
  difference(current, previous, scale, out);
  // Every 4th pixel each way: ~65 k samples of a 1024² frame, plenty for a MAD.
  divide_by(out, robust_sigma(out, 4));
  return out;
}

}  // namespace occulta::imaging
