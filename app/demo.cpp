#include "app/demo.hpp"

#include <algorithm>
#include <cstdio>
#include <cmath>
#include <filesystem>
#include <iomanip>
#include <ostream>
#include <sstream>

#include "fit/event.hpp"
#include "app/forecast.hpp"
#include "app/inspect.hpp"
#include "app/measure.hpp"
#include "fit/json_file.hpp"
#include "fit/truth.hpp"
#include "imaging/front.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

fs::path find_event_file(const fs::path& dir) {
  std::vector<fs::path> found;
  std::error_code ec;
  if (!fs::is_directory(dir, ec))
    throw imaging::InputError(dir.string(), fs::exists(dir, ec) ? "is not a folder; `demo` needs the sample event's folder (--sample DIR)"
                                                                : "does not exist; run `occulta demo` in the occulta source folder, "
                                                                  "or give the sample event's folder with --sample DIR");
  for (const auto& entry : fs::directory_iterator(dir, ec))
    if (entry.path().filename().string().ends_with(".event.json")) found.push_back(entry.path());
  if (found.empty())
    throw imaging::InputError(dir.string(), "holds no *.event.json file, so it is not a sample event's folder (--sample DIR)");
  std::sort(found.begin(), found.end());
  return found.front();
}

}  // namespace

int demo(const DemoOptions& given, std::ostream& out, std::ostream& err) {
  // The default sample folder is looked for here, then in the source tree occulta was
  // built from, so that `occulta demo` works from any folder on the build machine.
  DemoOptions options = given;
  if (options.sample_dir == DemoOptions{}.sample_dir && !fs::is_directory(options.sample_dir) &&
      fs::is_directory(OCCULTA_SAMPLE_DIR))
    options.sample_dir = OCCULTA_SAMPLE_DIR;
  const fit::Event event = fit::read_event(find_event_file(options.sample_dir));
  out << "occulta demo — sample event \"" << event.id << "\" (" << event.path.string() << ")\n"
      << "Synthetic frames of an invented scenario (occulta synth), not observations.\n\n";

  bool all_ok = true;
  out << std::left << std::setw(8) << "view" << std::right << std::setw(7) << "frames" << std::setw(7) << "usable"
      << "  " << std::left << std::setw(25) << "first frame (UTC)" << std::setw(10) << "cadence" << std::right
      << std::setw(10) << "obs lon" << std::setw(9) << "obs lat" << std::setw(9) << "dist" << std::setw(10)
      << "R☉/px" << '\n';
  for (const fit::EventView& view : event.views) {
    std::vector<std::string> notes, problems;
    std::vector<double> times;
    nlohmann::json last;
    for (const auto& file : view.files) {
      nlohmann::json r = inspect_file(file, notes);
      if (!r["ok"].get<bool>()) {
        problems.push_back(r["problem"].get<std::string>());
        continue;
      }
      times.push_back(imaging::utc_seconds_from_iso(r["time"].get<std::string>()));
      last = std::move(r);
    }
    all_ok = all_ok && problems.empty() && !view.files.empty();
    std::sort(times.begin(), times.end());
    out << std::left << std::setw(8) << view.name << std::right << std::setw(7) << view.files.size() << std::setw(7)
        << times.size() << "  ";
    if (times.empty()) {
      out << "no usable frames\n";
    } else {
      const double cadence_min = times.size() > 1 ? (times.back() - times.front()) / (times.size() - 1) / 60.0 : 0.0;
      std::ostringstream cadence;
      cadence << std::fixed << std::setprecision(1) << cadence_min << " min";
      const auto& o = last["observer"];
      out << std::left << std::setw(25) << imaging::iso_from_utc_seconds(times.front(), 0) << std::setw(10)
          << cadence.str() << std::right << std::fixed << std::setprecision(1) << std::setw(9)
          << o["lon_deg"].get<double>() << "°" << std::setw(8) << o["lat_deg"].get<double>() << "°"
          << std::setprecision(3) << std::setw(6) << o["dist_au"].get<double>() << " au" << std::setprecision(4)
          << std::setw(10) << last["rs_per_px"].get<double>() << '\n';
    }
    for (const auto& p : problems) err << "occulta: problem: " << p << '\n';
    for (const auto& n : notes) err << "occulta: note: " << n << '\n';
  }
  out << "\nEvery frame: `occulta inspect " << options.sample_dir << "`.\n\n";

  // Measure, and compare with the scenario's truth where the sample has one.
  MeasureOptions m;
  m.input = event.path.string();
  m.out_dir = options.out_dir;
  const nlohmann::json result = run_measure(m, err);
  out << "Measured (occulta measure " << m.input << " --out " << m.out_dir << "): " << result["status"].get<std::string>()
      << "\n";
  print_result_table(result, out);
  const fs::path truth_path = fs::path(options.sample_dir) / (event.id + ".truth.json");
  if (fs::exists(truth_path)) {
    const nlohmann::json truth = fit::read_json_file(truth_path);
    out << "\nTruth of the scenario (" << truth_path.string() << "), as each view should see it:\n";
    for (const fit::EventView& view : event.views) {
      // The heights the front finder examines (imaging::FrontOptions margins).
      const imaging::FrontOptions finder;
      const double lo = (view.occulter_rs ? (*view.occulter_rs)[0] : 2.5) + finder.inner_margin_rs;
      const double hi = (view.occulter_rs ? (*view.occulter_rs)[1] : 14.5) - finder.outer_margin_rs;
      fit::ViewTruth t;
      try {
        t = fit::view_truth(truth, view.name, lo, hi);
      } catch (const std::exception&) {  // nlohmann's .at() or view_truth's own: a key or observer missing
        err << "occulta: problem: "
            << imaging::InputError(truth_path.string(), "holds no truth for view \"" + view.name +
                                                            "\" (no observer of that name, or its shell or frames "
                                                            "incomplete), so that view is not compared with it")
                   .what()
            << '\n';
        all_ok = false;
        continue;
      }
      // The columns of print_result_table (app/measure.cpp); printf pads bytes, and "°"
      // takes two of them, "–" three, hence the widths.
      char central[32], span[48], width[32], line[300];
      std::snprintf(central, sizeof central, "%.1f°", t.central_pa_deg);
      std::snprintf(span, sizeof span, "%.0f–%.0f°", std::fmod(t.pa_from_deg + 360.0, 360.0),
                    std::fmod(t.pa_to_deg + 360.0, 360.0));
      std::snprintf(width, sizeof width, "%.1f°", t.width_deg);
      std::snprintf(line, sizeof line, "%-9s %-4s %-12s %-16s %-11s %-17.0f sky-plane leading edge; apex PA %.1f°",
                    view.name.c_str(), "", central, span, width, t.sky_speed_km_s, t.apex_pa_deg);
      out << line << '\n';
    }
    // The true shell beside the fitted one: speed at the fit's reference time (the truth's
    // law v + a (t − t₀)), widths 2(α + δ) and 2δ (Thernisien 2011).
    const nlohmann::json& ts = truth["shell"];
    const nlohmann::json& fs_ = result["shell"];
    if (ts.is_object()) {
      double speed = ts["speed_km_s"].get<double>();
      if (fs_.is_object())
        speed += 1e-3 * ts["accel_m_s2"].get<double>() *
                 (imaging::utc_seconds_from_iso(fs_["ref_time"].get<std::string>()) -
                  imaging::utc_seconds_from_iso(ts["ref_time"].get<std::string>()));
      char line[300];
      std::snprintf(line, sizeof line,
                    "shell (truth):                lon %.1f°, lat %.1f°, tilt %.0f°, speed %.0f km/s, face-on width %.0f°, "
                    "edge-on width %.0f°",
                    ts["lon_deg"].get<double>(), ts["lat_deg"].get<double>(), ts["tilt_deg"].get<double>(), speed,
                    ts["face_on_width_deg"].get<double>(), ts["edge_on_width_deg"].get<double>());
      out << line << '\n';
    }
  }
  out << "\nQuicklooks: " << options.out_dir << "/<view>/time_height.png (track and fit), " << options.out_dir
      << "/<view>/front.png (front and PA span), " << options.out_dir
      << "/<view>/shell.png (fitted shell over three frames); result: " << options.out_dir << "/result.json\n";
  if (result.contains("arrival")) {
    out << "\nArrival estimate (drag-based model from the 21.5 R☉ boundary values, ensemble over the fit's "
           "uncertainty and the wind and drag ranges):\n";
    print_arrival_table(result["arrival"], out);
  }
  return all_ok && result["status"] == "ok" && result["problems"].empty() ? 0 : 1;
}

}  // namespace occulta::app
