#include "app/inspect.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <iomanip>
#include <ostream>
#include <sstream>

#include "fit/json_file.hpp"
#include "fit/event.hpp"
#include "imaging/constants.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// The human line for one report: what an analyst checks first.
std::string summary_line(const nlohmann::json& r) {
  std::ostringstream line;
  line << r["path"].get<std::string>() << ": ";
  if (!r["width"].is_null())
    line << r["width"].get<int>() << "×" << r["height"].get<int>() << " BITPIX " << r["bitpix"].get<int>();
  if (!r["ok"].get<bool>()) {
    // The problem sentence begins with the path already; the line shows it once.
    std::string problem = r["problem"].get<std::string>();
    const std::string prefix = r["path"].get<std::string>() + ": ";
    if (problem.rfind(prefix, 0) == 0) problem.erase(0, prefix.size());
    if (!r["width"].is_null()) line << " — ";
    line << "NOT USABLE: " << problem;
    return line.str();
  }
  line << std::fixed;
  line << ", " << r["time"].get<std::string>();
  if (!r["exposure_s"].is_null()) line << std::setprecision(3) << ", exposure " << r["exposure_s"].get<double>() << " s";
  const auto& o = r["observer"];
  line << std::setprecision(2) << ", observer lon " << o["lon_deg"].get<double>() << "° lat "
       << o["lat_deg"].get<double>() << "° at " << std::setprecision(4) << o["dist_au"].get<double>() << " au";
  line << std::setprecision(2) << ", Sun centre (" << r["sun_center_px"][0].get<double>() << ", "
       << r["sun_center_px"][1].get<double>() << ") px";
  line << std::setprecision(5) << ", " << r["rs_per_px"].get<double>() << " R☉/px";
  const double roll = r["roll_deg"].get<double>();
  line << std::setprecision(2) << ", roll " << (std::abs(roll) < 0.005 ? 0.0 : roll) << "°";  // no "-0.00"
  line << std::setprecision(1) << ", " << 100.0 * r["finite_fraction"].get<double>() << " % finite";
  return line.str();
}

}  // namespace

nlohmann::json inspect_file(const fs::path& path, std::vector<std::string>& notes) {
  using nlohmann::json;
  json r = {{"path", path.string()}, {"ok", false},          {"problem", nullptr},
            {"width", nullptr},      {"height", nullptr},     {"bitpix", nullptr},
            {"time", nullptr},       {"exposure_s", nullptr}, {"observer", nullptr},
            {"sun_center_px", nullptr}, {"rs_per_px", nullptr}, {"roll_deg", nullptr},
            {"finite_fraction", nullptr}};
  try {
    std::error_code ec;
    if (!fs::exists(path, ec)) throw imaging::InputError(path.string(), "no such file");
    if (fs::is_directory(path, ec)) throw imaging::InputError(path.string(), "is a folder, not a FITS file");
    const imaging::FitsImage image = imaging::read_fits(path);
    r["width"] = image.pixels.cols;
    r["height"] = image.pixels.rows;
    r["bitpix"] = image.bitpix;
    const double total = double(image.pixels.total());
    r["finite_fraction"] = total > 0 ? (total - double(image.nonfinite_count)) / total : 0.0;
    if (image.nonfinite_count >= image.pixels.total())
      throw imaging::InputError(path.string(), "holds no finite pixel (every pixel is blank, NaN or infinite)");

    const imaging::FrameTime time = imaging::read_frame_time(image.header, image.source);
    r["time"] = imaging::iso_from_utc_seconds(time.utc_s, 3);
    if (time.exposure_s) r["exposure_s"] = *time.exposure_s;

    const imaging::ImageGeometry g = imaging::read_geometry(image.header, image.source);
    r["observer"] = {{"lon_deg", g.observer.lon_rad * kDegPerRad},
                     {"lat_deg", g.observer.lat_rad * kDegPerRad},
                     {"dist_au", g.observer.dist_km / kAuKm}};
    r["sun_center_px"] = {g.sun_center_px.x(), g.sun_center_px.y()};
    r["rs_per_px"] = g.rs_per_px;
    r["roll_deg"] = g.roll_deg;
    for (const auto& note : g.notes) notes.push_back(path.string() + ": " + note);
    r["ok"] = true;
  } catch (const imaging::InputError& e) {
    r["problem"] = e.what();
  } catch (const std::exception& e) {
    // Anything else is our fault, not the file's; still one sentence, still no crash.
    r["problem"] = path.string() + ": could not be read (" + e.what() + ").";
  }
  return r;
}

int inspect(const InspectOptions& options, std::ostream& out, std::ostream& err) {
  const auto files = fit::collect_fits_paths(options.paths);
  nlohmann::json reports = nlohmann::json::array();
  std::vector<std::string> notes;
  bool all_ok = true;
  for (const auto& file : files) {
    nlohmann::json r = inspect_file(file, notes);
    all_ok = all_ok && r["ok"].get<bool>();
    if (!options.json) out << summary_line(r) << '\n';
    reports.push_back(std::move(r));
  }
  if (options.json) out << fit::json_text(reports, 2) << '\n';
  for (const auto& note : notes) err << "occulta: note: " << note << '\n';
  if (files.empty()) {
    err << "occulta: problem: no FITS files found in the given paths.\n";
    return 1;
  }
  return all_ok ? 0 : 1;
}

}  // namespace occulta::app
