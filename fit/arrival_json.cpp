// fit/arrival_json.cpp — result.json and the event's forecast block in, `arrival[]` out
// (contracts in fit/arrival_json.hpp).
#include "fit/arrival_json.hpp"

#include <cmath>
#include <sstream>
#include <stdexcept>

#include <Eigen/Eigenvalues>

#include "fit/strict_json.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {

namespace {

using nlohmann::json;
using imaging::InputError;

std::string format(double value) {
  std::ostringstream text;
  text << value;
  return text.str();
}

const json& block(const json& result, const char* name, const std::string& source, const char* why) {
  if (!result.is_object() || !result.contains(name) || !result[name].is_object())
    throw InputError(source, std::string("has no ") + name + " block, which the arrival estimate needs (" + why + ")");
  return result[name];
}

std::optional<double> optional_number(const json& obj, const char* key, const char* where, const std::string& source) {
  if (!obj.contains(key) || obj[key].is_null()) return std::nullopt;
  if (!obj[key].is_number() || !std::isfinite(obj[key].get<double>()))
    throw InputError(source, std::string(where) + "." + key + " is " + obj[key].dump() + ", not a number");
  return obj[key].get<double>();
}

double number(const json& obj, const char* key, const char* where, const std::string& source) {
  const std::optional<double> value = optional_number(obj, key, where, source);
  if (!value) throw InputError(source, std::string(where) + "." + key + " is missing");
  return *value;
}

double time_of(const json& obj, const char* key, const char* where, const std::string& source) {
  if (!obj.contains(key) || !obj[key].is_string())
    throw InputError(source, std::string(where) + "." + key + " is missing or not an ISO 8601 time");
  try {
    return imaging::utc_seconds_from_iso(obj[key].get<std::string>());
  } catch (const std::invalid_argument& e) {
    throw InputError(source, std::string(where) + "." + key + " is \"" + obj[key].get<std::string>() + "\" — " + e.what());
  }
}

// How one shell key's perturbation moves the launch (see arrival_json.hpp for the formulas).
Eigen::Matrix<double, kLaunchSize, 1> launch_column(const std::string& key, double dt_s, double v_b, double a_km_s2) {
  Eigen::Matrix<double, kLaunchSize, 1> c = Eigen::Matrix<double, kLaunchSize, 1>::Zero();
  if (key == "lon_deg") c[kLaunchLon] = kRadPerDeg;
  else if (key == "lat_deg") c[kLaunchLat] = kRadPerDeg;
  else if (key == "tilt_deg") c[kLaunchTilt] = kRadPerDeg;
  else if (key == "half_angle_deg") c[kLaunchHalfAngle] = kRadPerDeg;
  else if (key == "aspect_ratio") c[kLaunchAspectRatio] = 1.0;
  else if (key == "speed_km_s") {
    c[kLaunchTime] = -dt_s / v_b;
    c[kLaunchSpeed] = 1.0 + a_km_s2 * c[kLaunchTime];
  } else if (key == "apex_height_rs") {
    c[kLaunchTime] = -kSolarRadiusKm / v_b;
    c[kLaunchSpeed] = a_km_s2 * c[kLaunchTime];
  } else if (key == "accel_m_s2") {
    c[kLaunchTime] = -0.5 * dt_s * dt_s * 1e-3 / v_b;
    c[kLaunchSpeed] = dt_s * 1e-3 + a_km_s2 * c[kLaunchTime];
  }
  return c;
}

// A launch spread wider than the quantity's whole range says the fit did not constrain
// the shell; an ensemble drawn from it is noise (a speed variance of 10³⁰ km²/s² gave
// arrival years near −8×10⁸). Bounds of our own, generous: the fastest CMEs reach about
// 3500 km/s (value from memory), so σ(speed) up to 3000 km/s still means something; an
// angle's σ beyond 90° or the boundary time's beyond 10 days means nothing.
void check_launch_spread(const LaunchCovariance& covariance, const std::string& source) {
  const struct {
    int index;
    const char* what;
    double bound, shown_per_unit;
    const char* unit;
  } limits[] = {{kLaunchSpeed, "the speed at the boundary", 3000.0, 1.0, " km/s"},
                {kLaunchLon, "the longitude", 0.5 * kPi, kDegPerRad, "°"},
                {kLaunchLat, "the latitude", 0.5 * kPi, kDegPerRad, "°"},
                {kLaunchTilt, "the tilt", 0.5 * kPi, kDegPerRad, "°"},
                {kLaunchHalfAngle, "the half angle", 0.5 * kPi, kDegPerRad, "°"},
                {kLaunchAspectRatio, "the aspect ratio", 1.0, 1.0, ""},
                {kLaunchTime, "the boundary time", 10.0 * 86400.0, 1.0 / 3600.0, " h"}};
  for (const auto& l : limits) {
    const double variance = covariance(l.index, l.index);
    if (!(std::isfinite(variance) && std::sqrt(variance) <= l.bound))
      throw InputError(source, "the shell's uncertainty gives " + std::string(l.what) + " a standard deviation of " +
                                   format(std::sqrt(variance) * l.shown_per_unit) + l.unit + ", more than " +
                                   format(l.bound * l.shown_per_unit) + l.unit +
                                   ": the fit did not constrain the shell, and an arrival estimate from it would be noise");
  }
}

// The shell-space covariance and its keys: shell.covariance, else shell.sigma squared.
bool shell_covariance(const json& shell, const std::string& source, std::vector<std::string>& keys,
                      Eigen::MatrixXd& matrix, std::string& from) {
  if (shell.contains("covariance") && !shell["covariance"].is_null()) {
    const json& c = shell["covariance"];
    if (!c.is_object() || !c.contains("keys") || !c["keys"].is_array() || !c.contains("matrix") || !c["matrix"].is_array())
      throw InputError(source, "shell.covariance must be {\"keys\": [...], \"matrix\": [[...]]}");
    for (const json& k : c["keys"]) {
      if (!k.is_string()) throw InputError(source, "shell.covariance.keys holds " + k.dump() + ", not a key name");
      keys.push_back(k.get<std::string>());
    }
    const size_t n = keys.size();
    if (c["matrix"].size() != n)
      throw InputError(source, "shell.covariance.matrix has " + std::to_string(c["matrix"].size()) + " rows for " +
                                   std::to_string(n) + " keys");
    matrix.resize(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(n));
    for (size_t i = 0; i < n; ++i) {
      const json& row = c["matrix"][i];
      if (!row.is_array() || row.size() != n)
        throw InputError(source, "shell.covariance.matrix row " + std::to_string(i + 1) + " does not hold " +
                                     std::to_string(n) + " numbers");
      for (size_t j = 0; j < n; ++j) {
        if (!row[j].is_number() || !std::isfinite(row[j].get<double>()))
          throw InputError(source, "shell.covariance.matrix row " + std::to_string(i + 1) + " holds " + row[j].dump() +
                                       ", not a number");
        matrix(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = row[j].get<double>();
      }
    }
    const double scale = std::max(1e-300, matrix.cwiseAbs().maxCoeff());
    if ((matrix - matrix.transpose()).cwiseAbs().maxCoeff() > 1e-9 * scale)
      throw InputError(source, "shell.covariance.matrix is not symmetric");
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(matrix, Eigen::EigenvaluesOnly);
    if (n > 0 && eigen.eigenvalues().minCoeff() < -1e-9 * scale)
      throw InputError(source, "shell.covariance.matrix is not positive semi-definite (smallest eigenvalue " +
                                   format(eigen.eigenvalues().minCoeff()) + ")");
    from = "covariance";
    return true;
  }
  if (shell.contains("sigma") && shell["sigma"].is_object()) {
    std::vector<double> variances;
    for (const auto& [key, value] : shell["sigma"].items()) {
      if (value.is_null()) continue;
      if (!value.is_number() || !(value.get<double>() >= 0.0) || !std::isfinite(value.get<double>()))
        throw InputError(source, "shell.sigma." + key + " is " + value.dump() + ", not a standard deviation");
      keys.push_back(key);
      variances.push_back(value.get<double>() * value.get<double>());
    }
    matrix = Eigen::Map<Eigen::VectorXd>(variances.data(), static_cast<Eigen::Index>(variances.size())).asDiagonal();
    from = "sigma";
    return true;
  }
  from = "none";
  return false;
}

std::array<double, 2> range(const json& forecast, const char* key, const std::array<double, 2>& fallback,
                            const std::string& source) {
  if (!forecast.contains(key) || forecast[key].is_null()) return fallback;
  const json& r = forecast[key];
  if (!r.is_array() || r.size() != 2 || !r[0].is_number() || !r[1].is_number())
    throw InputError(source, std::string("forecast.") + key + " must be [lo, hi], two numbers");
  const std::array<double, 2> out{r[0].get<double>(), r[1].get<double>()};
  const std::array<double, 2> allowed = std::string(key) == "wind_km_s" ? kWindRangeKmS : kDragRangePerKm;
  if (!(out[0] >= allowed[0] && out[0] <= out[1] && out[1] <= allowed[1]))
    throw InputError(source, std::string("forecast.") + key + " is " + r.dump() + " — it needs " + format(allowed[0]) +
                                 " ≤ lo ≤ hi ≤ " + format(allowed[1]));
  return out;
}

json iso_or_null(const std::optional<double>& utc_s) {
  return utc_s ? json(imaging::iso_from_utc_seconds(*utc_s, 3)) : json(nullptr);
}

json number_or_null(const std::optional<double>& value) { return value ? json(*value) : json(nullptr); }

}  // namespace

ArrivalInput read_arrival_input(const json& result, const std::string& source) {
  require_kind(result, "result", source, "`forecast` needs a result file written by `occulta measure`");
  if (!result.is_object() || result.value("schema", json()) != "occulta.result/1")
    throw InputError(source, "`schema` is " + (result.is_object() ? result.value("schema", json()).dump() : std::string("missing")) +
                                 " — a result file's is \"occulta.result/1\"");
  if (result.value("status", json()) == "failed")
    throw InputError(source, "has status \"failed\": the measurement found no CME to send on");
  const json& boundary = block(result, "boundary", source, "the CME at 21.5 solar radii, from the shell fit");
  const json& shell = block(result, "shell", source, "the fitted shell's shape and uncertainty");
  ArrivalInput in;
  if (result.contains("event_id") && result["event_id"].is_string()) in.event_id = result["event_id"].get<std::string>();

  Launch& l = in.launch;
  l.boundary_utc_s = time_of(boundary, "time", "boundary", source);
  l.speed_km_s = number(boundary, "speed_km_s", "boundary", source);
  l.lon = number(boundary, "lon_deg", "boundary", source) * kRadPerDeg;
  l.lat = number(boundary, "lat_deg", "boundary", source) * kRadPerDeg;
  l.tilt = number(shell, "tilt_deg", "shell", source) * kRadPerDeg;
  l.half_angle = number(shell, "half_angle_deg", "shell", source) * kRadPerDeg;
  l.aspect_ratio = number(shell, "aspect_ratio", "shell", source);
  if (!(l.speed_km_s >= kSpeedRangeKmS[0] && l.speed_km_s <= kSpeedRangeKmS[1]))
    throw InputError(source, "boundary.speed_km_s is " + format(l.speed_km_s) + ", outside the allowed " +
                                 format(kSpeedRangeKmS[0]) + " to " + format(kSpeedRangeKmS[1]) + " km/s");
  if (!(l.lon >= -kPi && l.lon <= 2.0 * kPi))
    throw InputError(source, "boundary.lon_deg is " + format(l.lon * kDegPerRad) + ", outside -180 to 360");
  if (std::abs(l.lat) > 0.5 * kPi)
    throw InputError(source, "boundary.lat_deg is " + format(l.lat * kDegPerRad) + ", outside -90 to 90");
  if (!(l.aspect_ratio >= 0.0 && l.aspect_ratio < 1.0))
    throw InputError(source, "shell.aspect_ratio is " + format(l.aspect_ratio) + " — it must lie in [0, 1)");
  if (!(l.half_angle >= 0.0 && l.half_angle + std::asin(l.aspect_ratio) < 0.5 * kPi))
    throw InputError(source, "shell.half_angle_deg is " + format(l.half_angle * kDegPerRad) +
                                 " — with the aspect ratio it must leave the legs' walls short of 90° from the apex");

  std::vector<std::string> keys;
  Eigen::MatrixXd matrix;
  if (shell_covariance(shell, source, keys, matrix, in.spread_from)) {
    const std::optional<double> ref = shell.contains("ref_time") && shell["ref_time"].is_string()
                                          ? std::optional<double>(time_of(shell, "ref_time", "shell", source))
                                          : std::nullopt;
    const double dt_s = ref ? l.boundary_utc_s - *ref : 0.0;
    const double a_km_s2 = optional_number(shell, "accel_m_s2", "shell", source).value_or(0.0) * 1e-3;
    Eigen::Matrix<double, kLaunchSize, Eigen::Dynamic> jacobian(kLaunchSize, static_cast<Eigen::Index>(keys.size()));
    for (size_t k = 0; k < keys.size(); ++k)
      jacobian.col(static_cast<Eigen::Index>(k)) = launch_column(keys[k], dt_s, l.speed_km_s, a_km_s2);
    in.covariance = jacobian * matrix * jacobian.transpose();
    check_launch_spread(in.covariance, source);
  }
  return in;
}

ForecastSettings read_forecast_block(const json& forecast, double utc_s, const std::string& source) {
  ForecastSettings s;
  if (forecast.is_null()) {
    s.targets.push_back(earth_target(utc_s));
    return s;
  }
  if (!forecast.is_object()) throw InputError(source, "forecast must be an object {targets, wind_km_s, drag_per_km}");
  check_keys(forecast, {"targets", "wind_km_s", "drag_per_km"}, "forecast", source);
  s.priors.wind_km_s = range(forecast, "wind_km_s", s.priors.wind_km_s, source);
  s.priors.drag_per_km = range(forecast, "drag_per_km", s.priors.drag_per_km, source);
  if (forecast.contains("targets") && !forecast["targets"].is_null()) {
    const json& targets = forecast["targets"];
    if (!targets.is_array()) throw InputError(source, "forecast.targets must be a list");
    for (const json& t : targets) {
      try {
        if (t.is_string()) {
          s.targets.push_back(parse_target(t.get<std::string>(), utc_s));
        } else if (t.is_object() && t.contains("name") && t["name"].is_string()) {
          check_keys(t, {"name", "lon_deg", "lat_deg", "dist_au"}, "forecast.targets[]", source);
          // The object form goes through the same checks as the text form.
          std::ostringstream text;
          text.precision(17);
          text << t["name"].get<std::string>() << ':' << number(t, "lon_deg", "forecast.targets[]", source) << ','
               << number(t, "lat_deg", "forecast.targets[]", source) << ','
               << number(t, "dist_au", "forecast.targets[]", source);
          s.targets.push_back(parse_target(text.str(), utc_s));
        } else {
          throw std::invalid_argument("forecast.targets holds " + t.dump() +
                                      ", neither a target's text nor {name, lon_deg, lat_deg, dist_au}");
        }
      } catch (const std::invalid_argument& e) {
        throw InputError(source, e.what());
      }
    }
  }
  if (s.targets.empty()) s.targets.push_back(earth_target(utc_s));
  return s;
}

json position_json(const Target& target) {
  const Eigen::Vector3d& p = target.heeq_p_km;
  const double r = p.norm();
  return {{"lon_deg", std::atan2(p.y(), p.x()) * kDegPerRad},
          {"lat_deg", std::asin(p.z() / r) * kDegPerRad},
          {"dist_au", r / kAuKm}};
}

json arrival_entry(const TargetArrival& a, const EnsembleOptions& options) {
  return {{"target", a.target.name},
          {"hit_probability", a.hit_probability},
          {"time_p05", iso_or_null(a.time_p05)},
          {"time_p50", iso_or_null(a.time_p50)},
          {"time_p95", iso_or_null(a.time_p95)},
          {"speed_km_s_p50", number_or_null(a.speed_p50)},
          {"speed_km_s_p05", number_or_null(a.speed_p05)},
          {"speed_km_s_p95", number_or_null(a.speed_p95)},
          {"position", position_json(a.target)},
          {"members", a.members},
          {"hits", a.hits},
          {"seed", options.seed},
          {"wind_km_s", options.priors.wind_km_s},
          {"drag_per_km", options.priors.drag_per_km},
          {"caution", std::string(kArrivalCaution)}};
}

json arrival_block(const std::vector<TargetArrival>& arrivals, const EnsembleOptions& options) {
  json out = json::array();
  for (const TargetArrival& a : arrivals) out.push_back(arrival_entry(a, options));
  return out;
}

}  // namespace occulta::fit
