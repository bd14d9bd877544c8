// app/output_set.cpp — outputs apart from inputs, and one run's outputs as a set
// (contracts in output_set.hpp).
#include "app/output_set.hpp"

#include <fnmatch.h>

#include <fstream>
#include <set>

#include <nlohmann/json.hpp>

#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::app {

namespace fs = std::filesystem;

namespace {

fs::path normal(const fs::path& path) { return fs::absolute(path).lexically_normal(); }

bool safe_name(const std::string& name) {
  return !name.empty() && name != "." && name != ".." && name.find('/') == std::string::npos;
}

void remove_matching(const fs::path& folder, const std::vector<std::string>& patterns) {
  std::error_code error;
  fs::directory_iterator it(folder, error), end;
  for (; !error && it != end; it.increment(error)) {
    std::error_code ignored;
    if (!it->is_regular_file(ignored)) continue;
    const std::string name = it->path().filename().string();
    for (const std::string& pattern : patterns)
      if (::fnmatch(pattern.c_str(), name.c_str(), FNM_PERIOD) == 0) {
        fs::remove(it->path(), ignored);
        break;
      }
  }
  imaging::remove_stale_temporaries(folder);
}

}  // namespace

void check_outputs_outside_inputs(const fit::Event& event, const std::vector<fs::path>& outputs, const std::string& option) {
  const fs::path base = event.path.parent_path();
  for (const fs::path& output : outputs) {
    const fs::path out = normal(output);
    for (const fit::EventView& view : event.views) {
      for (const std::string& glob : view.globs) {
        // The same pattern glob(3) expands in fit::read_event, matched with fnmatch(3)
        // (POSIX: FNM_PATHNAME so that "*" stays within one folder, as in glob).
        const std::string pattern = normal(base / glob).string();
        if (::fnmatch(pattern.c_str(), out.string().c_str(), FNM_PATHNAME | FNM_PERIOD) == 0)
          throw imaging::InputError(option, "it would put " + out.string() + " where view " + view.name +
                                                " of " + event.path.string() + " reads its frames (\"" + glob +
                                                "\"), and the next run would read it as a frame; choose another folder");
      }
      for (const fs::path& file : view.files)
        if (normal(file) == out)
          throw imaging::InputError(option, "it would overwrite " + out.string() + ", a frame of view " + view.name +
                                                "; inputs are never modified, so choose another folder");
    }
  }
}

void retire_previous_outputs(const fs::path& out_dir, const OutputNames& names, const std::vector<std::string>& views) {
  std::set<std::string> folders(views.begin(), views.end());
  if (!names.seal.empty()) {
    const fs::path seal = out_dir / names.seal;
    std::error_code error;
    if (fs::is_regular_file(seal, error)) {
      // The views the previous run wrote, so that their pictures go with its seal.
      try {
        std::ifstream in(seal);
        const nlohmann::json previous = nlohmann::json::parse(in);
        if (previous.is_object() && previous.contains("views") && previous["views"].is_array())
          for (const auto& view : previous["views"])
            if (view.is_object() && view.contains("name") && view["name"].is_string())
              folders.insert(view["name"].get<std::string>());
      } catch (const std::exception&) {
        // A damaged seal is removed all the same; its views are unknown.
      }
      fs::remove(seal, error);
      if (error)
        throw imaging::InputError(seal.string(), "the previous run's result cannot be removed (" + error.message() +
                                                     "), so it would sit beside this run's outputs");
    }
  }
  remove_matching(out_dir, names.top);
  for (const std::string& view : folders)
    if (safe_name(view) && fs::is_directory(out_dir / view)) remove_matching(out_dir / view, names.per_view);
}

}  // namespace occulta::app
