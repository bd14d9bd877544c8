// tests/imaging/geometry_test.cpp — imaging/geometry against astropy.wcs, WCS Paper II's
// TAN formulas worked by hand, and the geometry of Thompson (2006).
#include <algorithm>
#include <cmath>
#include <fstream>
#include <string>
#include <thread>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "imaging/constants.hpp"
#include "imaging/geometry.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace oi = occulta::imaging;
using occulta::kArcsecPerRad;
using occulta::kAuKm;
using occulta::kDegPerRad;
using occulta::kRadPerDeg;
using occulta::kSolarRadiusKm;

namespace {

// A header card list that is both a Header (for occulta) and a JSON list (for astropy).
struct TestHeader {
  oi::Header header;
  nlohmann::json cards = nlohmann::json::array();

  TestHeader& real(const std::string& key, double value) {
    header.set_real(key, value);
    cards.push_back({key, value});
    return *this;
  }
  TestHeader& integer(const std::string& key, long long value) {
    header.set_integer(key, value);
    cards.push_back({key, value});
    return *this;
  }
  TestHeader& text(const std::string& key, const std::string& value) {
    header.set_text(key, value);
    cards.push_back({key, value});
    return *this;
  }
};

// The common part of every test header: a 1024² coronagraph-like frame seen from near Earth.
TestHeader base_header() {
  TestHeader h;
  h.integer("NAXIS", 2).integer("NAXIS1", 1024).integer("NAXIS2", 1024);
  h.text("CTYPE1", "HPLN-TAN").text("CTYPE2", "HPLT-TAN");
  h.real("HGLN_OBS", -1.5).real("HGLT_OBS", 6.25).real("DSUN_OBS", 0.985 * kAuKm * 1000.0);
  return h;
}

TestHeader pc_header_arcsec() {
  TestHeader h = base_header();
  const double r = 20.0 * kRadPerDeg;
  h.text("CUNIT1", "arcsec").text("CUNIT2", "arcsec");
  h.real("CRPIX1", 500.25).real("CRPIX2", 530.75).real("CRVAL1", 15.0).real("CRVAL2", -30.0);
  h.real("CDELT1", 11.9).real("CDELT2", 12.1);
  // CROTA2 → PC rule of WCS Paper II §6.1 (from memory) with unequal CDELTs: PC1_2 = −(CDELT2/CDELT1) sin ρ, PC2_1 = (CDELT1/CDELT2) sin ρ.
  h.real("PC1_1", std::cos(r)).real("PC1_2", -std::sin(r) * 12.1 / 11.9);
  h.real("PC2_1", std::sin(r) * 11.9 / 12.1).real("PC2_2", std::cos(r));
  return h;
}

TestHeader cd_header_deg() {
  TestHeader h = base_header();
  const double r = -35.0 * kRadPerDeg, s = 14.0 / 3600.0;
  h.text("CUNIT1", "deg").text("CUNIT2", "deg");
  h.real("CRPIX1", 512.5).real("CRPIX2", 498.0).real("CRVAL1", 0.01).real("CRVAL2", 0.002);
  h.real("CD1_1", s * std::cos(r)).real("CD1_2", -s * std::sin(r));
  h.real("CD2_1", s * std::sin(r)).real("CD2_2", s * std::cos(r));
  return h;
}

TestHeader crota_header(double crota2_deg) {
  TestHeader h = base_header();
  h.text("CUNIT1", "arcsec").text("CUNIT2", "arcsec");
  h.real("CRPIX1", 513.0).real("CRPIX2", 511.0).real("CRVAL1", 0.0).real("CRVAL2", 0.0);
  h.real("CDELT1", 11.4).real("CDELT2", 11.4).real("CROTA2", crota2_deg);
  return h;
}

TestHeader pc_header_deg() {
  TestHeader h = base_header();
  const double r = 127.0 * kRadPerDeg;
  h.text("CUNIT1", "deg").text("CUNIT2", "deg");
  h.real("CRPIX1", 520.0).real("CRPIX2", 505.5).real("CRVAL1", -0.004).real("CRVAL2", 0.003);
  h.real("CDELT1", 56.0 / 3600.0).real("CDELT2", 56.0 / 3600.0);
  h.real("PC1_1", std::cos(r)).real("PC1_2", -std::sin(r)).real("PC2_1", std::sin(r)).real("PC2_2", std::cos(r));
  return h;
}

// A 20 × 15 grid of pixels spanning the frame and a little beyond, off the integer grid.
std::vector<Eigen::Vector2d> test_pixels() {
  std::vector<Eigen::Vector2d> pixels;
  for (int j = 0; j < 15; ++j)
    for (int i = 0; i < 20; ++i) pixels.emplace_back(-20.0 + i * 55.3, -10.0 + j * 74.1);
  return pixels;
}

// Runs tests/external/wcs_reference.py (astropy.wcs) on the header with the given pixels
// and world directions (deg); returns its JSON answer.
nlohmann::json astropy_wcs(const std::string& name, const TestHeader& h, const std::vector<Eigen::Vector2d>& pixels,
                           const std::vector<Eigen::Vector2d>& world_deg) {
  nlohmann::json request{{"header", h.cards}, {"pixels", nlohmann::json::array()}, {"world", nlohmann::json::array()}};
  for (const auto& p : pixels) request["pixels"].push_back({p.x(), p.y()});
  for (const auto& w : world_deg) request["world"].push_back({w.x(), w.y()});
  const auto path = occulta::test::scratch_dir("geometry-" + name) / "request.json";
  std::ofstream(path) << request.dump();
  const auto result = occulta::test::run_python("tests/external/wcs_reference.py", occulta::test::shell_quote(path));
  REQUIRE_MESSAGE(result.exit_code == 0, result.output);
  return nlohmann::json::parse(result.output);
}

std::string error_of(const oi::Header& header, const std::optional<oi::Observer>& observer = std::nullopt) {
  try {
    oi::read_geometry(header, "x.fits", observer);
  } catch (const oi::InputError& e) {
    CHECK(e.source() == "x.fits");
    return e.what();
  }
  return "(no error)";
}

oi::GeometrySpec test_spec(double roll_deg) {
  oi::GeometrySpec spec;
  spec.width = 640;
  spec.height = 480;
  spec.observer = oi::observer_from_degrees(25.0, -4.0, 0.97 * kAuKm);
  spec.sun_center_px = {311.5, 250.25};
  spec.arcsec_per_px = 30.0;
  spec.roll_deg = roll_deg;
  return spec;
}

oi::ImageGeometry geometry_of(const oi::GeometrySpec& spec) {
  oi::Header header;
  oi::write_geometry(header, spec);
  return oi::read_geometry(header, "spec");
}

}  // namespace

TEST_CASE("geometry: pixel → HPC and back match astropy.wcs on rotated TAN headers") {
  // Reference: astropy.wcs (Debian python3-astropy, wrapping wcslib), all_pix2world and
  // all_world2pix with origin 0 — the same 0-based pixel centres as occulta's.
  const std::vector<std::pair<std::string, TestHeader>> headers = {
      {"pc-arcsec", pc_header_arcsec()},
      {"cd-deg", cd_header_deg()},
      {"crota2", crota_header(30.0)},
      {"pc-deg", pc_header_deg()}};
  const auto pixels = test_pixels();
  for (const auto& [name, h] : headers) {
    // doctest's CAPTURE takes its argument into a lambda, and clang 14 cannot capture a
    // structured binding (allowed only from C++20's P1091R3 on, which it lacks): a named copy.
    const std::string header_name = name;
    CAPTURE(header_name);
    const oi::ImageGeometry g = oi::read_geometry(h.header, name);
    std::vector<Eigen::Vector2d> hpc(pixels.size());
    oi::hpc_from_pixels(g, pixels, hpc);
    // World directions for the inverse: a spread of HPC points up to ~2° from Sun centre.
    std::vector<Eigen::Vector2d> world_deg;
    for (int k = 0; k < 40; ++k) world_deg.emplace_back(-1.9 + 0.097 * k, 1.7 - 0.083 * k);
    const auto ref = astropy_wcs(name, h, pixels, world_deg);

    double worst_arcsec = 0.0;
    for (std::size_t i = 0; i < pixels.size(); ++i) {
      const double dx = (hpc[i].x() * kDegPerRad - ref["world"][i][0].get<double>()) * 3600.0;
      const double dy = (hpc[i].y() * kDegPerRad - ref["world"][i][1].get<double>()) * 3600.0;
      worst_arcsec = std::max({worst_arcsec, std::abs(dx), std::abs(dy)});
      // The single-pixel call agrees with the batch one exactly (same wcslib call per pixel).
      const Eigen::Vector2d one = oi::hpc_from_pixel(g, pixels[i]);
      CHECK(one.x() == hpc[i].x());
      CHECK(one.y() == hpc[i].y());
    }
    CHECK(worst_arcsec < 1e-3);

    double worst_px = 0.0;
    for (std::size_t k = 0; k < world_deg.size(); ++k) {
      const Eigen::Vector2d p = oi::pixel_from_hpc(g, world_deg[k] * kRadPerDeg);
      worst_px = std::max({worst_px, std::abs(p.x() - ref["pixels"][k][0].get<double>()),
                           std::abs(p.y() - ref["pixels"][k][1].get<double>())});
    }
    CHECK(worst_px < 1e-6);
  }
}

TEST_CASE("geometry: a CROTA2 header follows the TAN formulas of WCS Paper II worked by hand") {
  // Independent of wcslib. WCS Paper II (Calabretta & Greisen 2002) §6.1 turns CROTA2 = ρ
  // with CDELT c into PC (from memory); Paper I §2 gives intermediate coordinates
  //   x = c (cos ρ · u − sin ρ · v),  y = c (sin ρ · u + cos ρ · v),   (u, v) = p − CRPIX (1-based),
  // and for TAN with the reference point at (0, 0) (Paper II §5.1.3, R_θ = cot θ), the
  // direction is (x, y, 1)/|·| in (west, north, toward the Sun): θx = atan x, θy = atan(y / √(1 + x²)).
  const double rho_deg = 30.0, c = 11.4 / kArcsecPerRad;
  const TestHeader h = crota_header(rho_deg);
  const oi::ImageGeometry g = oi::read_geometry(h.header, "crota");
  const double rho = rho_deg * kRadPerDeg;
  for (const Eigen::Vector2d& p : test_pixels()) {
    const double u = p.x() + 1.0 - 513.0, v = p.y() + 1.0 - 511.0;
    const double x = c * (std::cos(rho) * u - std::sin(rho) * v), y = c * (std::sin(rho) * u + std::cos(rho) * v);
    const Eigen::Vector2d hpc = oi::hpc_from_pixel(g, p);
    CHECK(std::abs(hpc.x() - std::atan(x)) * kArcsecPerRad < 1e-6);
    CHECK(std::abs(hpc.y() - std::atan(y / std::sqrt(1.0 + x * x))) * kArcsecPerRad < 1e-6);
  }
  // Solar north (x = 0, y > 0) lies along (u, v) ∝ (sin ρ, cos ρ): ρ from +y toward +x.
  CHECK(g.roll_deg == doctest::Approx(rho_deg).epsilon(1e-9));
  CHECK(g.sun_center_px.x() == doctest::Approx(512.0));
  CHECK(g.sun_center_px.y() == doctest::Approx(510.0));
  CHECK(g.arcsec_per_px == doctest::Approx(11.4));
}

TEST_CASE("geometry: astropy.wcs puts solar north at CROTA2 from +y toward +x") {
  // Reference: astropy.wcs (wcslib) all_world2pix of a point 1000″ due north of Sun centre.
  for (double rho : {30.0, -70.0, 160.0}) {
    CAPTURE(rho);
    const TestHeader h = crota_header(rho);
    const auto ref = astropy_wcs("north", h, {}, {{0.0, 0.0}, {0.0, 1000.0 / 3600.0}});
    const double dx = ref["pixels"][1][0].get<double>() - ref["pixels"][0][0].get<double>();
    const double dy = ref["pixels"][1][1].get<double>() - ref["pixels"][0][1].get<double>();
    CHECK(std::atan2(dx, dy) * kDegPerRad == doctest::Approx(rho).epsilon(1e-9));
    CHECK(oi::read_geometry(h.header, "north").roll_deg == doctest::Approx(rho).epsilon(1e-9));
  }
}

TEST_CASE("geometry: read_geometry(write_geometry(spec)) gives the spec back") {
  for (double roll : {0.0, 30.0, -112.5}) {
    CAPTURE(roll);
    const oi::GeometrySpec spec = test_spec(roll);
    oi::Header header;
    oi::write_geometry(header, spec);
    // FITS pixels are 1-based (FITS Standard 4.0 §8.1): Sun centre 311.5 is CRPIX1 312.5.
    CHECK(*header.number("CRPIX1") == doctest::Approx(312.5));
    CHECK(*header.text("CUNIT1") == "arcsec");
    const oi::ImageGeometry g = oi::read_geometry(header, "spec");
    CHECK(g.width == 640);
    CHECK(g.height == 480);
    CHECK(g.sun_center_px.x() == doctest::Approx(311.5).epsilon(1e-12));
    CHECK(g.sun_center_px.y() == doctest::Approx(250.25).epsilon(1e-12));
    CHECK(g.arcsec_per_px == doctest::Approx(30.0).epsilon(1e-12));
    CHECK(g.roll_deg == doctest::Approx(roll).epsilon(1e-9));
    CHECK(g.observer.lon_rad == doctest::Approx(spec.observer.lon_rad).epsilon(1e-14));
    CHECK(g.observer.lat_rad == doctest::Approx(spec.observer.lat_rad).epsilon(1e-14));
    CHECK(g.observer.dist_km == doctest::Approx(spec.observer.dist_km).epsilon(1e-14));
    // R☉ per pixel = (arcsec per pixel) / (solar angular radius asin(R☉/D) in arcsec).
    const double rsun_arcsec = std::asin(kSolarRadiusKm / (0.97 * kAuKm)) * kArcsecPerRad;
    CHECK(g.rs_per_px == doctest::Approx(30.0 / rsun_arcsec).epsilon(1e-12));
    CHECK(g.notes.empty());
  }
}

TEST_CASE("geometry: a FITS file written with write_geometry reads back, and astropy reads it alike") {
  // Through the file: write_fits → read_fits → read_geometry gives the spec back, and
  // astropy.io.fits + astropy.wcs (Debian python3-astropy) map its pixels as occulta does.
  const oi::GeometrySpec spec = test_spec(-40.0);
  oi::Header header;
  oi::write_geometry(header, spec);
  const cv::Mat pixels(spec.height, spec.width, CV_32FC1, cv::Scalar(0.0f));
  const auto dir = occulta::test::scratch_dir("geometry-fits");
  for (bool rice : {false, true}) {
    CAPTURE(rice);
    const auto path = dir / (rice ? "rice.fits" : "plain.fits");
    oi::FitsWriteOptions options;
    options.rice = rice;
    oi::write_fits(path, pixels, header, options);
    const oi::FitsImage image = oi::read_fits(path);
    const oi::ImageGeometry g = oi::read_geometry(image.header, path.string());
    CHECK(g.width == spec.width);
    CHECK(g.height == spec.height);
    CHECK(g.sun_center_px.x() == doctest::Approx(spec.sun_center_px.x()).epsilon(1e-12));
    CHECK(g.sun_center_px.y() == doctest::Approx(spec.sun_center_px.y()).epsilon(1e-12));
    CHECK(g.roll_deg == doctest::Approx(spec.roll_deg).epsilon(1e-9));
    CHECK(g.arcsec_per_px == doctest::Approx(spec.arcsec_per_px).epsilon(1e-12));
    CHECK(g.observer.dist_km == doctest::Approx(spec.observer.dist_km).epsilon(1e-12));

    std::vector<Eigen::Vector2d> probe;
    for (int k = 0; k < 30; ++k) probe.emplace_back(-5.0 + 22.0 * k, 470.0 - 16.0 * k);
    nlohmann::json request{{"fits", path.string()}, {"hdu", image.hdu}, {"pixels", nlohmann::json::array()}};
    for (const auto& p : probe) request["pixels"].push_back({p.x(), p.y()});
    const auto request_path = dir / "request.json";
    std::ofstream(request_path) << request.dump();
    const auto result =
        occulta::test::run_python("tests/external/wcs_reference.py", occulta::test::shell_quote(request_path));
    REQUIRE_MESSAGE(result.exit_code == 0, result.output);
    const auto ref = nlohmann::json::parse(result.output);
    for (std::size_t i = 0; i < probe.size(); ++i) {
      const Eigen::Vector2d hpc = oi::hpc_from_pixel(g, probe[i]);
      CHECK(std::abs(hpc.x() * kDegPerRad - ref["world"][i][0].get<double>()) * 3600.0 < 1e-3);
      CHECK(std::abs(hpc.y() * kDegPerRad - ref["world"][i][1].get<double>()) * 3600.0 < 1e-3);
    }
  }
}

TEST_CASE("geometry: an RSUN_ARC that disagrees with DSUN_OBS by more than 1 % gives a note") {
  const oi::GeometrySpec spec = test_spec(0.0);
  const double rsun_arcsec = std::asin(kSolarRadiusKm / spec.observer.dist_km) * kArcsecPerRad;
  oi::Header header;
  oi::write_geometry(header, spec);
  header.set_real("RSUN_ARC", rsun_arcsec * 1.005);
  CHECK(oi::read_geometry(header, "x.fits").notes.empty());
  header.set_real("RSUN_ARC", rsun_arcsec * 1.02);
  const auto notes = oi::read_geometry(header, "x.fits").notes;
  REQUIRE(notes.size() == 1);
  CHECK(notes[0].find("x.fits: RSUN_ARC is") == 0);
  CHECK(notes[0].find("DSUN_OBS") != std::string::npos);
}

TEST_CASE("geometry: the Sun's angular radius at 1 au from the IAU values") {
  // IAU 2015 B3 (R☉ = 695 700 km) and IAU 2012 B2 (au), computed here, not copied.
  const double expected = std::asin(695700.0 / 149597870.7);
  CHECK(oi::solar_angular_radius_rad(kAuKm) == doctest::Approx(expected).epsilon(1e-15));
  // Independent formula: the tangent from the observer touches the limb at a right angle,
  // so tan α = R / √(D² − R²).
  const double d = kAuKm, r = kSolarRadiusKm;
  CHECK(oi::solar_angular_radius_rad(kAuKm) == doctest::Approx(std::atan(r / std::sqrt(d * d - r * r))).epsilon(1e-14));
  // Reference: astropy.constants (R_sun IAU 2015 B3 nominal, au IAU 2012 B2).
  const auto result = occulta::test::run_python("tests/external/wcs_reference.py", "--solar-radius-at-1au");
  REQUIRE_MESSAGE(result.exit_code == 0, result.output);
  const double astropy_arcsec = nlohmann::json::parse(result.output)["arcsec"].get<double>();
  CHECK(oi::solar_angular_radius_rad(kAuKm) * kArcsecPerRad == doctest::Approx(astropy_arcsec).epsilon(1e-12));
}

TEST_CASE("geometry: hcc_R_heeq is a rotation taking the observer to (0, 0, D)") {
  // Thompson (2006): HCC z toward the observer, y in the plane of z and solar north, x = y × z.
  for (const auto& [lon, lat] : std::vector<std::pair<double, double>>{{0, 0}, {30, 5}, {-100, -7.25}, {170, 89}}) {
    const double observer_lon = lon;  // a named copy for CAPTURE, as above
    CAPTURE(observer_lon);
    const oi::Observer obs = oi::observer_from_degrees(lon, lat, 0.93 * kAuKm);
    const Eigen::Matrix3d R = oi::hcc_R_heeq(obs);
    CHECK((R * R.transpose() - Eigen::Matrix3d::Identity()).norm() < 1e-14);
    CHECK(R.determinant() == doctest::Approx(1.0).epsilon(1e-14));
    const Eigen::Vector3d z = R * obs.heeq_p_obs_km();
    CHECK(std::abs(z.x()) < 1e-6);
    CHECK(std::abs(z.y()) < 1e-6);
    CHECK(z.z() == doctest::Approx(obs.dist_km).epsilon(1e-14));
    // Solar north (HEEQ +Z) has no HCC x and points up in the image: y = cos B0 > 0.
    const Eigen::Vector3d north = R * Eigen::Vector3d::UnitZ();
    CHECK(std::abs(north.x()) < 1e-15);
    CHECK(north.y() == doctest::Approx(std::cos(lat * kRadPerDeg)));
    // Stonyhurst longitude grows westward (Thompson 2006): HCC x̂ is HEEQ's direction
    // at longitude Φ0 + 90° on the equator.
    const Eigen::Vector3d west = R.transpose() * Eigen::Vector3d::UnitX();
    CHECK((west - Eigen::Vector3d(std::cos((lon + 90) * kRadPerDeg), std::sin((lon + 90) * kRadPerDeg), 0)).norm() <
          1e-14);
  }
}

TEST_CASE("geometry: disc centre and limb directions meet the solar surface in HEEQ") {
  // Thompson (2006) eq. 15 with the observer at D: along (0, 0) at distance D − R☉ lies the
  // sub-observer point; a direction at elongation asin(R☉/D) grazes the limb at distance √(D² − R☉²).
  const oi::Observer obs = oi::observer_from_degrees(30.0, 5.0, 0.98 * kAuKm);
  const double D = obs.dist_km, R = kSolarRadiusKm;
  const Eigen::Vector3d centre = oi::heeq_from_hpc(obs, {0.0, 0.0}, D - R);
  CHECK((centre - R * obs.heeq_p_obs_km().normalized()).norm() < 1e-6 * R);

  const double alpha = oi::solar_angular_radius_rad(D);
  for (double psi_deg = 0.0; psi_deg < 360.0; psi_deg += 22.5) {
    CAPTURE(psi_deg);
    // The unit direction at elongation α and position angle ψ (CCW from north through east = −x).
    const double psi = psi_deg * kRadPerDeg;
    const double ux = -std::sin(alpha) * std::sin(psi), uy = std::sin(alpha) * std::cos(psi);
    const Eigen::Vector2d hpc(std::atan2(ux, std::cos(alpha)), std::asin(uy));
    const Eigen::Vector3d limb = oi::heeq_from_hpc(obs, hpc, std::sqrt(D * D - R * R));
    CHECK(limb.norm() == doctest::Approx(R).epsilon(1e-9));
    // Tangency: the line of sight is perpendicular to the radius at the limb.
    CHECK(std::abs((limb - obs.heeq_p_obs_km()).normalized().dot(limb.normalized())) < 1e-9);
    CHECK(oi::position_angle_deg(hpc) == doctest::Approx(psi_deg == 0.0 ? 0.0 : psi_deg).epsilon(1e-9));
    // And back: HEEQ → HPC recovers the direction.
    const Eigen::Vector2d back = oi::hpc_from_heeq(obs, limb);
    CHECK(std::abs(back.x() - hpc.x()) < 1e-12);
    CHECK(std::abs(back.y() - hpc.y()) < 1e-12);
  }
}

TEST_CASE("geometry: position angle runs from north through east, and sky height is in the plane of the sky") {
  // PA convention (geometry.hpp, common practice): CCW from solar north through east, east = −θx.
  const double t = 2.0 * kRadPerDeg;
  CHECK(oi::position_angle_deg({0.0, t}) == doctest::Approx(0.0));
  CHECK(oi::position_angle_deg({-t, 0.0}) == doctest::Approx(90.0));
  CHECK(oi::position_angle_deg({0.0, -t}) == doctest::Approx(180.0));
  CHECK(oi::position_angle_deg({t, 0.0}) == doctest::Approx(270.0));
  CHECK(oi::position_angle_deg({-t, t}) == doctest::Approx(45.0).epsilon(1e-3));
  const double pa_nw = oi::position_angle_deg({1e-9, 1.0 * kRadPerDeg});
  CHECK(pa_nw > 359.9);
  CHECK(pa_nw < 360.0);

  // A point in the plane of the sky (HCC z = 0, Thompson 2006 eq. 15): its direction from
  // the observer has sky height |p| / R☉ and PA atan2(−x, y).
  const oi::Observer obs = oi::observer_from_degrees(-60.0, 3.0, 0.72 * kAuKm);
  for (const Eigen::Vector3d& p : {Eigen::Vector3d(3.0, 4.0, 0.0), Eigen::Vector3d(-15.0, -2.0, 0.0),
                                   Eigen::Vector3d(0.5, -29.0, 0.0), Eigen::Vector3d(-20.0, 21.0, 0.0)}) {
    const Eigen::Vector2d hpc = oi::hpc_from_hcc(obs, p * kSolarRadiusKm);
    CHECK(oi::sky_height_rs(obs, hpc) == doctest::Approx(p.norm()).epsilon(1e-12));
    double pa = std::atan2(-p.x(), p.y()) * kDegPerRad;
    if (pa < 0) pa += 360.0;
    CHECK(oi::position_angle_deg(hpc) == doctest::Approx(pa).epsilon(1e-12));
    // hcc_from_hpc at the observer distance of p gives p back.
    const double d = (Eigen::Vector3d(0, 0, obs.dist_km) - p * kSolarRadiusKm).norm();
    CHECK((oi::hcc_from_hpc(obs, hpc, d) - p * kSolarRadiusKm).norm() < 1e-6);
  }
}

TEST_CASE("geometry: a rolled image keeps the position angle of a sky point") {
  const oi::ImageGeometry upright = geometry_of(test_spec(0.0));
  const oi::ImageGeometry rolled = geometry_of(test_spec(30.0));
  for (const Eigen::Vector2d& hpc_deg : {Eigen::Vector2d(-1.2, 0.3), Eigen::Vector2d(0.8, 0.9),
                                         Eigen::Vector2d(0.1, -1.5), Eigen::Vector2d(-0.6, -0.7)}) {
    const Eigen::Vector2d hpc = hpc_deg * kRadPerDeg;
    const Eigen::Vector2d p0 = oi::pixel_from_hpc(upright, hpc), p30 = oi::pixel_from_hpc(rolled, hpc);
    const double pa0 = oi::position_angle_deg(oi::hpc_from_pixel(upright, p0));
    const double pa30 = oi::position_angle_deg(oi::hpc_from_pixel(rolled, p30));
    CHECK(pa30 == doctest::Approx(pa0).epsilon(1e-9));
    CHECK(pa0 == doctest::Approx(oi::position_angle_deg(hpc)).epsilon(1e-9));
    // In the image the point turns with north: its angle from +y toward +x grows by the roll.
    const Eigen::Vector2d a = p0 - upright.sun_center_px, b = p30 - rolled.sun_center_px;
    double turn = (std::atan2(b.x(), b.y()) - std::atan2(a.x(), a.y())) * kDegPerRad;
    turn = std::remainder(turn, 360.0);
    CHECK(turn == doctest::Approx(30.0).epsilon(1e-9));
    CHECK(b.norm() == doctest::Approx(a.norm()).epsilon(1e-12));
  }
}

TEST_CASE("geometry: copies share one WCS and transform alike from several threads") {
  const oi::ImageGeometry g = oi::read_geometry(pc_header_arcsec().header, "threads");
  const auto pixels = test_pixels();
  std::vector<Eigen::Vector2d> expected(pixels.size());
  oi::hpc_from_pixels(g, pixels, expected);
  std::vector<std::vector<Eigen::Vector2d>> results(4, std::vector<Eigen::Vector2d>(pixels.size()));
  std::vector<std::thread> threads;
  for (auto& result : results)
    threads.emplace_back([copy = g, &pixels, &result] {
      for (int repeat = 0; repeat < 50; ++repeat) oi::hpc_from_pixels(copy, pixels, result);
    });
  for (auto& t : threads) t.join();
  for (const auto& result : results) CHECK(result == expected);
  const oi::ImageGeometry copy = g;
  CHECK(copy.wcs.get() == g.wcs.get());
}

TEST_CASE("geometry: bad headers are refused with a sentence naming the fault") {
  SUBCASE("no WCS") {
    oi::Header h = base_header().header;
    h.cards.erase(std::remove_if(h.cards.begin(), h.cards.end(),
                                 [](const oi::HeaderCard& c) { return c.key.rfind("CTYPE", 0) == 0; }),
                  h.cards.end());
    CHECK(error_of(h) == "x.fits: it has no world coordinate system (CTYPE1 and CTYPE2 are missing).");
  }
  SUBCASE("wrong CTYPE") {
    TestHeader h = crota_header(0.0);
    h.text("CTYPE1", "RA---TAN").text("CTYPE2", "DEC--TAN");
    CHECK(error_of(h.header) ==
          "x.fits: CTYPE1/CTYPE2 are \"RA---TAN\"/\"DEC--TAN\" — occulta reads helioprojective HPLN-TAN/HPLT-TAN images.");
  }
  SUBCASE("other projection") {
    TestHeader h = crota_header(0.0);
    h.text("CTYPE1", "HPLN-AZP");
    CHECK(error_of(h.header).find("\"HPLN-AZP\"") != std::string::npos);
  }
  SUBCASE("unknown CUNIT") {
    TestHeader h = crota_header(0.0);
    h.text("CUNIT2", "furlong");
    CHECK(error_of(h.header) == "x.fits: CUNIT2 is \"furlong\" — not an angle unit (occulta reads arcsec or deg).");
    h.text("CUNIT2", "m");
    CHECK(error_of(h.header).find("CUNIT2 is \"m\"") != std::string::npos);
  }
  SUBCASE("unit aliases are translated as wcslib's unitfix does") {
    TestHeader h = crota_header(0.0);
    h.text("CUNIT1", "ARCSEC").text("CUNIT2", "ARCSEC");
    CHECK(oi::read_geometry(h.header, "x.fits").arcsec_per_px == doctest::Approx(11.4));
  }
  SUBCASE("observer keywords missing") {
    oi::Header h = crota_header(0.0).header;
    std::erase_if(h.cards, [](const oi::HeaderCard& c) { return c.key == "HGLT_OBS"; });
    CHECK(error_of(h) ==
          "x.fits: the observer's position is unknown: HGLT_OBS is missing (an event file may give the observer "
          "instead).");
    std::erase_if(h.cards, [](const oi::HeaderCard& c) { return c.key == "DSUN_OBS"; });
    CHECK(error_of(h).find("HGLT_OBS and DSUN_OBS are missing") != std::string::npos);
    // The event file's observer stands in for the keywords.
    const oi::Observer given = oi::observer_from_degrees(10.0, 2.0, kAuKm);
    const oi::ImageGeometry g = oi::read_geometry(h, "x.fits", given);
    CHECK(g.observer.dist_km == kAuKm);
    CHECK(g.observer.lon_rad == doctest::Approx(10.0 * kRadPerDeg));
  }
  SUBCASE("DSUN_OBS in the wrong unit") {
    TestHeader h = crota_header(0.0);
    h.real("DSUN_OBS", 1.496e8);  // kilometres, not metres
    CHECK(error_of(h.header).find("DSUN_OBS is") != std::string::npos);
  }
  SUBCASE("no pixel scale") {
    oi::Header h = crota_header(0.0).header;
    std::erase_if(h.cards, [](const oi::HeaderCard& c) { return c.key.rfind("CDELT", 0) == 0; });
    CHECK(error_of(h) == "x.fits: its WCS gives no pixel scale (no CDELT1/CDELT2 or CDi_j keywords).");
  }
  SUBCASE("singular linear matrix") {
    TestHeader h = crota_header(0.0);
    h.real("CDELT1", 0.0);
    CHECK(error_of(h.header).find("WCS could not be set up") != std::string::npos);
  }
}

TEST_CASE("geometry: header cards that once crashed wcslib's parser are kept away from it") {
  // Regression cases from fits_fuzz. wcspih() reads past its scanner tables on a byte
  // outside ASCII (here a keyword "CRPIX" + 0xB2 followed by any other card: a SEGV in
  // libwcs), and allocates WCSAXES axes however many there are; wcsutrne() is a scanner
  // of the same kind. Each header must read as the clean one does, or be refused with a
  // sentence — never crash (the suite runs under AddressSanitizer in build-asan/).
  const TestHeader clean = crota_header(12.0);
  const oi::ImageGeometry expected = oi::read_geometry(clean.header, "clean");
  const auto with_card = [&](const std::string& key, auto set) {
    oi::Header h = clean.header;
    oi::Header extra;
    set(extra, key);
    h.cards.insert(h.cards.begin(), extra.cards.front());  // before the WCS cards, as in the crash
    return h;
  };
  const auto same_geometry = [&](const oi::Header& h) {
    const oi::ImageGeometry g = oi::read_geometry(h, "x.fits");
    CHECK(g.sun_center_px.x() == expected.sun_center_px.x());
    CHECK(g.sun_center_px.y() == expected.sun_center_px.y());
    CHECK(g.arcsec_per_px == expected.arcsec_per_px);
    CHECK(g.roll_deg == expected.roll_deg);
  };
  SUBCASE("a keyword with a byte outside ASCII (the fuzzer's crash)") {
    same_geometry(with_card("CRPIX\xb2", [](oi::Header& h, const std::string& k) { h.set_real(k, 6.5); }));
    same_geometry(with_card("CT\x80PE3", [](oi::Header& h, const std::string& k) { h.set_text(k, "HPLN-TAN"); }));
  }
  SUBCASE("a WCS string value with bytes outside ASCII is not given to wcspih") {
    same_geometry(with_card("CTYPE3", [](oi::Header& h, const std::string& k) { h.set_text(k, "FR\x80Q-\xb2OG"); }));
    same_geometry(with_card("CTYPE3", [](oi::Header& h, const std::string& k) { h.set_text(k, std::string("A\0B", 3)); }));
  }
  SUBCASE("an enormous WCSAXES, axis number or parameter index is not given to wcspih") {
    same_geometry(with_card("WCSAXES", [](oi::Header& h, const std::string& k) { h.set_integer(k, 100000); }));
    same_geometry(with_card("NAXIS", [](oi::Header& h, const std::string& k) { h.set_integer(k, 99999999); }));
    same_geometry(with_card("PV1_99999", [](oi::Header& h, const std::string& k) { h.set_real(k, 1.0); }));
    same_geometry(with_card("CRPIX99", [](oi::Header& h, const std::string& k) { h.set_real(k, 1.0); }));
  }
  SUBCASE("a CUNIT with bytes outside ASCII is refused by name") {
    TestHeader h = clean;
    h.text("CUNIT1", "arc\xb2sec");
    CHECK(error_of(h.header) == "x.fits: CUNIT1 holds characters outside printable ASCII, which a FITS string cannot.");
  }
}
