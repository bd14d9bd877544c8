// fit/result_csv.cpp — the measurement as a result.csv row (see result_file.hpp).
#include <sstream>
#include <vector>

#include "fit/result_file.hpp"
#include "fit/json_file.hpp"

namespace occulta::fit {
using nlohmann::json;

namespace {

std::string csv_field(const json& value) {
  if (value.is_null()) return "";
  if (value.is_string()) {
    std::string text = value.get<std::string>(), quoted = "\"";
    for (char c : text) quoted += (c == '"') ? std::string("\"\"") : std::string(1, c);
    return quoted + "\"";
  }
  if (value.is_array()) {
    std::string joined;
    for (const auto& x : value) joined += (joined.empty() ? "" : ";") + json_text(x);
    return joined;
  }
  return json_text(value);
}

// The columns after the event's keys, from `block` (the document, or one of its cmes):
// each view's keys prefixed by its name, then the shell's, the arrival's and the boundary's.
void cme_columns(const json& block, std::vector<std::string>& names, std::vector<std::string>& values) {
  for (const auto& v : block["views"])
    for (const char* key : {"frames_used", "found", "central_pa_deg", "pa_span_deg", "sky_width_deg", "sky_speed_km_s",
                            "sky_speed_km_s_sigma", "sky_accel_m_s2", "sky_accel_m_s2_sigma", "onset_time",
                            "onset_time_sigma_s", "time_at_21_5_rs", "law_ref_time", "frames_outside_window"}) {
      names.push_back(v["name"].get<std::string>() + "_" + key);
      // The frames outside the window are named in result.json; the row counts them.
      values.push_back(std::string(key) == "frames_outside_window" ? std::to_string(v.value(key, json::array()).size())
                                                                    : csv_field(v.contains(key) ? v[key] : json(nullptr)));
    }
  // The shell and the boundary values, flat, with their σ.
  const json& shell = block["shell"];
  for (const char* key : {"lon_deg", "lat_deg", "tilt_deg", "half_angle_deg", "aspect_ratio", "speed_km_s", "accel_m_s2",
                          "face_on_width_deg", "edge_on_width_deg"}) {
    names.push_back(std::string("shell_") + key);
    values.push_back(shell.is_object() ? csv_field(shell[key]) : "");
    names.push_back(std::string("shell_") + key + "_sigma");  // σ of K is K_sigma (README "Outputs")
    values.push_back(shell.is_object() ? csv_field(shell["sigma"][key]) : "");
  }
  names.push_back("shell_residual_rms_rs");
  values.push_back(shell.is_object() ? csv_field(shell["residual_rms_rs"]) : "");
  // What the data leave open (measurement.hpp ShellMeasurement): the direction's basis, and the keys not
  // constrained, joined by ';' as arrays are here.
  names.push_back("shell_direction_basis");
  values.push_back(shell.is_object() && shell.contains("direction_basis") ? csv_field(shell["direction_basis"]) : "");
  names.push_back("shell_not_constrained");
  values.push_back(shell.is_object() && shell.contains("not_constrained") ? csv_field(shell["not_constrained"]) : "");
  names.push_back("arrival_withheld");
  values.push_back(block.contains("arrival_withheld") ? csv_field(block["arrival_withheld"]) : "");
  names.push_back("arrival_conditional_on");
  values.push_back(block.contains("arrival_conditional_on") ? csv_field(block["arrival_conditional_on"]) : "");
  const json& boundary = block["boundary"];
  for (const char* key : {"time", "speed_km_s", "half_width_deg"}) {
    names.push_back(std::string("boundary_") + key);
    values.push_back(boundary.is_object() ? csv_field(boundary[key]) : "");
    // boundary.sigma holds time_s for the time (a σ in seconds), the keys' own names else.
    const std::string sigma_key = std::string(key) == "time" ? "time_s" : key;
    names.push_back(std::string("boundary_") + key + (std::string(key) == "time" ? "_sigma_s" : "_sigma"));
    values.push_back(boundary.is_object() && boundary.contains("sigma") ? csv_field(boundary["sigma"].value(sigma_key, json())) : "");
  }
}

}  // namespace

// One row per CME: the event's keys (with the CME's index when there are several), then
// cme_columns of the document (one CME) or of each of its cmes.
std::string result_csv(const json& result) {
  const bool several = result.contains("cmes");
  std::vector<std::string> names = {"event_id", "status", "problems"};
  if (several) names.insert(names.begin() + 1, "cme");
  // The problems as the sentences themselves, one after another in one quoted field.
  std::string problems;
  for (const auto& p : result["problems"]) problems += (problems.empty() ? "" : " ") + p.get<std::string>();
  std::vector<std::vector<std::string>> rows;
  for (const json& block : several ? result["cmes"] : json::array({result})) {
    std::vector<std::string> values = {csv_field(result["event_id"]), csv_field(result["status"]), csv_field(json(problems))};
    if (several) values.insert(values.begin() + 1, csv_field(block["index"]));
    std::vector<std::string> columns;
    cme_columns(block, columns, values);
    if (rows.empty()) names.insert(names.end(), columns.begin(), columns.end());
    rows.push_back(values);
  }
  std::ostringstream out;
  for (size_t i = 0; i < names.size(); ++i) out << (i ? "," : "") << names[i];
  out << '\n';
  for (const auto& values : rows) {
    for (size_t i = 0; i < values.size(); ++i) out << (i ? "," : "") << values[i];
    out << '\n';
  }
  return out.str();
}

std::string result_csv(const Measurement& measurement) { return result_csv(result_json(measurement)); }

}  // namespace occulta::fit
