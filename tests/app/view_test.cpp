// `occulta view` end to end on the committed sample event: --snapshot with a script, its
// faults, no display at all, and a real window under Xvfb (with GLX: the OpenGL texture
// path; without: X11 image puts) driven with xdotool and compared with --snapshot of the
// same state.
#include <chrono>
#include <thread>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>

#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using occulta::test::run_command;
using occulta::test::shell_quote;
using occulta::test::slurp;

std::string occulta_cmd() { return shell_quote(occulta::test::occulta_binary().string()); }
std::string sample_event() {
  return shell_quote(occulta::test::source_path("sample_frames/sample-2031-03-14.event.json").string());
}

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

struct Difference {
  double mean_abs = 0.0;   // per channel, 0–255
  double far_fraction = 0.0;  // pixels with a channel more than 24 levels off
};

Difference compare(const fs::path& a_path, const fs::path& b_path) {
  const cv::Mat a = cv::imread(a_path.string(), cv::IMREAD_COLOR), b = cv::imread(b_path.string(), cv::IMREAD_COLOR);
  REQUIRE(!a.empty());
  REQUIRE(!b.empty());
  REQUIRE(a.size() == b.size());
  cv::Mat d;
  cv::absdiff(a, b, d);
  const cv::Scalar m = cv::mean(d);
  cv::Mat channel_max;
  cv::Mat channels[3];
  cv::split(d, channels);
  channel_max = cv::max(cv::max(channels[0], channels[1]), channels[2]);
  return {(m[0] + m[1] + m[2]) / 3.0, double(cv::countNonZero(channel_max > 24)) / double(a.total())};
}

// A real window on a fresh Xvfb: step a frame (→) and show base differences (3) by keys,
// screenshot, and the same state by --snapshot.
void window_matches_snapshot(const std::string& name, bool glx) {
  for (const char* tool : {"Xvfb", "xdotool", "import"})
    if (run_command(std::string("command -v ") + tool).exit_code != 0) {
      MESSAGE("skipped: ", tool, " is missing (Debian's xvfb, xdotool, imagemagick; ./bootstrap installs them)");
      return;
    }
  const fs::path dir = occulta::test::scratch_dir(name);
  const std::string d = shell_quote(dir.string());
  // Xvfb picks a free display itself and writes its number to fd 3.
  REQUIRE(run_command("Xvfb -displayfd 3 -screen 0 1024x700x24 -nolisten tcp " + std::string(glx ? "" : "-extension GLX") +
                      " 3>" + d + "/display >" + d + "/xvfb.log 2>&1 & echo $! >" + d + "/xvfb.pid")
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

  REQUIRE(run_command(display + " " + occulta_cmd() + " view " + sample_event() + " --size 960x600 >" + d +
                      "/view.log 2>&1 & echo $! >" + d + "/view.pid")
              .exit_code == 0);
  const bool loaded = wait_for([&] { return slurp(dir / "view.log").find("loaded 2 view(s)") != std::string::npos; }, 60);
  INFO(slurp(dir / "view.log"));
  REQUIRE(loaded);
  CHECK(slurp(dir / "view.log").find(glx ? "as an OpenGL texture" : "with X11 image puts") != std::string::npos);
  std::string window;
  REQUIRE(wait_for([&] {
    const auto found = run_command(display + " xdotool search --name '^occulta$'");
    window = found.output.substr(0, found.output.find('\n'));
    return found.exit_code == 0 && !window.empty();
  }, 20));
  // The pointer in the bottom-right corner: over no panel and no control.
  REQUIRE(run_command(display + " xdotool mousemove 955 595 key --window " + window + " Right type --window " + window + " 3")
              .exit_code == 0);
  std::this_thread::sleep_for(std::chrono::seconds(1));  // idle, the window redraws every 0.1 s
  REQUIRE(run_command(display + " import -window " + window + " " + d + "/window.png").exit_code == 0);
  run_command(display + " xdotool type --window " + window + " q");
  const bool quit = wait_for([&] { return run_command("kill -0 $(cat " + d + "/view.pid) 2>/dev/null").exit_code != 0; }, 10);
  CHECK(quit);

  occulta::test::spit(dir / "keys.json", R"([{"do": "step", "by": 1}, {"do": "display", "mode": "base_difference"}])");
  const auto snap = run_command(occulta_cmd() + " view " + sample_event() + " --size 960x600 --script " + d + "/keys.json --snapshot " +
                                d + "/snapshot.png");
  REQUIRE(snap.exit_code == 0);
  // The same renderer draws both; what may differ is only what the display server does
  // to the pixels on the way (none with 24-bit TrueColor). Tolerance: mean |Δ| ≤ 0.5 level
  // per channel and at most 0.2 % of pixels more than 24 levels off.
  const Difference diff = compare(dir / "window.png", dir / "snapshot.png");
  MESSAGE(name, ": mean |Δ| ", diff.mean_abs, ", pixels off by > 24: ", 100 * diff.far_fraction, " %");
  CHECK(diff.mean_abs <= 0.5);
  CHECK(diff.far_fraction <= 0.002);
  // And the keys did something: the first frame's running difference looks different.
  const auto first = run_command(occulta_cmd() + " view " + sample_event() + " --size 960x600 --snapshot " + d + "/first.png");
  REQUIRE(first.exit_code == 0);
  CHECK(compare(dir / "window.png", dir / "first.png").mean_abs > 2.0);
}

}  // namespace

TEST_CASE("view --snapshot draws the sample with a script's state") {
  const fs::path dir = occulta::test::scratch_dir("view_snapshot");
  occulta::test::spit(dir / "s.json", R"([{"do": "frame", "index": 9}, {"do": "display", "mode": "polar"},
                                          {"do": "resize", "width": 800, "height": 500}])");
  const auto run = run_command(occulta_cmd() + " view " + sample_event() + " --script " + shell_quote((dir / "s.json").string()) +
                               " --snapshot " + shell_quote((dir / "s.png").string()));
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(run.output.find("800×500, polar, frame 10 of 15") != std::string::npos);
  const cv::Mat png = cv::imread((dir / "s.png").string());
  CHECK(png.cols == 800);
  CHECK(png.rows == 500);
}

TEST_CASE("view loads only the frames inside the event's window, as measure images them") {
  // The sample's event with its window cut to 06:00–07:30: 10 of each view's 16 frames
  // inside, so 9 running differences (frame times) on the timeline instead of 15.
  const fs::path dir = occulta::test::scratch_dir("view_event_window");
  nlohmann::json event =
      nlohmann::json::parse(slurp(occulta::test::source_path("sample_frames/sample-2031-03-14.event.json")));
  for (nlohmann::json& v : event.at("views"))
    for (nlohmann::json& f : v.at("files")) f = (occulta::test::source_path("sample_frames") / f.get<std::string>()).string();
  event["window"] = {{"start", "2031-03-14T06:00:00"}, {"end", "2031-03-14T07:30:00"}};
  occulta::test::spit(dir / "narrow.event.json", event.dump());
  const auto run = run_command(occulta_cmd() + " view " + shell_quote((dir / "narrow.event.json").string()) + " --snapshot " +
                               shell_quote((dir / "n.png").string()));
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(run.output.find("frame 1 of 9)") != std::string::npos);
}

TEST_CASE("view: a bad script or size or input is one sentence and no PNG") {
  const fs::path dir = occulta::test::scratch_dir("view_faults");
  const std::string png = shell_quote((dir / "x.png").string());
  occulta::test::spit(dir / "bad.json", R"([{"do": "display", "mode": "sideways"}])");
  auto run = run_command(occulta_cmd() + " view " + sample_event() + " --script " + shell_quote((dir / "bad.json").string()) +
                         " --snapshot " + png);
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("bad.json: action 1 (display): mode \"sideways\" is not one of") != std::string::npos);
  run = run_command(occulta_cmd() + " view " + sample_event() + " --size 12x9000 --snapshot " + png);
  CHECK(run.exit_code == 2);  // a fault named by an option is usage (README "Exit codes")
  CHECK(run.output.find("--size: must be WIDTHxHEIGHT") != std::string::npos);
  run = run_command(occulta_cmd() + " view " + shell_quote(dir.string()) + " --snapshot " + png);
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("holds no FITS files") != std::string::npos);
  CHECK(!fs::exists(dir / "x.png"));
}

TEST_CASE("view with no display says so and points to --snapshot") {
  const auto run = run_command("env -u DISPLAY -u WAYLAND_DISPLAY " + occulta_cmd() + " view " + sample_event());
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("no display") != std::string::npos);
  CHECK(run.output.find("--snapshot") != std::string::npos);
}

TEST_CASE("view opens a window under Xvfb with GLX and keys give the same picture as --snapshot") {
  window_matches_snapshot("view_window_glx", true);
}

TEST_CASE("view opens a window under Xvfb without GLX (X11 image puts) and keys give the same picture") {
  window_matches_snapshot("view_window_x11", false);
}
