#include "app/measure.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>
#include <future>
#include <ostream>

#include "app/forecast.hpp"
#include "app/measure_pictures.hpp"
#include "app/output_set.hpp"
#include "app/provenance.hpp"
#include "fit/json_file.hpp"
#include "imaging/frame_memory.hpp"
#include "fit/result_file.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;

json run_measure(const MeasureOptions& o, std::ostream& err) {
  const auto started = std::chrono::steady_clock::now();
  imaging::set_frame_memory();
  const fit::MeasurementInput input = fit::load_measurement_input(o.input, o.track);
  const fit::Event& event = input.event;
  // What a run writes: checked against the inputs' globs before any work; the previous
  // run's set removed, its result.json first; this run's result.json written last
  // (app/output_set.hpp).
  const OutputNames names{"result.json", {"result.csv", "track.json"}, {"time_height.png", "front.png", "shell.png"}};
  std::vector<fs::path> outputs;
  std::vector<std::string> view_names;
  for (const std::string& name : {names.seal, names.top[0], names.top[1]}) outputs.push_back(fs::path(o.out_dir) / name);
  for (const fit::EventView& view : event.views) {
    view_names.push_back(view.name);
    for (const std::string& name : names.per_view) outputs.push_back(fs::path(o.out_dir) / view.name / name);
  }
  check_outputs_outside_inputs(event, outputs, o.out_dir);  // an unusable --out: exit 1, as out_dir.hpp
  fs::create_directories(o.out_dir);
  retire_previous_outputs(o.out_dir, names, view_names);

  fit::MeasurementOptions options = o.measurement;
  options.result_name = (fs::path(o.out_dir) / "result.json").string();
  // The frames' SHA-256 for provenance are taken on a second thread while the measurement
  // runs (much of it, the fronts and the kinematics, on one core); provenance() reads
  // only what this missed.
  std::vector<fs::path> frames;
  for (const fit::WindowSplit& split : input.windows) frames.insert(frames.end(), split.inside.begin(), split.inside.end());
  std::future<KnownSha256> hashed = std::async(std::launch::async, [&frames] { return sha256_files(frames); });
  // The polar running differences in an unlinked temporary file, in TMPDIR (else the
  // output folder, when TMPDIR names no folder): memory flat in frames (issue 18).
  std::error_code no_tmp;
  const fs::path tmp = fs::temp_directory_path(no_tmp);
  options.polar_scratch_dir = no_tmp ? fs::path(o.out_dir) : tmp;
  const fit::Measurement measurement = fit::measure_event(input, options);
  write_measurement_pictures(measurement, o.out_dir);

  json result = fit::result_json(measurement);
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  const json provenance_options = {{"median", options.median},
                                   {"track", o.track.empty() ? json(nullptr) : json(o.track)},
                                   {"apex_law", options.apex_law}};
  result["provenance"] = provenance(measurement.inputs, provenance_options, elapsed, hashed.get());
  fit::write_text_file(fs::path(o.out_dir) / "result.csv", fit::result_csv(result));
  fit::write_track(fs::path(o.out_dir) / "track.json", fit::used_track(measurement));
  fit::write_json_file(fs::path(o.out_dir) / "result.json", result);  // the seal, last
  for (const auto& p : result["problems"]) err << "occulta: problem: " << p.get<std::string>() << '\n';
  return result;
}

namespace {

// What a table shows where nothing was measured (README "Outputs"): a word, never "nan".
constexpr const char* kNotMeasured = "—";

// A number with `digits` decimals and a unit, or kNotMeasured.
std::string shown(const json& value, int digits, const char* unit = "") {
  if (!value.is_number() || !std::isfinite(value.get<double>())) return kNotMeasured;
  char text[64];
  std::snprintf(text, sizeof text, "%.*f%s", digits, value.get<double>(), unit);
  return text;
}

// "value ± σ" when both are numbers, the value alone when σ is not, else kNotMeasured.
std::string shown_pm(const json& value, const json& sigma, int digits, const char* unit = "") {
  if (!value.is_number()) return kNotMeasured;
  if (!sigma.is_number()) return shown(value, digits, unit);
  return shown(value, digits) + " ± " + shown(sigma, digits, unit);
}

// Left-aligned in `width` columns of the terminal (UTF-8: count code points, not bytes).
std::string padded(const std::string& text, size_t width) {
  size_t columns = 0;
  for (unsigned char c : text) columns += (c & 0xC0) != 0x80;
  return text + std::string(width > columns ? width - columns : 1, ' ');
}

}  // namespace

void print_result_table(const json& result, std::ostream& out) {
  out << padded("view", 10) << padded("CME", 5) << padded("central PA", 12) << padded("PA span", 14)
      << padded("sky width", 11) << padded("sky speed (km/s)", 18) << padded("accel (m/s²)", 15) << "onset (UTC)\n";
  for (const auto& v : result["views"]) {
    std::string span = kNotMeasured;
    if (v["pa_span_deg"].is_array())
      span = shown(v["pa_span_deg"][0], 0) + "–" + shown(v["pa_span_deg"][1], 0, "°");
    out << padded(v["name"].get<std::string>(), 10) << padded(v["found"].get<bool>() ? "yes" : "no", 5)
        << padded(shown(v["central_pa_deg"], 1, "°"), 12) << padded(span, 14) << padded(shown(v["sky_width_deg"], 1, "°"), 11)
        << padded(shown_pm(v["sky_speed_km_s"], v.value("sky_speed_km_s_sigma", json()), 0), 18)
        << padded(shown_pm(v["sky_accel_m_s2"], v.value("sky_accel_m_s2_sigma", json()), 1), 15)
        << (v["onset_time"].is_string() ? v["onset_time"].get<std::string>() : std::string(kNotMeasured)) << '\n';
  }
  const json& s = result["shell"];
  if (!s.is_object()) {
    out << "shell: no fit\n";
    return;
  }
  const auto pm = [&](const char* key, int digits, const char* unit) {
    return shown_pm(s[key], s.contains("sigma") ? s["sigma"].value(key, json()) : json(), digits, unit);
  };
  // Say on what the shell rests, in words: the reader of this line may never open the JSON.
  const std::string basis = s.value("direction_basis", std::string("views"));
  const std::size_t n_views = s.contains("views") ? s["views"].size() : 0;
  std::string heading;
  if (basis == "views")
    heading = "shell (direction measured from " + std::to_string(n_views) + " views)";
  else if (basis == "source region")
    heading = "shell (ONE view: direction ASSUMED from the source region, not measured)";
  else
    heading = "shell (direction NOT CONSTRAINED by the data: lon and lat below are a guess)";
  if (s.value("status", std::string("ok")) != "ok") heading += " [FIT FAILED: see problems]";
  out << heading << ": lon " << pm("lon_deg", 1, "°") << ", lat " << pm("lat_deg", 1, "°") << ", tilt "
      << pm("tilt_deg", 0, "°") << ", speed " << pm("speed_km_s", 0, " km/s") << ", face-on width "
      << pm("face_on_width_deg", 0, "°") << ", edge-on width " << pm("edge_on_width_deg", 0, "°") << "\n";
  if (s.contains("not_constrained") && !s["not_constrained"].empty()) {
    std::string keys;
    for (const auto& k : s["not_constrained"]) keys += (keys.empty() ? "" : ", ") + k.get<std::string>();
    out << "not constrained by the data: " << keys << "\n";
  }
  const json& b = result["boundary"];
  if (b.is_object()) {
    const json sigma = b.value("sigma", json::object());
    const json time_min = sigma.value("time_s", json()).is_number() ? json(sigma["time_s"].get<double>() / 60.0) : json();
    out << "at 21.5 R☉: " << b["time"].get<std::string>() << " ± " << shown(time_min, 0, " min") << ", "
        << shown_pm(b["speed_km_s"], sigma.value("speed_km_s", json()), 0, " km/s") << ", half-width "
        << shown(b["half_width_deg"], 0, "°") << "\n";
  }
}

int measure(const MeasureOptions& o, std::ostream& out, std::ostream& err) {
  const json result = run_measure(o, err);
  if (!o.quiet) {
    out << "event " << result["event_id"].get<std::string>() << ": " << result["status"].get<std::string>() << "\n";
    // One block per CME: the document itself when it holds one, else each of its cmes.
    const bool several = result.contains("cmes");
    for (const json& cme : several ? result["cmes"] : json::array({result})) {
      if (several) {
        const int index = cme["index"].get<int>();
        const std::string association = cme["association"].get<std::string>();
        out << "\nCME " << index << " of " << result["cmes"].size() << " ("
            << (association == "views"      ? "associated across views"
                : association == "one view" ? "ONE view only"
                                            : "UNDECIDED which CME of the other views it is")
            << ", " << cme["status"].get<std::string>() << ")";
        if (result["primary"] == index) out << " — primary: " << result["primary_reason"].get<std::string>();
        out << "\n";
      }
      print_result_table(cme, out);
      if (cme.contains("arrival")) {
        if (cme.contains("arrival_conditional_on"))
          out << "arrival below is CONDITIONAL: it holds only if " << cme["arrival_conditional_on"].get<std::string>()
              << "\n";
        print_arrival_table(cme["arrival"], out);
      }
      if (cme.contains("arrival_withheld"))
        out << "arrival: WITHHELD: " << cme["arrival_withheld"].get<std::string>() << "\n";
    }
    if (several) out << "\n";
    out << "written: " << (fs::path(o.out_dir) / "result.json").string() << ", result.csv, track.json, <view>/time_height.png, <view>/front.png, <view>/shell.png\n";
  }
  return result["status"] == "ok" && result["problems"].empty() ? 0 : 1;
}

}  // namespace occulta::app
