#include "app/forecast.hpp"

#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <ostream>
#include <set>
#include <sstream>
#include <stdexcept>

#include "app/arrival_picture.hpp"
#include "fit/event.hpp"
#include "app/provenance.hpp"
#include "app/output_set.hpp"
#include "fit/arrival_json.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;

namespace {

// "LO,HI" with LO ≤ HI inside the allowed range, for --wind and --drag.
std::array<double, 2> parse_range(const std::string& text, const char* option, const char* unit,
                                  const std::array<double, 2>& allowed) {
  const size_t comma = text.find(',');
  std::array<double, 2> r{0.0, 0.0};
  bool ok = comma != std::string::npos;
  for (int i = 0; ok && i < 2; ++i) {
    const char* first = text.data() + (i == 0 ? 0 : comma + 1);
    const char* last = text.data() + (i == 0 ? comma : text.size());
    const auto [ptr, ec] = std::from_chars(first, last, r[i]);
    ok = ec == std::errc() && ptr == last && std::isfinite(r[i]);
  }
  if (!ok) throw imaging::InputError(option, "\"" + text + "\" is not LO,HI — two numbers in " + unit + ", e.g. " +
                                                 (std::string(option) == "--wind" ? "300,600" : "1e-8,2e-7"));
  if (!(r[0] >= allowed[0] && r[0] <= r[1] && r[1] <= allowed[1])) {
    std::ostringstream range;
    range << allowed[0] << " ≤ LO ≤ HI ≤ " << allowed[1] << " " << unit;
    throw imaging::InputError(option, "\"" + text + "\" is outside the allowed range: it needs " + range.str());
  }
  return r;
}

std::string minutes(const json& iso) { return iso.is_string() ? iso.get<std::string>().substr(0, 16) : "-"; }

}  // namespace

json run_forecast(const ForecastOptions& o, std::ostream& err) {
  const auto started = std::chrono::steady_clock::now();
  if (fs::is_directory(o.result))
    throw imaging::InputError(o.result, "is a folder; `forecast` needs the result.json that `occulta measure` wrote");
  const json result = fit::read_json_file(o.result);
  // No arrival from a shell whose direction the data do not fix, or whose fit failed
  // (fit/measurement.hpp: measure withholds it too); one resting on an assumed direction
  // says so (issue 11).
  if (result.is_object() && result.contains("shell") && result["shell"].is_object()) {
    const json& shell = result["shell"];
    if (shell.value("direction_basis", std::string()) == "none")
      throw imaging::InputError(o.result, "has a shell whose direction the data do not constrain (direction_basis "
                                          "\"none\"); no arrival estimate is made from it");
    if (shell.value("status", std::string("ok")) != "ok")
      throw imaging::InputError(o.result, "has a shell whose fit failed (status \"" + shell.value("status", std::string()) +
                                              "\", see its problems); no arrival estimate is made from it");
    if (shell.value("direction_basis", std::string()) == "source region")
      err << "note: this estimate is conditional: the shell's direction in " << o.result
          << " is the event's source region, assumed, not measured (one view).\n";
  }
  const fit::ArrivalInput input = fit::read_arrival_input(result, o.result);
  const double utc_s = input.launch.boundary_utc_s;

  fit::ForecastSettings settings;
  if (!o.event.empty()) {
    const fit::Event event = fit::read_event(o.event);  // strict: the whole file is checked, not only its block
    settings = fit::read_forecast_block(event.forecast, utc_s, o.event);
  } else {
    settings = fit::read_forecast_block(json(), utc_s, o.result);
  }
  if (!o.targets.empty()) {
    settings.targets.clear();
    for (const std::string& text : o.targets) {
      try {
        settings.targets.push_back(fit::parse_target(text, utc_s));
      } catch (const std::invalid_argument& e) {
        throw imaging::InputError("--target", e.what());
      }
    }
  }
  std::set<std::string> names;
  for (const fit::Target& t : settings.targets)
    if (!names.insert(t.name).second)
      throw imaging::InputError("--target", "two targets are named " + t.name + "; give each its own name");
  if (!o.wind.empty()) settings.priors.wind_km_s = parse_range(o.wind, "--wind", "km/s", fit::kWindRangeKmS);
  if (!o.drag.empty()) settings.priors.drag_per_km = parse_range(o.drag, "--drag", "per km", fit::kDragRangePerKm);
  if (input.spread_from == "none")
    err << "occulta: note: " << o.result
        << " gives no uncertainty for the shell (no shell.covariance or shell.sigma): the spread is that of the wind "
           "and drag ranges alone.\n";

  fit::EnsembleOptions ensemble;
  ensemble.members = o.members;
  ensemble.seed = o.seed;
  ensemble.priors = settings.priors;
  const std::vector<fit::TargetArrival> arrivals =
      fit::forecast_arrivals(input.launch, input.covariance, settings.targets, ensemble);

  json doc = {{"schema", "occulta.arrival/1"},
              {"event_id", input.event_id},
              {"result", o.result},
              {"model", "drag-based model (Vrsnak et al. 2013) from 21.5 solar radii, self-similar shell"},
              {"boundary_time", imaging::iso_from_utc_seconds(utc_s, 3)},
              {"spread_from", input.spread_from},
              {"members", o.members},
              {"seed", o.seed},
              {"caution", std::string(fit::kArrivalCaution)},
              {"arrival", fit::arrival_block(arrivals, ensemble)}};

  std::vector<fs::path> inputs = {o.result};
  if (!o.event.empty()) inputs.emplace_back(o.event);
  const json options = {{"targets", o.targets},          {"members", o.members},
                        {"seed", o.seed},                {"wind", o.wind.empty() ? json(nullptr) : json(o.wind)},
                        {"drag", o.drag.empty() ? json(nullptr) : json(o.drag)},
                        {"event", o.event.empty() ? json(nullptr) : json(o.event)}};
  doc["provenance"] = provenance(inputs, options,
                                 std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count());
  if (!o.out_dir.empty()) {
    fs::create_directories(o.out_dir);
    // The previous run's arrival.json goes first, then its histograms; this run's
    // arrival.json is written last (app/output_set.hpp).
    retire_previous_outputs(o.out_dir, OutputNames{"arrival.json", {"arrival_*.png"}, {}}, {});
    for (const fit::TargetArrival& a : arrivals)
      write_arrival_histogram(fs::path(o.out_dir) / ("arrival_" + a.target.name + ".png"), a, utc_s);
    fit::write_json_file(fs::path(o.out_dir) / "arrival.json", doc);
  }
  return doc;
}

void print_arrival_table(const json& arrival, std::ostream& out) {
  char line[256];
  std::snprintf(line, sizeof line, "%-12s %7s %6s %8s %6s  %-17s %-17s %-17s %9s\n", "target", "lon", "lat", "dist",
                "hit", "arrival p05", "p50", "p95", "speed p50");
  out << line;
  for (const json& a : arrival) {
    const json& p = a["position"];
    const json& speed = a["speed_km_s_p50"];
    std::snprintf(line, sizeof line, "%-12s %6.1f° %5.1f° %5.3f au %5.1f%%  %-17s %-17s %-17s %9s\n",
                  a["target"].get<std::string>().c_str(), p["lon_deg"].get<double>(), p["lat_deg"].get<double>(),
                  p["dist_au"].get<double>(), 100.0 * a["hit_probability"].get<double>(),
                  minutes(a["time_p05"]).c_str(), minutes(a["time_p50"]).c_str(), minutes(a["time_p95"]).c_str(),
                  speed.is_number() ? (std::to_string(static_cast<int>(std::lround(speed.get<double>()))) + " km/s").c_str()
                                    : "-");
    out << line;
  }
  out << "Times UTC; percentiles over the members that reach the target.\n"
      << "Caution: " << fit::kArrivalCaution << '\n';
}

int forecast(const ForecastOptions& o, std::ostream& out, std::ostream& err) {
  const json doc = run_forecast(o, err);
  const json& first = doc["arrival"].front();
  out << "Arrival estimate for event " << (doc["event_id"].get<std::string>().empty() ? "(unnamed)" : doc["event_id"].get<std::string>())
      << " from " << o.result << ": drag-based model (Vršnak et al. 2013) from 21.5 R☉ at "
      << doc["boundary_time"].get<std::string>() << " UTC,\n"
      << o.members << " members (seed " << o.seed << "), wind " << first["wind_km_s"][0].get<double>() << "–"
      << first["wind_km_s"][1].get<double>() << " km/s and drag " << first["drag_per_km"][0].get<double>() << "–"
      << first["drag_per_km"][1].get<double>() << " per km (uniform), launch spread "
      << (doc["spread_from"] == "covariance" ? "from the shell fit's covariance"
          : doc["spread_from"] == "sigma"    ? "from the shell fit's sigma (independent)"
                                             : "none (the shell gives no uncertainty)")
      << ".\n\n";
  print_arrival_table(doc["arrival"], out);
  if (!o.out_dir.empty()) out << "Wrote " << (fs::path(o.out_dir) / "arrival.json").string() << " and a histogram per target.\n";
  return 0;
}

}  // namespace occulta::app
