#include "fit/scenario.hpp"

#include <cmath>
#include <sstream>

#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
namespace {

using nlohmann::json;
using imaging::InputError;

// Reads fields of one JSON object, naming the field's full path in every complaint.
class Fields {
 public:
  Fields(const json& object, std::string where, const std::string& file) : object_(object), where_(std::move(where)), file_(file) {
    if (!object_.is_object()) fail((where_.empty() ? std::string("the file") : "`" + where_ + "`") + " must be a JSON object");
  }

  bool has(const char* key) const { return object_.contains(key); }

  double number(const char* key, double lo, double hi) const {
    if (!has(key)) fail(named(key) + " is missing");
    return checked(key, lo, hi);
  }
  double number(const char* key, double lo, double hi, double fallback) const {
    return has(key) ? checked(key, lo, hi) : fallback;
  }
  int integer(const char* key, int lo, int hi, int fallback) const {
    if (!has(key)) return fallback;
    const json& v = object_.at(key);
    if (!v.is_number_integer()) fail(named(key) + " must be a whole number");
    const long long n = v.get<long long>();
    if (n < lo || n > hi) fail(named(key) + " is " + std::to_string(n) + ", outside " + std::to_string(lo) + "–" + std::to_string(hi));
    return int(n);
  }
  std::string text(const char* key, const std::string& fallback) const {
    if (!has(key)) return fallback;
    const json& v = object_.at(key);
    if (!v.is_string()) fail(named(key) + " must be a string");
    return v.get<std::string>();
  }
  std::string text(const char* key) const {
    if (!has(key)) fail(named(key) + " is missing");
    return text(key, "");
  }
  double time(const char* key) const {
    const std::string value = text(key);
    try {
      return imaging::utc_seconds_from_iso(value);
    } catch (const std::invalid_argument& e) {
      fail(named(key) + " is \"" + value + "\" — " + e.what());
    }
  }
  bool logical(const char* key, bool fallback) const {
    if (!has(key)) return fallback;
    if (!object_.at(key).is_boolean()) fail(named(key) + " must be true or false");
    return object_.at(key).get<bool>();
  }
  Fields child(const char* key) const { return Fields(object_.at(key), path(key), file_); }
  const json& raw(const char* key) const { return object_.at(key); }
  std::string path(const char* key) const { return where_.empty() ? key : where_ + "." + key; }
  std::string named(const char* key) const { return "`" + path(key) + "`"; }  // for messages
  // Unknown keys are refused, with the nearest known one (fit/strict_json.hpp).
  void known(std::initializer_list<std::string_view> keys) const { check_keys(object_, keys, where_, file_); }

  // problem: a sentence that already names the field (use path()).
  [[noreturn]] void fail(const std::string& problem) const { throw InputError(file_, problem); }

 private:
  double checked(const char* key, double lo, double hi) const {
    const json& v = object_.at(key);
    if (!v.is_number()) fail(named(key) + " must be a number");
    const double x = v.get<double>();
    if (!std::isfinite(x) || x < lo || x > hi) {
      std::ostringstream s;
      s << named(key) << " is " << x << ", outside " << lo << " to " << hi;
      fail(s.str());
    }
    return x;
  }
  const json& object_;
  std::string where_;
  const std::string& file_;
};

// One CME's shell block (`shell`, or an entry of `shells`); the observers' clocks must be
// read already (the apex law is checked at every frame of every view).
ScenarioShell read_shell(const Fields& sh, const Scenario& s) {
  ScenarioShell shell;
  sh.known({"lon_deg", "lat_deg", "tilt_deg", "half_angle_deg", "aspect_ratio", "density_cm3", "sheath_fraction", "apex"});
  shell.lon_deg = sh.number("lon_deg", -180.0, 360.0);
  shell.lat_deg = sh.number("lat_deg", -90.0, 90.0);
  shell.tilt_deg = sh.number("tilt_deg", -180.0, 180.0, 0.0);
  shell.half_angle_deg = sh.number("half_angle_deg", 0.0, 80.0);
  shell.aspect_ratio = sh.number("aspect_ratio", 0.01, 0.9);
  if (shell.half_angle_deg * kRadPerDeg + std::asin(shell.aspect_ratio) >= kPi / 2)
    sh.fail(sh.named("half_angle_deg") + " + asin(aspect_ratio) must stay below 90°");
  shell.density_cm3 = sh.number("density_cm3", 0.0, 1e12, shell.density_cm3);
  shell.sheath_fraction = sh.number("sheath_fraction", 0.005, 0.5, shell.sheath_fraction);
  if (!sh.has("apex")) sh.fail(sh.named("apex") + " is missing");
  const Fields apex = sh.child("apex");
  apex.known({"time", "height_rs", "speed_km_s", "accel_m_s2"});
  shell.apex.ref_time_s = apex.time("time");
  shell.apex.height_rs = apex.number("height_rs", 1.0, 300.0);
  shell.apex.speed_km_s = apex.number("speed_km_s", 50.0, 5000.0);
  shell.apex.accel_m_s2 = apex.number("accel_m_s2", -1000.0, 1000.0, 0.0);
  // Before launch the CME is not drawn; once launched it may not fall back below the
  // launch height (a law that turns round would make it vanish in mid-flight).
  bool ever = false;
  for (int v = 0; v < int(s.observers.size()); ++v) {
    bool launched = false;
    for (int i = 0; i < s.observers[size_t(v)].frames; ++i) {
      const bool now = shell.launched(s.frame_time(v, i));
      if (launched && !now)
        apex.fail("`" + sh.path("apex") + "` brings the apex back below 0.1 R☉ at frame " + std::to_string(i) +
                  (s.observers.size() > 1 ? " of " + s.observers[size_t(v)].name : std::string()) +
                  "; start the law later or higher");
      launched = launched || now;
    }
    ever = ever || launched;
  }
  if (!ever) apex.fail("`" + sh.path("apex") + "` keeps the apex below 0.1 R☉ at every frame: the CME would never be drawn");
  return shell;
}

// A point's place on the sky: {"pa_deg", "height_rs"}.
void read_place(const Fields& f, double& pa_deg, double& height_rs) {
  f.known({"pa_deg", "height_rs"});
  pa_deg = f.number("pa_deg", -360.0, 360.0);
  height_rs = f.number("height_rs", 0.0, 1000.0);
}

}  // namespace

bool Scenario::shared_clock() const {
  for (const auto& o : observers)
    if (o.start_offset_s != 0.0 || o.cadence_s != cadence_s || o.frames != frames) return false;
  return true;
}

double ApexLaw::height_at(double t_s) const {
  const double dt = t_s - ref_time_s;
  // km/s → R☉/s and m/s² → R☉/s².
  return height_rs + speed_km_s / kSolarRadiusKm * dt + 0.5 * accel_m_s2 / (1000.0 * kSolarRadiusKm) * dt * dt;
}

bool ScenarioShell::launched(double t_s) const { return apex.height_at(t_s) > kLaunchHeightRs; }

double ApexLaw::speed_at(double t_s) const { return speed_km_s + accel_m_s2 / 1000.0 * (t_s - ref_time_s); }

ShellParams ScenarioShell::at(double t_s) const {
  ShellParams p;
  p.lon = lon_deg * kRadPerDeg;
  p.lat = lat_deg * kRadPerDeg;
  p.tilt = tilt_deg * kRadPerDeg;
  p.apex_height_rs = apex.height_at(t_s);
  p.half_angle = half_angle_deg * kRadPerDeg;
  p.aspect_ratio = aspect_ratio;
  return p;
}

Scenario read_scenario(const std::filesystem::path& path) {
  const std::string file = path.string();
  const json doc = read_json_file(path);

  const Fields top(doc, "", file);
  require_kind(doc, "scenario", file, "a scenario file is needed here");
  top.known({"schema", "id", "start", "cadence_s", "frames", "exposure_s", "jitter_px", "cosmic_rays_per_frame", "seed",
             "image", "observers", "shell", "shells", "background", "detector", "missing_blocks",
             "point_sources"});
  if (top.has("schema") && top.raw("schema") != "occulta.scenario/1")
    top.fail("`schema` is " + top.raw("schema").dump() + " — a scenario file's is \"occulta.scenario/1\"");
  Scenario s;
  s.source = path;
  s.id = top.text("id");
  check_safe_name(s.id, "id", file);
  s.start_s = top.time("start");
  s.cadence_s = top.number("cadence_s", 1.0, 86400.0);
  s.frames = top.integer("frames", 3, 1000, 16);
  s.exposure_s = top.number("exposure_s", 1e-3, 3600.0, 6.0);
  s.jitter_px = top.number("jitter_px", 0.0, 20.0, 0.0);
  s.cosmic_rays_per_frame = top.integer("cosmic_rays_per_frame", 0, 100000, 0);
  if (top.has("seed")) {
    if (!top.raw("seed").is_number_unsigned()) top.fail("`seed` must be a non-negative whole number");
    s.seed = top.raw("seed").get<std::uint64_t>();
  }

  if (!top.has("image")) top.fail("`image` is missing");
  const Fields image = top.child("image");
  image.known({"size_px", "half_width_rs", "occulter_rs"});
  s.size_px = image.integer("size_px", 16, 8192, 512);
  s.half_width_rs = image.number("half_width_rs", 1.5, 300.0);
  if (!image.has("occulter_rs") || !image.raw("occulter_rs").is_array() || image.raw("occulter_rs").size() != 2 ||
      !image.raw("occulter_rs")[0].is_number() || !image.raw("occulter_rs")[1].is_number())
    image.fail(image.named("occulter_rs") + " must be [inner, outer] in R☉");
  s.occulter_inner_rs = image.raw("occulter_rs")[0].get<double>();
  s.occulter_outer_rs = image.raw("occulter_rs")[1].get<double>();
  if (!(s.occulter_inner_rs >= 1.0 && s.occulter_outer_rs > s.occulter_inner_rs))
    image.fail(image.named("occulter_rs") + " must have 1 ≤ inner < outer");

  if (!top.has("observers") || !top.raw("observers").is_array() || top.raw("observers").empty())
    top.fail("`observers` must be a non-empty list");
  for (size_t i = 0; i < top.raw("observers").size(); ++i) {
    const Fields o(top.raw("observers")[i], "observers[" + std::to_string(i) + "]", file);
    o.known({"name", "lon_deg", "lat_deg", "dist_au", "roll_deg", "start_offset_s", "cadence_s", "frames"});
    ScenarioObserver ob;
    ob.name = o.text("name");
    check_safe_name(ob.name, o.path("name"), file);
    for (const auto& other : s.observers)
      if (other.name == ob.name) o.fail(o.named("name") + " \"" + ob.name + "\" is used twice");
    ob.lon_deg = o.number("lon_deg", -180.0, 360.0);
    ob.lat_deg = o.number("lat_deg", -90.0, 90.0);
    ob.dist_au = o.number("dist_au", 0.05, 100.0);
    ob.roll_deg = o.number("roll_deg", -360.0, 360.0, 0.0);
    ob.start_offset_s = o.number("start_offset_s", -86400.0, 86400.0, 0.0);
    ob.cadence_s = o.number("cadence_s", 1.0, 86400.0, s.cadence_s);
    ob.frames = o.integer("frames", 3, 1000, s.frames);
    s.observers.push_back(ob);
  }

  if (top.has("shell") == top.has("shells"))
    top.fail(top.has("shell") ? "give `shell` (one CME) or `shells` (a list), not both"
                              : "`shell` is missing (or `shells`, a list of them)");
  if (top.has("shell")) {
    s.shells.push_back(read_shell(top.child("shell"), s));
  } else {
    if (!top.raw("shells").is_array() || top.raw("shells").empty()) top.fail("`shells` must be a non-empty list");
    for (size_t i = 0; i < top.raw("shells").size(); ++i)
      s.shells.push_back(read_shell(Fields(top.raw("shells")[i], "shells[" + std::to_string(i) + "]", file), s));
  }

  if (top.has("background")) {
    const Fields bg = top.child("background");
    bg.known({"k_corona", "f_corona"});
    s.background.k_corona = bg.text("k_corona", s.background.k_corona);
    if (s.background.k_corona != "saito" && s.background.k_corona != "baumbach-allen" && s.background.k_corona != "none")
      bg.fail(bg.named("k_corona") + " is \"" + s.background.k_corona + "\" — use \"saito\", \"baumbach-allen\" or \"none\"");
    s.background.f_corona = bg.number("f_corona", 0.0, 100.0, s.background.f_corona);
  }

  if (top.has("detector")) {
    const Fields d = top.child("detector");
    d.known({"dn_per_s_per_bsun", "electrons_per_dn", "read_noise_dn", "pixels", "compress"});
    s.detector.dn_per_s_per_bsun = d.number("dn_per_s_per_bsun", 1.0, 1e20, s.detector.dn_per_s_per_bsun);
    s.detector.electrons_per_dn = d.number("electrons_per_dn", 0.0, 1e6, s.detector.electrons_per_dn);
    s.detector.read_noise_dn = d.number("read_noise_dn", 0.0, 1e6, s.detector.read_noise_dn);
    s.detector.pixels = d.text("pixels", s.detector.pixels);
    if (s.detector.pixels != "int16" && s.detector.pixels != "float32")
      d.fail(d.named("pixels") + " is \"" + s.detector.pixels + "\" — use \"int16\" or \"float32\"");
    s.detector.compress = d.logical("compress", s.detector.compress);
  }

  if (top.has("missing_blocks")) {
    if (!top.raw("missing_blocks").is_array()) top.fail("`missing_blocks` must be a list");
    for (size_t i = 0; i < top.raw("missing_blocks").size(); ++i) {
      const Fields b(top.raw("missing_blocks")[i], "missing_blocks[" + std::to_string(i) + "]", file);
      b.known({"view", "frame", "x", "y", "width", "height"});
      MissingBlock m;
      m.view = b.text("view");
      bool known = false;
      for (const auto& o : s.observers) known = known || o.name == m.view;
      if (!known) b.fail(b.named("view") + " \"" + m.view + "\" is not one of the observers");
      int frames = s.frames;
      for (const auto& o : s.observers)
        if (o.name == m.view) frames = o.frames;
      m.frame = b.integer("frame", 0, frames - 1, 0);
      m.x = b.integer("x", 0, s.size_px - 1, 0);
      m.y = b.integer("y", 0, s.size_px - 1, 0);
      m.width = b.integer("width", 1, s.size_px, 32);
      m.height = b.integer("height", 1, s.size_px, 32);
      s.missing_blocks.push_back(m);
    }
  }

  if (top.has("point_sources")) {
    if (!top.raw("point_sources").is_array()) top.fail("`point_sources` must be a list");
    for (size_t i = 0; i < top.raw("point_sources").size(); ++i) {
      const Fields p(top.raw("point_sources")[i], "point_sources[" + std::to_string(i) + "]", file);
      p.known({"view", "from", "to", "brightness_bsun"});
      PointSource point;
      point.view = p.text("view");
      bool known = false;
      for (const auto& o : s.observers) known = known || o.name == point.view;
      if (!known) p.fail(p.named("view") + " \"" + point.view + "\" is not one of the observers");
      if (!p.has("from") || !p.has("to")) p.fail(p.named(p.has("from") ? "to" : "from") + " is missing");
      read_place(p.child("from"), point.from_pa_deg, point.from_height_rs);
      read_place(p.child("to"), point.to_pa_deg, point.to_height_rs);
      point.brightness_bsun = p.number("brightness_bsun", 0.0, 1.0);
      s.point_sources.push_back(point);
    }
  }
  return s;
}

}  // namespace occulta::fit
