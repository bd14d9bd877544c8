// The analyst's window worked end to end on the committed sample: a scripted session of
// clicks and a fit recovers the sample's truth, its export is what `measure --track`
// writes, and in a real window under Xvfb, mouse clicks (xdotool) mark points that a saved
// track file holds, and undo takes the last one away.
#include <chrono>
#include <cmath>
#include <numbers>
#include <random>
#include <thread>

#include <doctest/doctest.h>

#include "fit/json_file.hpp"
#include "fit/shell.hpp"
#include "fit/track.hpp"
#include "imaging/constants.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"
#include "viewer/session.hpp"
#include "viewer/ui.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;
using occulta::test::slurp;
constexpr double kRad = std::numbers::pi / 180.0;

std::string occulta_cmd() { return shell_quote(occulta::test::occulta_binary().string()); }
fs::path sample_event() { return occulta::test::source_path("sample_frames/sample-2031-03-14.event.json"); }
json sample_truth() { return occulta::fit::read_json_file(occulta::test::source_path("sample_frames/sample-2031-03-14.truth.json")); }

double angle_between_deg(double a, double b) { return std::abs(std::remainder(a - b, 360.0)); }

// Where an analyst would click: five points along the truth's outline inside the field
// (3–14 R☉), from flank to flank, on every other frame of each view, 0.2 R☉ off it
// (Gaussian, seeded) — as tests/app/shell_measure_test.cpp's analyst does for measure.
json clicks_on_truth(const json& truth) {
  const json& t = truth.at("shell");
  const occulta::fit::ApexLaw law{occulta::imaging::utc_seconds_from_iso(t.at("ref_time").get<std::string>()),
                                  t.at("apex_height_rs").get<double>(), t.at("speed_km_s").get<double>(),
                                  t.at("accel_m_s2").get<double>()};
  std::mt19937 rng(5);
  std::normal_distribution<double> noise(0.0, 0.2);
  json script = json::array();
  for (const json& o : truth.at("observers")) {
    const auto observer = occulta::imaging::observer_from_degrees(o.at("lon_deg").get<double>(), o.at("lat_deg").get<double>(),
                                                                  o.at("dist_au").get<double>() * occulta::kAuKm);
    for (std::size_t k = 1; k < truth.at("frames").size(); k += 2) {
      const std::string time = truth["frames"][k].at("time").get<std::string>();
      occulta::fit::ShellParams p;
      p.lon = t.at("lon_deg").get<double>() * kRad;
      p.lat = t.at("lat_deg").get<double>() * kRad;
      p.tilt = t.at("tilt_deg").get<double>() * kRad;
      p.half_angle = t.at("half_angle_deg").get<double>() * kRad;
      p.aspect_ratio = t.at("aspect_ratio").get<double>();
      p.apex_height_rs = law.height_at(occulta::imaging::utc_seconds_from_iso(time));
      const auto outline = occulta::fit::sky_outline(occulta::fit::make_mesh(p, {24, 120, 72}), p, observer, 1.0);
      std::vector<std::pair<double, double>> seen;
      for (std::size_t b = 0; b < outline.max_height_rs.size(); ++b)
        if (outline.max_height_rs[b] >= 3.0 && outline.max_height_rs[b] <= 14.0) seen.emplace_back(b + 0.5, outline.max_height_rs[b]);
      if (seen.size() < 10) continue;
      for (int i = 0; i < 5; ++i) {
        const auto& [pa, h] = seen[(seen.size() - 1) * std::size_t(i) / 4];
        script.push_back({{"do", "point"}, {"view", o.at("name")}, {"time", time}, {"pa_deg", pa}, {"height_rs", h + noise(rng)}});
      }
    }
  }
  return script;
}

json without_provenance(json result) {
  result.erase("provenance");
  return result;
}

}  // namespace

TEST_CASE("window: a scripted session on the sample recovers its truth, and its export is measure --track's") {
  const fs::path dir = occulta::test::scratch_dir("window_session");
  const json truth = sample_truth();
  json script = clicks_on_truth(truth);
  const std::size_t clicks = script.size();
  REQUIRE(clicks >= 40);
  script.push_back({{"do", "fit"}});
  script.push_back({{"do", "save_track"}, {"path", (dir / "session.track.json").string()}});
  script.push_back({{"do", "export"}, {"dir", (dir / "exported").string()}});
  occulta::test::spit(dir / "session.json", script.dump(1));

  const auto started = std::chrono::steady_clock::now();
  const auto session = run_command(occulta_cmd() + " view " + shell_quote(sample_event().string()) + " --script " +
                                   shell_quote((dir / "session.json").string()) + " --snapshot " +
                                   shell_quote((dir / "session.png").string()));
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  INFO(session.output);
  REQUIRE(session.exit_code == 0);
  MESSAGE("the scripted session (", clicks, " points, a fit, save, export) took ", seconds, " s end to end");

  // Every click is a point of the saved track, on its frame.
  const occulta::fit::Track track = occulta::fit::read_track(dir / "session.track.json");
  CHECK(track.points.size() == clicks);
  for (const auto& p : track.points) CHECK(p.origin == "analyst");

  // The fit recovers the truth within measure's tolerances (tests/app/shell_measure_test.cpp:
  // direction within 4°, apex speed within 7 %, face-on width within 8°).
  const json result = occulta::fit::read_json_file(dir / "exported" / "result.json");
  const json& s = result.at("shell");
  const json& t = truth.at("shell");
  CAPTURE(s.dump());
  CHECK(angle_between_deg(s["lon_deg"].get<double>(), t["lon_deg"].get<double>()) <= 4.0);
  CHECK(std::abs(s["lat_deg"].get<double>() - t["lat_deg"].get<double>()) <= 4.0);
  const double t0 = occulta::imaging::utc_seconds_from_iso(t["ref_time"].get<std::string>());
  const double t_ref = occulta::imaging::utc_seconds_from_iso(s["ref_time"].get<std::string>());
  const double speed = t["speed_km_s"].get<double>() + 1e-3 * t["accel_m_s2"].get<double>() * (t_ref - t0);
  CHECK(s["speed_km_s"].get<double>() == doctest::Approx(speed).epsilon(0.07));
  const double face_on = 2.0 * (t["half_angle_deg"].get<double>() + std::asin(t["aspect_ratio"].get<double>()) / kRad);
  CHECK(std::abs(s["face_on_width_deg"].get<double>() - face_on) <= 8.0);

  // The export is what `measure --track` writes from the same points, apart from provenance.
  const auto measured = run_command(occulta_cmd() + " measure --quiet " + shell_quote(sample_event().string()) + " --track " +
                                    shell_quote((dir / "session.track.json").string()) + " --out " +
                                    shell_quote((dir / "measured").string()));
  INFO(measured.output);
  const json by_measure = occulta::fit::read_json_file(dir / "measured" / "result.json");
  CHECK(without_provenance(result) == without_provenance(by_measure));
  CHECK(slurp(dir / "exported" / "track.json") == slurp(dir / "measured" / "track.json"));
  for (const char* picture : {"time_height.png", "front.png", "shell.png"})
    for (const char* view : {"east", "west"}) CHECK(fs::exists(dir / "exported" / view / picture));
  // result.csv: the same row but for the provenance's columns.
  const auto rows = [](const std::string& text) {
    std::vector<std::string> lines;
    std::size_t at = 0;
    while (at < text.size()) {
      const std::size_t end = text.find('\n', at);
      lines.push_back(text.substr(at, end - at));
      at = end == std::string::npos ? text.size() : end + 1;
    }
    return lines;
  };
  const auto a = rows(slurp(dir / "exported" / "result.csv")), b = rows(slurp(dir / "measured" / "result.csv"));
  REQUIRE(a.size() == b.size());
  CHECK(a.front() == b.front());  // the header
}

namespace {

// Polls `ready` every 50 ms, at most `limit_s` seconds (a bound against hanging, not a
// timing the result depends on).
template <class F>
bool wait_for(F ready, double limit_s) {
  const auto end = std::chrono::steady_clock::now() + std::chrono::duration<double>(limit_s);
  while (std::chrono::steady_clock::now() < end) {
    if (ready()) return true;
    std::this_thread::sleep_for(std::chrono::milliseconds(50));
  }
  return ready();
}

}  // namespace

TEST_CASE("window: under Xvfb, mouse clicks mark points a saved track holds, and undo takes the last away") {
  for (const char* tool : {"Xvfb", "xdotool"})
    if (run_command(std::string("command -v ") + tool).exit_code != 0) {
      MESSAGE("skipped: ", tool, " is missing (Debian's xvfb, xdotool; ./bootstrap installs them)");
      return;
    }
  const fs::path dir = occulta::test::scratch_dir("window_clicks");
  const std::string d = shell_quote(dir.string());
  // Where three sky places lie in the 960 × 600 window: the same layout code, headless.
  std::vector<occulta::viewer::ViewPictures> views;
  for (const char* name : {"east", "west"}) {
    occulta::viewer::ViewSource source;
    source.name = name;
    for (const auto& entry : fs::directory_iterator(occulta::test::source_path("sample_frames") / name))
      if (entry.path().extension() == ".fits") source.files.push_back(entry.path());
    source.options.occulter_rs = std::make_pair(2.5, 14.5);
    views.push_back(occulta::viewer::load_view(source));
  }
  occulta::viewer::WindowState s;
  s.views = {"east", "west"};
  s.width = 960;
  s.height = 600;
  apply(s, occulta::viewer::action::Timeline{occulta::viewer::frame_times(views)});
  const auto places = occulta::viewer::panel_places(s, views);
  REQUIRE(places.size() == 2);
  struct Place {
    std::size_t view;
    double x_rs, y_rs;
  };
  const std::vector<Place> wanted{{0, 6.0, 2.0}, {0, 5.0, -4.0}, {1, -7.0, 1.0}};
  std::vector<std::pair<int, int>> pixels;
  for (const Place& p : wanted) {
    const ImVec2 at = places[p.view].frame.to_pixel(p.x_rs, p.y_rs);
    pixels.emplace_back(int(std::floor(at.x)), int(std::floor(at.y)));
  }

  REQUIRE(run_command("Xvfb -displayfd 3 -screen 0 1024x700x24 -nolisten tcp 3>" + d + "/display >" + d +
                      "/xvfb.log 2>&1 & echo $! >" + d + "/xvfb.pid")
              .exit_code == 0);
  struct Stop {  // whatever happens, the processes this test started end with it
    fs::path dir;
    ~Stop() {
      for (const char* pid : {"view.pid", "xvfb.pid"})
        if (fs::exists(dir / pid)) run_command("kill $(cat " + shell_quote((dir / pid).string()) + ") 2>/dev/null");
    }
  } stop{dir};
  REQUIRE(wait_for([&] { return slurp(dir / "display").find('\n') != std::string::npos; }, 20));
  const std::string display = "DISPLAY=:" + std::to_string(std::stoi(slurp(dir / "display")));
  // In the scratch folder: the window saves its track (key s) as <event id>.track.json there.
  REQUIRE(run_command("cd " + d + " && " + display + " " + occulta_cmd() + " view " + shell_quote(sample_event().string()) +
                      " --size 960x600 >view.log 2>&1 & echo $! >" + d + "/view.pid")
              .exit_code == 0);
  const bool loaded = wait_for([&] { return slurp(dir / "view.log").find("loaded 2 view(s)") != std::string::npos; }, 60);
  INFO(slurp(dir / "view.log"));
  REQUIRE(loaded);
  std::string window;
  REQUIRE(wait_for([&] {
    const auto found = run_command(display + " xdotool search --name '^occulta$'");
    window = found.output.substr(0, found.output.find('\n'));
    return found.exit_code == 0 && !window.empty();
  }, 20));
  const fs::path saved = dir / "sample-2031-03-14.track.json";
  for (const auto& [x, y] : pixels) {
    REQUIRE(run_command(display + " xdotool mousemove --window " + window + " " + std::to_string(x) + " " + std::to_string(y) +
                        " click 1")
                .exit_code == 0);
    std::this_thread::sleep_for(std::chrono::milliseconds(300));  // the window draws at least every 0.1 s
  }
  REQUIRE(run_command(display + " xdotool mousemove --window " + window + " 955 595 type --window " + window + " s").exit_code == 0);
  REQUIRE(wait_for([&] { return fs::exists(saved); }, 10));
  const occulta::fit::Track three = occulta::fit::read_track(saved);
  REQUIRE(three.points.size() == 3);
  for (std::size_t i = 0; i < 3; ++i) {
    const Place& p = wanted[i];
    CAPTURE(i);
    CHECK(three.points[i].view == s.views[p.view]);
    // The pixel's centre, not the place asked for: within one window pixel of it (R☉ per px).
    const double rs_per_px = std::abs(places[p.view].frame.x.hi - places[p.view].frame.x.lo) /
                             (places[p.view].frame.pixel_max.x - places[p.view].frame.pixel_min.x);
    CHECK(std::abs(three.points[i].height_rs - std::hypot(p.x_rs, p.y_rs)) <= 1.5 * rs_per_px);
    CHECK(angle_between_deg(three.points[i].pa_deg, occulta::viewer::pa_deg_at(p.x_rs, p.y_rs)) <=
          1.5 * rs_per_px / std::hypot(p.x_rs, p.y_rs) / kRad);
  }
  fs::remove(saved);
  REQUIRE(run_command(display + " xdotool type --window " + window + " us").exit_code == 0);
  REQUIRE(wait_for([&] { return fs::exists(saved); }, 10));
  const occulta::fit::Track two = occulta::fit::read_track(saved);
  CHECK(two.points.size() == 2);
  if (two.points.size() == 2) CHECK(two.points[1].view == three.points[1].view);
  run_command(display + " xdotool type --window " + window + " q");
  const bool quit = wait_for([&] { return run_command("kill -0 $(cat " + d + "/view.pid) 2>/dev/null").exit_code != 0; }, 20);
  CHECK(quit);
}
