// The window's CME list (viewer/cme_list.hpp) over a measurement made here by hand, two
// CMEs: the rows read what the measurement holds, a fit shows the analyst's CME (else the
// primary), picking one — by action or by a click on its row in the drawn window — puts
// its shell in the controls, and a number the measurement does not have changes nothing.
#include <cmath>
#include <memory>
#include <numbers>

#include <doctest/doctest.h>

#include "fit/measurement.hpp"
#include "viewer/actions.hpp"
#include "viewer/cme_list.hpp"
#include "viewer/ui.hpp"

namespace {
using namespace occulta::viewer;
namespace fit = occulta::fit;
constexpr double kRad = std::numbers::pi / 180.0;

// A CME seen in views east and west at central PAs pa_east, pa_west, with a fitted shell
// toward (lon, lat) at speed_km_s (σ: 1°, 1°, 20 km/s); `analyst`: from the analyst's points.
fit::CmeMeasurement cme(int index, double pa_east, double pa_west, double lon_deg, double lat_deg, double speed_km_s,
                        bool analyst = false) {
  fit::CmeMeasurement c;
  c.index = index;
  c.status = "ok";
  c.onset_utc_s = 1000.0 * index;
  for (const auto& [name, pa] : {std::pair{"east", pa_east}, std::pair{"west", pa_west}}) {
    fit::ViewMeasurement v;
    v.name = name;
    v.front.found = !analyst;
    v.by_analyst = analyst;
    v.central_pa_deg = pa;
    v.track_pa_deg = pa;
    v.points = {{name, 1000.0 * index + 600.0, pa, 4.0, analyst ? "analyst" : "auto"},
                {name, 1000.0 * index + 1200.0, pa, 5.0, analyst ? "analyst" : "auto"}};
    c.views.push_back(v);
  }
  fit::ShellFit f;
  f.ok = true;
  f.shell.lon = lon_deg * kRad;
  f.shell.lat = lat_deg * kRad;
  f.shell.tilt = 10.0 * kRad;
  f.shell.half_angle = 25.0 * kRad;
  f.shell.aspect_ratio = 0.3;
  f.shell.apex_height_rs = 6.0;
  f.law = {1000.0 * index + 1200.0, 6.0, speed_km_s, 0.0};
  f.sigma[fit::kLon] = f.sigma[fit::kLat] = 1.0 * kRad;
  f.sigma[fit::kSpeed] = 20.0;
  c.shell.fit = f;
  return c;
}

std::shared_ptr<const fit::Measurement> two_cmes(bool second_by_analyst = false) {
  auto m = std::make_shared<fit::Measurement>();
  m->status = "ok";
  m->cmes = {cme(1, 80, 280, -20, 40, 900), cme(2, 200, 150, 10, -40, 1300, second_by_analyst)};
  m->primary = 0;
  m->primary_reason = "the earliest onset";
  m->views = m->cmes[0].views;
  m->shell = m->cmes[0].shell;
  return m;
}

WindowState window() {
  WindowState s;
  s.views = {"east", "west"};
  apply(s, action::Timeline{{1600.0, 2200.0, 2600.0, 3200.0}});
  return s;
}

}  // namespace

TEST_CASE("CME list: after an automatic fit, both CMEs listed, the primary shown; picking the second shows its shell") {
  WindowState s = window();
  CHECK(cme_rows(s).empty());
  CHECK(shown_cme(s) == nullptr);
  apply(s, action::FitDone{two_cmes(), "auto", 0.5, "measured"});
  std::vector<CmeRow> rows = cme_rows(s);
  REQUIRE(rows.size() == 2);
  CHECK(rows[0].number == 1);
  CHECK(rows[0].primary);
  CHECK(rows[0].shown);
  CHECK_FALSE(rows[1].shown);
  CHECK(rows[1].central_pa.size() == 2);
  CHECK(rows[1].central_pa[1].view == "west");
  CHECK(rows[1].central_pa[1].central_pa_deg == 150.0);
  CHECK(rows[1].speed_km_s == 1300.0);
  CHECK(rows[1].speed_sigma_km_s == 20.0);
  CHECK(rows[1].lon_deg == doctest::Approx(10.0));
  CHECK(rows[1].lat_sigma_deg == doctest::Approx(1.0));
  CHECK(s.shell.lon_deg == doctest::Approx(-20.0));
  CHECK(s.auto_points.size() == 4);
  CHECK(s.auto_points[0].pa_deg == 80.0);

  apply(s, action::PickCme{2});
  CHECK(shown_cme(s)->index == 2);
  CHECK(s.shell.shown);
  CHECK(s.shell.lon_deg == doctest::Approx(10.0));
  CHECK(s.shell.lat_deg == doctest::Approx(-40.0));
  CHECK(s.shell.speed_km_s == 1300.0);
  CHECK(s.auto_points[0].pa_deg == 200.0);  // the track to adopt is the shown CME's
  CHECK(shown_sighting(s, "west")->central_pa_deg == 150.0);
  // Numbers the measurement does not have change nothing.
  for (const int number : {0, 3, -1}) {
    apply(s, action::PickCme{number});
    CHECK(shown_cme(s)->index == 2);
  }
}

TEST_CASE("CME list: a fit whose analyst's points made a CME shows that one; one without a shell hides the outline") {
  WindowState s = window();
  apply(s, action::FitDone{two_cmes(true), "analyst", 0.5, "measured"});
  REQUIRE(shown_cme(s));
  CHECK(shown_cme(s)->index == 2);
  CHECK(cme_rows(s)[1].by_analyst);
  CHECK(s.shell.lon_deg == doctest::Approx(10.0));

  auto m = std::make_shared<fit::Measurement>(*two_cmes());
  m->cmes[1].shell.fit.reset();
  apply(s, action::FitDone{m, "auto", 0.5, "measured"});
  CHECK(s.shell.shown);
  apply(s, action::PickCme{2});
  CHECK_FALSE(s.shell.shown);  // never another CME's shell shown as this one's
  CHECK(std::isnan(cme_rows(s)[1].speed_km_s));
}

TEST_CASE("CME list: a click on the second CME's row in the drawn window picks it") {
  WindowState s = window();
  s.width = 1280;
  s.height = 900;
  apply(s, action::FitDone{two_cmes(), "auto", 0.5, "measured"});
  // Down the work column (the right quarter of the window): the first place whose click
  // picks CME 2 — each tried on a copy, so other controls' clicks leave no trace.
  bool picked = false;
  for (float y = 40.0f; y < float(s.height) && !picked; y += 6.0f) {  // rows are ~20 px high
    WindowState tried = s;
    click_window(tried, {}, action::Click{float(s.width) - 150.0f, y});
    if (shown_cme(tried)->index == 2) {
      picked = true;
      CHECK(tried.shell.lon_deg == doctest::Approx(10.0));
      CHECK(tried.points.empty());
    }
  }
  CHECK(picked);
}
