// The analyst's window on a window holding two CMEs (issue 16; tests/app/two_cmes.hpp, the
// scenario of measure_multi_test.cpp): the list shows both, picking one shows its shell,
// answer and track as `occulta measure` writes that CME in result.json; and points marked
// away from every CME found are a CME of their own, which the exported result lists.
// The window is loaded headless, as `view --snapshot` loads it.
#include <algorithm>
#include <cmath>

#include <doctest/doctest.h>

#include "fit/json_file.hpp"
#include "fit/track.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"
#include "tests/app/two_cmes.hpp"
#include "tests/support/support.hpp"
#include "viewer/cme_list.hpp"
#include "viewer/height_time.hpp"
#include "viewer/script.hpp"
#include "viewer/session.hpp"
#include "viewer/ui.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;
namespace viewer = occulta::viewer;

// The window as `occulta view EVENT --snapshot` opens it: every view loaded, the timeline set.
struct OpenWindow {
  viewer::Session session;
  viewer::WindowState state;
  std::vector<viewer::ViewPictures> views;
};

OpenWindow open_window(const fs::path& event_file) {
  OpenWindow w;
  w.session.input = occulta::fit::load_measurement_input(event_file);
  const occulta::fit::Event& event = w.session.input->event;
  w.state.event_id = event.id;
  for (const occulta::fit::EventView& v : event.views) {
    w.state.views.push_back(v.name);
    w.views.push_back(viewer::load_view({v.name, v.files, occulta::fit::chain_options(event, v, w.session.options.median)}));
    REQUIRE(w.views.back().error.empty());
  }
  viewer::apply(w.state, viewer::action::Timeline{viewer::frame_times(w.views)});
  for (const viewer::ViewPictures& v : w.views) viewer::apply(w.state, viewer::action::ViewFrames{v.name, viewer::frame_times(v)});
  return w;
}

void run(OpenWindow& w, const json& script) {
  const std::vector<viewer::Action> actions = viewer::parse_script(script, "script");
  viewer::run_script(w.state, w.views, actions, w.session);
}

json measure(const fs::path& event_file, const fs::path& out, const fs::path& track = {}) {
  const auto measured = run_command(shell_quote(occulta::test::occulta_binary().string()) + " measure --quiet " +
                                    shell_quote(event_file.string()) +
                                    (track.empty() ? std::string() : " --track " + shell_quote(track.string())) + " --out " +
                                    shell_quote(out.string()) + " 2>&1");
  INFO(measured.output);
  return occulta::fit::read_json_file(out / "result.json");
}

// The window's shell controls are the fitted shell result.json gives (degrees, km/s, R☉;
// its times to the millisecond).
void check_controls_are(const viewer::ShellControls& c, const json& shell) {
  CAPTURE(shell.dump());
  CHECK(c.shown);
  CHECK(c.lon_deg == doctest::Approx(shell["lon_deg"].get<double>()).epsilon(1e-9));
  CHECK(c.lat_deg == doctest::Approx(shell["lat_deg"].get<double>()).epsilon(1e-9));
  CHECK(c.tilt_deg == doctest::Approx(shell["tilt_deg"].get<double>()).epsilon(1e-9));
  CHECK(c.half_angle_deg == doctest::Approx(shell["half_angle_deg"].get<double>()).epsilon(1e-9));
  CHECK(c.aspect_ratio == doctest::Approx(shell["aspect_ratio"].get<double>()).epsilon(1e-9));
  CHECK(c.apex_height_rs == doctest::Approx(shell["apex_height_rs"].get<double>()).epsilon(1e-9));
  CHECK(c.speed_km_s == doctest::Approx(shell["speed_km_s"].get<double>()).epsilon(1e-9));
  CHECK(std::abs(c.ref_utc_s - occulta::imaging::utc_seconds_from_iso(shell["ref_time"].get<std::string>())) <= 1e-3);
}

}  // namespace

TEST_CASE("window: two CMEs in the window — the list has both, and picking the second shows result.json's cmes[1]") {
  // measure_multi_test.cpp's first case: north-east at 900 km/s from 12:00, south-west at
  // 1300 km/s 30 min later, from two views.
  const std::vector<occulta::test::ScenarioCme> cmes{{-20, 40, 20, 900, 0}, {10, -40, -30, 1300, 30}};
  const fs::path dir = occulta::test::synthesize_event("window_cmes_two", occulta::test::two_view_scenario(cmes, 10));
  const fs::path event = dir / "frames/multi.event.json";
  const json result = measure(event, dir / "measured");
  REQUIRE(result.contains("cmes"));
  REQUIRE(result["cmes"].size() == 2);

  OpenWindow w = open_window(event);
  run(w, json::parse(R"([{"do": "fit", "points": "auto"}])"));
  REQUIRE(w.state.measured);
  // The list: both CMEs, numbered as result.json numbers them; the primary shown first.
  std::vector<viewer::CmeRow> rows = viewer::cme_rows(w.state);
  REQUIRE(rows.size() == 2);
  const int primary = result["primary"].get<int>();
  for (std::size_t k = 0; k < 2; ++k) {
    const json& c = result["cmes"][k];
    CAPTURE(k);
    CHECK(rows[k].number == c["index"].get<int>());
    CHECK(rows[k].association == c["association"].get<std::string>());
    CHECK(rows[k].status == c["status"].get<std::string>());
    CHECK(rows[k].primary == (rows[k].number == primary));
    CHECK(rows[k].shown == rows[k].primary);
    CHECK(rows[k].central_pa.size() == 2);
    CHECK(rows[k].speed_km_s == doctest::Approx(c["shell"]["speed_km_s"].get<double>()).epsilon(1e-9));
    CHECK(rows[k].speed_sigma_km_s == doctest::Approx(c["shell"]["sigma"]["speed_km_s"].get<double>()).epsilon(1e-9));
    CHECK(rows[k].lon_deg == doctest::Approx(c["shell"]["lon_deg"].get<double>()).epsilon(1e-9));
  }
  check_controls_are(w.state.shell, result["cmes"][std::size_t(primary - 1)]["shell"]);

  // Picking the second: its shell in the controls (the outline drawn from them), its answer,
  // its views' tracks and height–time panels.
  run(w, json::parse(R"([{"do": "cme", "index": 2}])"));
  rows = viewer::cme_rows(w.state);
  CHECK_FALSE(rows[0].shown);
  CHECK(rows[1].shown);
  const json& second = result["cmes"][1];
  check_controls_are(w.state.shell, second["shell"]);
  const occulta::fit::CmeMeasurement* shown = viewer::shown_cme(w.state);
  REQUIRE(shown);
  CHECK(shown->index == 2);
  REQUIRE(shown->shell.boundary);
  REQUIRE(second["boundary"].is_object());
  CHECK(shown->shell.boundary->speed_km_s == doctest::Approx(second["boundary"]["speed_km_s"].get<double>()).epsilon(1e-9));
  REQUIRE(second["arrival"].is_array());
  REQUIRE(shown->arrivals.size() == second["arrival"].size());
  CHECK(shown->arrivals.front().hit_probability ==
        doctest::Approx(second["arrival"][0]["hit_probability"].get<double>()).epsilon(1e-9));
  for (std::size_t v = 0; v < 2; ++v) {
    const json& view = second["views"][v];
    const std::string name = view["name"].get<std::string>();
    CAPTURE(name);
    const occulta::fit::ViewMeasurement* seen = viewer::shown_sighting(w.state, name);
    REQUIRE(seen);
    CHECK(seen->central_pa_deg == doctest::Approx(view["central_pa_deg"].get<double>()).epsilon(1e-9));
    // Its height–time panel follows its track, not the first CME's.
    const auto pa = viewer::height_time_pa(w.state, name);
    REQUIRE(pa);
    CHECK(*pa == doctest::Approx(seen->track_pa_deg));
    CHECK(std::abs(std::remainder(*pa - result["cmes"][0]["views"][v]["central_pa_deg"].get<double>(), 360.0)) > 30.0);
  }
  // The automatic track to adopt is the shown CME's.
  std::size_t track_points = 0;
  for (const occulta::fit::ViewMeasurement& v : shown->views) track_points += v.points.size();
  CHECK(w.state.auto_points.size() == track_points);
  for (const viewer::MarkedPoint& p : w.state.auto_points) {
    const occulta::fit::ViewMeasurement* seen = viewer::shown_sighting(w.state, p.view);
    REQUIRE(seen);
    CHECK(std::any_of(seen->points.begin(), seen->points.end(), [&](const occulta::fit::TrackPoint& t) {
      return t.utc_s == p.utc_s && t.pa_deg == p.pa_deg && t.height_rs == p.height_rs;
    }));
  }
  // "Fit both" while the second CME is shown and the list holds the first's points in one
  // view: there the second's automatic points stay out (the measurement would give the
  // list's points to the first CME, and one fit would mix the two); in the other view they
  // join the list. No sighting fitted mixes the two CMEs' points (their PAs lie ~90° apart).
  {
    const occulta::fit::CmeMeasurement first = w.state.measured->cmes[0];
    REQUIRE_FALSE(first.views[0].points.empty());
    for (const occulta::fit::TrackPoint& p : first.views[0].points)
      viewer::apply(w.state, viewer::action::AddPoint{first.views[0].name, p.utc_s, p.pa_deg, p.height_rs});
    OpenWindow both = w;  // the same window, fitted over both kinds of points
    run(both, json::parse(R"([{"do": "fit", "points": "both"}])"));
    REQUIRE(both.state.measured);
    CHECK(both.state.message.find("In " + first.views[0].name + " the shown CME's automatic points were left out") !=
          std::string::npos);
    int by_analyst = 0;
    for (const occulta::fit::CmeMeasurement& cme : both.state.measured->cmes)
      for (const occulta::fit::ViewMeasurement& v : cme.views) {
        if (!v.by_analyst) continue;
        ++by_analyst;
        double widest = 0.0;
        for (const occulta::fit::TrackPoint& p : v.points)
          for (const occulta::fit::TrackPoint& q : v.points)
            widest = std::max(widest, std::abs(std::remainder(p.pa_deg - q.pa_deg, 360.0)));
        CAPTURE(v.name);
        CHECK(widest < 60.0);
      }
    CHECK(by_analyst == 2);  // the first CME's points in one view, the second's in the other
  }
  // A number the measurement does not have changes nothing; 0 is a fault of the script.
  run(w, json::parse(R"([{"do": "cme", "index": 3}])"));
  CHECK(viewer::shown_cme(w.state)->index == 2);
  CHECK_THROWS_AS(viewer::parse_script(json::parse(R"([{"do": "cme", "index": 0}])"), "s.json"), occulta::imaging::InputError);
  // The window draws with the list (what README's picture shows).
  const viewer::Framebuffer picture = viewer::draw_window_headless(w.state, w.views);
  CHECK(picture.width == w.state.width);
}

TEST_CASE("window: points marked away from every CME found are a CME of their own, and the export lists it") {
  // One CME (measure_multi_test.cpp's north-eastern one); the analyst marks a front the
  // finder did not report, on the far side of the Sun in each view: points rising 0.8 R☉
  // per frame (≈ 930 km/s on the sky) from 4 R☉, three across the front per frame.
  const std::vector<occulta::test::ScenarioCme> one{{-20, 40, 20, 900, 0}};
  const fs::path dir = occulta::test::synthesize_event("window_cmes_missed", occulta::test::two_view_scenario(one, 8));
  const fs::path event = dir / "frames/multi.event.json";
  OpenWindow w = open_window(event);
  run(w, json::parse(R"([{"do": "fit", "points": "auto"}])"));
  REQUIRE(w.state.measured);
  REQUIRE(w.state.measured->cmes.size() == 1);
  const occulta::fit::CmeMeasurement found = w.state.measured->cmes.front();

  for (std::size_t v = 0; v < w.state.views.size(); ++v) {
    const occulta::fit::ViewMeasurement& seen = found.views[v];
    REQUIRE(seen.front.found);
    const double pa = seen.central_pa_deg + 180.0;
    const std::vector<double>& times = w.state.view_times_utc_s[v];
    for (std::size_t k = 1; k + 1 < times.size(); ++k) {
      const double h = 4.0 + 0.8 * double(k - 1);
      for (const double d : {-10.0, 0.0, 10.0})
        viewer::apply(w.state, viewer::action::AddPoint{w.state.views[v], times[k], pa + d, d == 0.0 ? h : h - 0.3});
    }
  }
  const fs::path track = dir / "missed.track.json";
  run(w, json{{{"do", "fit"}, {"points", "analyst"}}, {{"do", "save_track"}, {"path", track.string()}}});
  REQUIRE(w.state.measured);
  const auto& cmes = w.state.measured->cmes;
  REQUIRE(cmes.size() == 2);
  // The analyst's CME is shown; the one found keeps its automatic track, as before.
  const occulta::fit::CmeMeasurement* shown = viewer::shown_cme(w.state);
  REQUIRE(shown);
  for (const occulta::fit::ViewMeasurement& v : shown->views) {
    CAPTURE(v.name);
    CHECK(v.by_analyst);
    CHECK_FALSE(v.front.found);
  }
  CHECK(shown->association == "views");
  const occulta::fit::CmeMeasurement& other = cmes[shown == &cmes[0] ? 1 : 0];
  for (std::size_t v = 0; v < other.views.size(); ++v) {
    CAPTURE(v);
    CHECK_FALSE(other.views[v].by_analyst);
    CHECK(other.views[v].front.found);
    CHECK(other.views[v].central_pa_deg == doctest::Approx(found.views[v].central_pa_deg));
    CHECK(other.views[v].points.size() == found.views[v].points.size());
  }
  std::vector<viewer::CmeRow> rows = viewer::cme_rows(w.state);
  REQUIRE(rows.size() == 2);
  CHECK(std::count_if(rows.begin(), rows.end(), [](const viewer::CmeRow& r) { return r.by_analyst && r.shown; }) == 1);

  // What the export writes (measure --track over the window's points) lists both.
  const json result = measure(event, dir / "exported", track);
  REQUIRE(result.contains("cmes"));
  REQUIRE(result["cmes"].size() == 2);
  int analyst = 0;
  for (const json& c : result["cmes"])
    analyst += c["views"][0]["track_origin"] == "analyst" && c["views"][1]["track_origin"] == "analyst";
  CHECK(analyst == 1);
}
