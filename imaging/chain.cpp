// imaging/chain.cpp — one view, frame by frame.
#include "imaging/chain.hpp"

#include <cstdio>
#include <exception>
#include <future>
#include <optional>
#include <limits>

#include "imaging/difference.hpp"
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

// Reads and calibrates frames of one view onto its grid; remembers frames that failed so
// that a second pass skips them without a second report.
struct FrameLoader {
  const ViewSequence& sequence;
  const ChainOptions& options;
  RegistrationCache cache;
  std::vector<std::string>& problems;
  std::vector<bool> failed;
  cv::Mat background;  // empty: none
  cv::Mat median_scratch;  // reused frame to frame: no new 4 MB allocation per frame

  // The frame's pixels; nullopt (reported) when the frame cannot be read.
  std::optional<FitsImage> read(std::size_t k) {
    if (failed[k]) return std::nullopt;
    const SequenceFrame& frame = sequence.frames[k];
    try {
      FitsImage image = read_fits(frame.path);
      if (image.pixels.cols != frame.geometry.width || image.pixels.rows != frame.geometry.height)
        throw InputError(frame.path.string(), "its pixels are " + std::to_string(image.pixels.cols) + "×" +
                                                  std::to_string(image.pixels.rows) + " but its header says " +
                                                  std::to_string(frame.geometry.width) + "×" +
                                                  std::to_string(frame.geometry.height));
      return image;
    } catch (const std::exception& e) {
      failed[k] = true;
      problems.push_back(std::string(e.what()) + " The frame is skipped.");
      return std::nullopt;
    }
  }

  void process(std::size_t k, const FitsImage& image, cv::Mat& out) {
    const SequenceFrame& frame = sequence.frames[k];
    register_frame(image.pixels, cache.for_geometry(frame.geometry), out);
    // Scaling commutes with the (linear) resampling, so DN/s is applied on the grid.
    if (frame.exposure_s) to_rate(out, *frame.exposure_s);
    if (options.median_filter) median_filter(out, options.median_filter, median_scratch);
    if (!background.empty()) subtract_background(out, background);
  }

  // false (reported) when the frame cannot be read.
  bool load(std::size_t k, cv::Mat& out) {
    const auto image = read(k);
    if (image) process(k, *image, out);
    return bool(image);
  }
};

int pa_stride(const PolarGrid& polar) { return std::max(1, polar.pa_count / 240); }

}  // namespace

ViewRun run_view(const std::string& view, const std::vector<std::filesystem::path>& paths,
                 const ChainOptions& options, const std::function<void(const ChainFrame&)>& on_frame) {
  ViewSequence sequence = scan_view(view, paths, options.observer);
  ViewRun run;
  run.view = view;
  run.problems = sequence.problems;
  run.grid = grid_for_view(sequence.frames.front().geometry);

  // Occulter and field-stop radii: event file, else header, else the first readable frame.
  FrameLoader loader{sequence, options, RegistrationCache(run.grid), run.problems,
                     std::vector<bool>(sequence.frames.size(), false), {}, {}};
  cv::Mat first_registered;  // kept when the radii come from the data: the stream starts with it
  std::size_t first_index = sequence.frames.size();
  if (options.occulter_rs) {
    run.radii = {options.occulter_rs->first, options.occulter_rs->second, OcculterRadii::Origin::Caller};
  } else if (sequence.frames.front().header_radii) {
    run.radii = *sequence.frames.front().header_radii;
  } else {
    std::size_t k = 0;
    while (k < sequence.frames.size() && !loader.load(k, first_registered)) ++k;
    if (k == sequence.frames.size()) throw InputError("view " + view, "none of its frames could be read");
    first_index = k;
    run.radii = estimate_occulter_radii(first_registered, run.grid, sequence.frames[k].path.string());
  }
  char note[300];
  std::snprintf(note, sizeof note, "view %s: data are used from %.2f to %.2f R☉ (occulter and field stop, from the %s).",
                view.c_str(), run.radii.inner_rs, run.radii.outer_rs, origin_name(run.radii.origin));
  run.notes.emplace_back(note);
  const cv::Mat keep = annulus_keep_mask(run.grid, run.radii);
  loader.cache = RegistrationCache(run.grid, keep);
  if (!first_registered.empty()) first_registered.setTo(std::numeric_limits<float>::quiet_NaN(), keep == 0);

  run.polar = make_polar_grid(run.grid, run.radii.inner_rs, run.radii.outer_rs, options.pa_step_deg,
                              options.height_step_rs);
  const PolarMaps polar_maps = make_polar_maps(run.grid, run.polar);

  // The pre-event frame: the last at or before base_time (the first when none is given).
  std::size_t base = 0;
  if (options.base_time_utc_s)
    for (std::size_t k = 0; k < sequence.frames.size(); ++k)
      if (sequence.frames[k].utc_s <= *options.base_time_utc_s) base = k;
  cv::Mat base_registered;
  const bool need_base = options.base_difference || options.background == ChainOptions::Background::BaseFrame;
  if (need_base) {
    while (base < sequence.frames.size() && !loader.load(base, base_registered)) ++base;
    if (base == sequence.frames.size()) throw InputError("view " + view, "none of its frames could be read");
  }
  run.base_utc_s = sequence.frames[std::min(base, sequence.frames.size() - 1)].utc_s;

  if (options.background == ChainOptions::Background::BaseFrame) {
    loader.background = base_registered.clone();
  } else if (options.background == ChainOptions::Background::LowPercentile) {
    // A pass over every frame before any difference can be formed.
    LowPercentileBackground low(cv::Size(run.grid.width, run.grid.height), options.background_percentile,
                                int(sequence.frames.size()));
    cv::Mat frame;
    for (std::size_t k = 0; k < sequence.frames.size(); ++k)
      if (loader.load(k, frame)) low.add(frame);
    loader.background = low.result();
  }
  cv::Mat base_polar;
  if (options.base_difference) {
    if (!loader.background.empty()) subtract_background(base_registered, loader.background);
    to_polar(base_registered, polar_maps, base_polar);
  }
  base_registered.release();

  cv::Mat current, previous, current_polar, previous_polar, running, base_diff;
  std::vector<float> sigma, base_sigma;
  const SequenceFrame* last = nullptr;
  if (!loader.background.empty()) first_index = sequence.frames.size();  // the background changes it: read again
  // cfitsio reads (and decompresses) frame k + 1 on a second thread while frame k is
  // processed; only that thread calls cfitsio meanwhile. Costs one raw frame of memory.
  const auto read_ahead = [&](std::size_t k) {
    return std::async(std::launch::async, [&loader, k] { return loader.read(k); });
  };
  std::future<std::optional<FitsImage>> next;
  if (first_index != 0 && !sequence.frames.empty()) next = read_ahead(0);
  for (std::size_t k = 0; k < sequence.frames.size(); ++k) {
    if (k == first_index) {
      if (k + 1 < sequence.frames.size()) next = read_ahead(k + 1);
      std::swap(current, first_registered);
    } else {
      std::optional<FitsImage> image = next.get();
      if (k + 1 < sequence.frames.size() && k + 1 != first_index) next = read_ahead(k + 1);
      if (!image) continue;
      loader.process(k, *image, current);
    }
    ++run.frames_used;
    to_polar(current, polar_maps, current_polar);
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
      on_frame(ChainFrame{frame, step_s, current, previous, running, sigma,
                          options.base_difference ? &base_diff : nullptr});
    }
    last = &frame;
    std::swap(current, previous);
    std::swap(current_polar, previous_polar);
  }
  run.registration_builds = loader.cache.builds();
  if (run.frames_used < int(kMinimumFrames)) {
    std::string text = "only " + std::to_string(run.frames_used) + " of its frames could be read; running differences "
                                                                   "need at least three";
    for (const auto& p : run.problems) text += " " + p;
    throw InputError("view " + view, text);
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
