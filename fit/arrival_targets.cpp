// fit/arrival_targets.cpp — where the targets are: Earth from a low-precision solar
// ephemeris, L1 sunward of it, and points the analyst names (conventions in fit/arrival.hpp).
#include <cctype>
#include <charconv>
#include <cmath>
#include <stdexcept>
#include <string>

#include "fit/arrival.hpp"

namespace occulta::fit {

namespace {

constexpr double kJdAt2000Utc = 2451544.5;  // JD of 2000-01-01T00:00:00 (common practice)

Eigen::Vector3d heeq_from_stonyhurst(double lon, double lat, double distance_km) {
  return distance_km * Eigen::Vector3d(std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat));
}

std::string quoted(std::string_view text) { return "\"" + std::string(text) + "\""; }

double parse_number(std::string_view text, std::string_view whole, const char* what) {
  double value = 0.0;
  const char* end = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(text.data(), end, value);
  if (ec != std::errc() || ptr != end || !std::isfinite(value))
    throw std::invalid_argument("target " + quoted(whole) + ": the " + what + " " + quoted(text) +
                                " is not a number (write NAME:LON,LAT,AU, e.g. probe:-30,2,0.72)");
  return value;
}

}  // namespace

EarthPosition earth_position(double utc_s) {
  // n: days from J2000.0 (TT − UTC, about a minute, is below this ephemeris' precision).
  const double jd = kJdAt2000Utc + utc_s / 86400.0;
  const double n = jd - 2451545.0;
  // Astronomical Almanac, low-precision formulas for the Sun (from memory), degrees:
  //   L = 280.460 + 0.9856474 n (mean longitude),  g = 357.528 + 0.9856003 n (mean anomaly),
  //   λ = L + 1.915 sin g + 0.020 sin 2g (ecliptic longitude of the Sun seen from Earth),
  //   R = 1.00014 − 0.01671 cos g − 0.00014 cos 2g (distance, au).
  const double g = (357.528 + 0.9856003 * n) * kRadPerDeg;
  const double lambda = (280.460 + 0.9856474 * n) * kRadPerDeg + (1.915 * std::sin(g) + 0.020 * std::sin(2.0 * g)) * kRadPerDeg;
  const double r_au = 1.00014 - 0.01671 * std::cos(g) - 0.00014 * std::cos(2.0 * g);
  // Carrington's elements of the solar equator (Meeus, Astronomical Algorithms ch. 29,
  // from memory): inclination I = 7.25° to the ecliptic, ascending node
  // K = 73.6667° + 1.3958333° T, T in Julian centuries from JD 2396758.0 (1850.0).
  // Earth's heliographic latitude is B₀ = asin(sin(λ − K) sin I).
  const double inclination = 7.25 * kRadPerDeg;
  const double node = (73.6667 + 1.3958333 * (jd - 2396758.0) / 36525.0) * kRadPerDeg;
  EarthPosition earth;
  earth.b0 = std::asin(std::sin(lambda - node) * std::sin(inclination));
  earth.distance_km = r_au * kAuKm;
  return earth;
}

Target earth_target(double utc_s) {
  const EarthPosition earth = earth_position(utc_s);
  return {"earth", heeq_from_stonyhurst(0.0, earth.b0, earth.distance_km)};
}

Target l1_target(double utc_s) {
  const EarthPosition earth = earth_position(utc_s);
  return {"l1", heeq_from_stonyhurst(0.0, earth.b0, earth.distance_km - kL1SunwardOfEarthKm)};
}

Target point_target(std::string name, double lon_deg, double lat_deg, double dist_au) {
  return {std::move(name), heeq_from_stonyhurst(lon_deg * kRadPerDeg, lat_deg * kRadPerDeg, dist_au * kAuKm)};
}

Target parse_target(std::string_view text, double utc_s) {
  if (text == "earth") return earth_target(utc_s);
  if (text == "l1") return l1_target(utc_s);
  const size_t colon = text.find(':');
  if (colon == std::string_view::npos)
    throw std::invalid_argument("target " + quoted(text) +
                                " is not one occulta knows: write earth, l1, or NAME:LON,LAT,AU (e.g. probe:-30,2,0.72)");
  const std::string_view name = text.substr(0, colon);
  if (name.empty())
    throw std::invalid_argument("target " + quoted(text) + " has no name before the colon");
  for (const char c : name)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_')
      throw std::invalid_argument("target " + quoted(text) + ": the name " + quoted(name) +
                                  " may hold only letters, digits, '-' and '_'");
  if (name == "earth" || name == "l1")
    throw std::invalid_argument("target " + quoted(text) + ": " + std::string(name) +
                                " is a built-in target, so a position of one's own needs another name");
  std::string_view rest = text.substr(colon + 1);
  std::string_view fields[3];
  for (int i = 0; i < 3; ++i) {
    const size_t comma = rest.find(',');
    if ((i < 2) == (comma == std::string_view::npos))
      throw std::invalid_argument("target " + quoted(text) +
                                  " needs three numbers after the colon, LON,LAT,AU (e.g. probe:-30,2,0.72)");
    fields[i] = rest.substr(0, comma);
    rest = i < 2 ? rest.substr(comma + 1) : std::string_view();
  }
  const double lon = parse_number(fields[0], text, "longitude");
  const double lat = parse_number(fields[1], text, "latitude");
  const double au = parse_number(fields[2], text, "distance");
  if (std::abs(lat) > 90.0)
    throw std::invalid_argument("target " + quoted(text) + ": latitude " + std::string(fields[1]) +
                                "° lies outside -90° to 90°");
  // The model starts at the inner boundary (21.5 R☉ ≈ 0.1 au), so a target must lie beyond it.
  const double boundary_au = kBoundaryHeightRs * kSolarRadiusKm / kAuKm * 1.001;
  if (!(au > boundary_au && au <= 100.0))
    throw std::invalid_argument("target " + quoted(text) + ": distance " + std::string(fields[2]) +
                                " au must lie beyond the inner boundary (21.5 solar radii, about 0.1 au) and within 100 au");
  return point_target(std::string(name), lon, lat, au);
}

}  // namespace occulta::fit
