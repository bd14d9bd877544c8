// app/inspect.hpp — `occulta inspect [--json] PATH...`: what each FITS file holds and
// whether occulta can use it (size, time, observer, Sun centre, scale, roll).
#pragma once

#include <filesystem>
#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace occulta::app {

struct InspectOptions {
  std::vector<std::string> paths;  // files, or folders walked recursively for FITS files
  bool json = false;
};

// One file's report: exactly the keys path, ok, problem, width, height, bitpix, time,
// exposure_s, observer {lon_deg, lat_deg, dist_au}, sun_center_px [x, y], rs_per_px,
// roll_deg, finite_fraction — null where unknown. `notes` gets warnings that do not
// make the file unusable (e.g. RSUN_ARC disagreeing with DSUN_OBS).
nlohmann::json inspect_file(const std::filesystem::path& path, std::vector<std::string>& notes);

// Prints the reports (a line per file, or a JSON array) to out, notes to err.
// Returns 0 when every file is usable, 1 otherwise.
int inspect(const InspectOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
