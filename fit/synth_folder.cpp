// fit/synth_folder.cpp — synth's output folder: the size of what it will write, checked
// against a stated limit and the free disk before anything is written, and the frames and
// files an earlier synth run left there, removed (contracts in fit/synth.hpp).
#include <fnmatch.h>

#include <string>

#include "fit/json_file.hpp"
#include "fit/synth.hpp"
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::fit {
namespace fs = std::filesystem;

std::uintmax_t synth_output_bytes(const Scenario& s) {
  // Per frame: the pixels as stored before any compression (an upper bound: Rice only
  // shrinks them), two 2880-byte header blocks and one block of padding (FITS Standard
  // 4.0 §3.1); the event and truth files are small beside them.
  const std::uintmax_t pixel_bytes = s.detector.pixels == "int16" ? 2 : 4;
  const std::uintmax_t frame = static_cast<std::uintmax_t>(s.size_px) * static_cast<std::uintmax_t>(s.size_px) * pixel_bytes +
                               3 * 2880;
  std::uintmax_t frames = 0;
  for (const auto& o : s.observers) frames += static_cast<std::uintmax_t>(o.frames);
  return frame * frames + 1'000'000;
}

void check_synth_fits(const Scenario& s, const fs::path& out_dir) {
  const std::uintmax_t bytes = synth_output_bytes(s);
  const auto gb = [](std::uintmax_t n) { return std::to_string(n / 100'000'000 / 10.0).substr(0, 6) + " GB"; };
  if (bytes > kMaxSynthBytes)
    throw imaging::InputError(s.source.string(), "it would make about " + gb(bytes) + " of frames (" +
                                                     std::to_string(s.frames) + " frames × " +
                                                     std::to_string(s.observers.size()) + " views of " +
                                                     std::to_string(s.size_px) + "² pixels), more than synth writes (" +
                                                     gb(kMaxSynthBytes) + ")");
  // The free space of the folder, or of the nearest folder above it that exists.
  fs::path existing = fs::absolute(out_dir);
  std::error_code error;
  while (!fs::exists(existing, error) && existing.has_parent_path() && existing != existing.parent_path())
    existing = existing.parent_path();
  const fs::space_info space = fs::space(existing, error);
  if (!error && bytes > space.available)
    throw imaging::InputError(out_dir.string(), "synth would write about " + gb(bytes) + " there, and its disk has " +
                                                    gb(space.available) + " free");
}

void clear_previous_synth(const fs::path& out_dir, const std::string& id) {
  std::error_code error;
  // The seal of this id first (the event file), then the truth beside it; then those of
  // earlier ids, known by a truth file synth wrote (schema occulta.truth/1).
  for (fs::directory_iterator it(out_dir, error), end; !error && it != end; it.increment(error)) {
    const std::string name = it->path().filename().string();
    if (!name.ends_with(".truth.json") || !it->is_regular_file(error)) continue;
    try {
      const nlohmann::json truth = read_json_file(it->path());
      if (!truth.is_object() || truth.value("schema", "") != "occulta.truth/1" || !truth.contains("id") ||
          !truth["id"].is_string() || truth["id"].get<std::string>() + ".truth.json" != name)
        continue;
      fs::remove(out_dir / (truth["id"].get<std::string>() + ".event.json"), error);
      fs::remove(it->path(), error);
    } catch (const std::exception&) {
      // Not one of synth's files: left alone.
    }
  }
  error.clear();
  fs::remove(out_dir / (id + ".event.json"), error);
  fs::remove(out_dir / (id + ".truth.json"), error);
  error.clear();
  imaging::remove_stale_temporaries(out_dir);
  // Frames: <view>/<view>_NNN.fits whose header says synth made it.
  for (fs::directory_iterator view(out_dir, error), end; !error && view != end; view.increment(error)) {
    std::error_code ignored;
    if (!view->is_directory(ignored)) continue;
    imaging::remove_stale_temporaries(view->path());
    const std::string pattern = view->path().filename().string() + "_[0-9][0-9][0-9].fits";
    for (fs::directory_iterator frame(view->path(), ignored); !ignored && frame != end; frame.increment(ignored)) {
      const std::string name = frame->path().filename().string();
      std::error_code quiet;
      if (::fnmatch(pattern.c_str(), name.c_str(), 0) != 0 || !frame->is_regular_file(quiet)) continue;
      try {
        if (imaging::read_fits_header(frame->path()).text("TELESCOP") == std::optional<std::string>(kSynthTelescope))
          fs::remove(frame->path(), quiet);
      } catch (const imaging::InputError&) {
        // Unreadable: not known to be synth's, left alone.
      }
    }
  }
}

}  // namespace occulta::fit
