// The window's state changes only through actions (viewer/actions.hpp), and a script file
// (viewer/script.hpp) gives the same actions: what each does to the state, and every fault
// a script can have named in one sentence with its file.
#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"
#include "viewer/actions.hpp"
#include "viewer/script.hpp"

namespace {
using namespace occulta::viewer;
using nlohmann::json;

WindowState two_views_five_times() {
  WindowState s;
  s.views = {"east", "west"};
  apply(s, action::Timeline{{500.0, 100.0, 300.0, 200.0, 400.0, 300.0}});  // unsorted, one duplicate
  return s;
}

std::string fault_of(const json& script) {
  try {
    parse_script(script, "bad.json");
  } catch (const occulta::imaging::InputError& e) {
    return e.what();
  }
  return "no fault";
}

}  // namespace

TEST_CASE("the timeline is the views' frame times sorted and once each — frames and steps stay on it") {
  WindowState s = two_views_five_times();
  CHECK(s.timeline_utc_s == std::vector<double>{100, 200, 300, 400, 500});
  CHECK(displayed_time(s) == 100.0);
  apply(s, action::Frame{3});
  CHECK(displayed_time(s) == 400.0);
  apply(s, action::Frame{99});
  CHECK(s.frame == 4);
  apply(s, action::Frame{-3});
  CHECK(s.frame == 0);
  apply(s, action::Step{-1});
  CHECK(s.frame == 0);  // no wrap: stays at the first
  apply(s, action::Step{-1, true});
  CHECK(s.frame == 4);  // playing wraps round
  apply(s, action::Step{2, true});
  CHECK(s.frame == 1);
  apply(s, action::Step{2});
  CHECK(s.frame == 3);
  // A new view's times keep the displayed time (nearest frame of the new timeline).
  apply(s, action::Timeline{{100, 190, 290, 390, 410, 500}});
  CHECK(displayed_time(s) == 390.0);
  WindowState empty;
  CHECK(std::isnan(displayed_time(empty)));
  apply(empty, action::Step{1, true});
  CHECK(empty.frame == 0);
}

TEST_CASE("the display focus contrast colours play resize hover and quit actions") {
  WindowState s = two_views_five_times();
  apply(s, action::ShowDisplay{Display::nrgf});
  CHECK(s.display == Display::nrgf);
  apply(s, action::Focus{"west"});
  CHECK(s.focus == "west");
  apply(s, action::Focus{"north"});  // not a view: all side by side
  CHECK(s.focus.empty());
  apply(s, action::Contrast{2.0, -1.0});
  CHECK(s.sigma_lo == -1.0);
  CHECK(s.sigma_hi == 2.0);
  apply(s, action::Contrast{1.0, 1.0});
  CHECK(s.sigma_hi - s.sigma_lo == doctest::Approx(0.1));
  apply(s, action::Colours{ColourTable::amber});
  CHECK(s.colours == ColourTable::amber);
  apply(s, action::Play{});
  CHECK(s.playing);
  apply(s, action::Pause{});
  CHECK(!s.playing);
  apply(s, action::Resize{100, 100000});
  CHECK(s.width == kMinWindowPx);
  CHECK(s.height == kMaxWindowPx);
  apply(s, action::HoverAt{"east", 3.0, -4.0});
  REQUIRE(s.hover);
  CHECK(s.hover->x_rs == 3.0);
  apply(s, action::HoverAt{"east", std::nan(""), 1.0});  // not a position: ignored
  CHECK(s.hover->x_rs == 3.0);
  apply(s, action::Leave{});
  CHECK(!s.hover);
  apply(s, action::Quit{});
  CHECK(s.quit);
}

TEST_CASE("every display's name round-trips") {
  for (Display d : displays()) CHECK(display_named(display_name(d)) == d);
  CHECK(!display_named("Running_Difference"));
}

TEST_CASE("a script gives the actions the window's controls give") {
  const json script = json::parse(R"([
    {"do": "frame", "index": 3}, {"do": "step", "by": -1}, {"do": "display", "mode": "base_difference"},
    {"do": "view", "name": "west"}, {"do": "contrast", "lo_sigma": -2, "hi_sigma": 5.5},
    {"do": "colours", "table": "blue_red"}, {"do": "play"}, {"do": "resize", "width": 800, "height": 600},
    {"do": "hover", "view": "west", "x": 2.5, "y": 6}, {"do": "step", "by": 3, "wrap": true}, {"do": "view", "name": "all"}
  ])");
  WindowState s = two_views_five_times();
  for (const Action& a : parse_script(script, "ok.json")) apply(s, a);
  CHECK(s.frame == 0);  // 3 − 1 + 3 = 5 wraps to 0 on five frames
  CHECK(s.display == Display::base_difference);
  CHECK(s.focus.empty());
  CHECK(s.sigma_lo == -2.0);
  CHECK(s.sigma_hi == 5.5);
  CHECK(s.colours == ColourTable::blue_red);
  CHECK(s.playing);
  CHECK(s.width == 800);
  CHECK(s.height == 600);
  REQUIRE(s.hover);
  CHECK(s.hover->view == "west");
  CHECK(s.hover->y_rs == 6.0);
}

TEST_CASE("a bad script is one sentence naming the file and the action and the fault") {
  CHECK(fault_of(json::object()) == "bad.json: must be a JSON list of actions [{\"do\": …}, …].");
  CHECK(fault_of(json::parse(R"([3])")) == "bad.json: action 1 is not an object {\"do\": …}.");
  CHECK(fault_of(json::parse(R"([{"index": 3}])")) == "bad.json: action 1 has no \"do\" naming what to do.");
  CHECK(fault_of(json::parse(R"([{"do": "play"}, {"do": "zoom"}])")).starts_with("bad.json: action 2: \"zoom\" is not an action"));
  CHECK(fault_of(json::parse(R"([{"do": "frame"}])")) == "bad.json: action 1 (frame): needs \"index\".");
  CHECK(fault_of(json::parse(R"([{"do": "frame", "index": 1.5}])")) ==
        "bad.json: action 1 (frame): \"index\" must be a whole number.");
  CHECK(fault_of(json::parse(R"([{"do": "frame", "index": 1, "idx": 2}])")) ==
        "bad.json: action 1 (frame): has no argument \"idx\".");
  CHECK(fault_of(json::parse(R"([{"do": "display", "mode": "fancy"}])")) ==
        "bad.json: action 1 (display): mode \"fancy\" is not one of calibrated, running_difference, "
        "base_difference, nrgf, polar.");
  CHECK(fault_of(json::parse(R"([{"do": "colours", "table": "rainbow"}])")).find("is not one of grey") !=
        std::string::npos);
  CHECK(fault_of(json::parse(R"([{"do": "contrast", "lo_sigma": 2, "hi_sigma": 1}])")) ==
        "bad.json: action 1 (contrast): lo_sigma must be below hi_sigma.");
  CHECK(fault_of(json::parse(R"([{"do": "contrast", "lo_sigma": "low", "hi_sigma": 1}])")) ==
        "bad.json: action 1 (contrast): \"lo_sigma\" must be a number.");
  CHECK(fault_of(json::parse(R"([{"do": "resize", "width": 10, "height": 600}])")).find("between 320 and 8192") !=
        std::string::npos);
  CHECK(fault_of(json::parse(R"([{"do": "step", "by": 1, "wrap": 1}])")) ==
        "bad.json: action 1 (step): \"wrap\" must be true or false.");
  CHECK(fault_of(json::parse(R"([{"do": "hover", "view": "east", "x": 1}])")) == "bad.json: action 1 (hover): needs \"y\".");
}

TEST_CASE("a script file that is not JSON names the file") {
  const auto dir = occulta::test::scratch_dir("script_not_json");
  occulta::test::spit(dir / "broken.json", "[{\"do\": \"play\"");
  CHECK_THROWS_AS(read_script(dir / "broken.json"), occulta::imaging::InputError);
  try {
    read_script(dir / "broken.json");
  } catch (const occulta::imaging::InputError& e) {
    CHECK(std::string(e.what()).find("broken.json") != std::string::npos);
  }
  CHECK_THROWS_AS(read_script(dir / "missing.json"), occulta::imaging::InputError);
}
