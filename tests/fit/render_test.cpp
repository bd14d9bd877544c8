// tests/fit/render_test.cpp — whole frames against per-pixel line-of-sight integrations.
#include <doctest/doctest.h>

#include <cmath>

#include "fit/render.hpp"
#include "imaging/constants.hpp"

using namespace occulta;
using namespace occulta::fit;

namespace {

// A square frame seen from Earth's distance, Sun-centred, `fov_rs` solar radii across.
imaging::ImageGeometry frame(int size, double fov_rs, double lon_deg = 0.0) {
  imaging::GeometrySpec spec;
  spec.width = spec.height = size;
  spec.observer = imaging::observer_from_degrees(lon_deg, 0.0, kAuKm);
  spec.sun_center_px = Eigen::Vector2d(0.5 * (size - 1), 0.5 * (size - 1));
  spec.arcsec_per_px = std::atan(fov_rs * kSolarRadiusKm / kAuKm) * kArcsecPerRad / size;
  imaging::Header header;
  imaging::write_geometry(header, spec);
  return imaging::read_geometry(header, "render_test");
}

const ShellSheath kSheath{ShellParams{80.0 * kRadPerDeg, 10.0 * kRadPerDeg, 60.0 * kRadPerDeg, 9.0, 25.0 * kRadPerDeg, 0.3},
                          2e5, 0.08};

}  // namespace

TEST_CASE("render: background pixels equal their own line-of-sight integration") {
  // The tables (render.hpp) against integrate_brightness along each pixel's ray.
  const imaging::ImageGeometry g = frame(96, 24.0);
  for (const BackgroundCorona model : {BackgroundCorona::baumbach_allen, BackgroundCorona::saito}) {
    RenderScene scene;
    scene.background = model;
    const RenderedFrame f = render_frame(g, scene, 2);
    const DensityField density = model == BackgroundCorona::saito ? DensityField(saito_m3) : DensityField(baumbach_allen_m3);
    // Saito's √sin φ term has a cusp at the equator, which the 2°-wide PA cells smooth.
    const double tolerance = model == BackgroundCorona::saito ? 3e-3 : 1e-4;
    double worst = 0.0;
    for (int y = 3; y < 96; y += 7)
      for (int x = 2; x < 96; x += 5) {
        const Ray ray = ray_from_hpc(g.observer, imaging::hpc_from_pixel(g, Eigen::Vector2d(x, y)));
        const Brightness direct = integrate_brightness(ray, density);
        const double rel = std::abs(f.total_bsun.at<double>(y, x) / direct.total_bsun - 1.0);
        const double rel_p = std::abs(f.polarized_bsun.at<double>(y, x) / direct.polarized_bsun - 1.0);
        worst = std::max({worst, rel, rel_p});
      }
    MESSAGE("background model ", static_cast<int>(model), ": largest relative difference ", worst);
    CHECK(worst < tolerance);
  }
}

TEST_CASE("render: sheath pixels equal a brute-force sum along their rays") {
  const imaging::ImageGeometry g = frame(64, 30.0);
  RenderScene scene;
  scene.background = BackgroundCorona::none;
  scene.sheaths = {kSheath};
  const RenderedFrame f = render_frame(g, scene, 2);
  const ShellSheathField field = make_sheath_field(kSheath);
  int lit = 0, compared = 0;
  double worst = 0.0;
  for (int y = 0; y < 64; ++y)
    for (int x = 0; x < 64; ++x) {
      const double value = f.total_bsun.at<double>(y, x);
      if (value > 0.0) ++lit;
      if ((x * 7 + y * 3) % 41 != 0 || value == 0.0) continue;
      // Composite Simpson on 100 000 intervals over 0–400 R☉ of the ray, sheath density alone.
      const Ray ray = ray_from_hpc(g.observer, imaging::hpc_from_pixel(g, Eigen::Vector2d(x, y)));
      const double s0 = -ray.heeq_p_origin_rs.dot(ray.heeq_dir);
      const double a = s0 - 25.0, b = s0 + 25.0;  // the shell lies within 20 R☉ of Sun centre
      const int n = 100000;
      double sum = 0.0;
      for (int i = 0; i <= n; ++i) {
        const double wt = ((i == 0 || i == n) ? 1.0 : (i % 2 ? 4.0 : 2.0)) * (b - a) / (3.0 * n);
        const Eigen::Vector3d p = ray.heeq_p_origin_rs + (a + (b - a) * i / n) * ray.heeq_dir;
        const double nd = sheath_density_m3(field, p);
        if (nd == 0.0 || p.norm() < 1.0) continue;
        const double cchi = p.normalized().dot(ray.heeq_dir);
        sum += wt * nd * scattering_per_electron(p.norm(), 1.0 - cchi * cchi).total();
      }
      sum *= kSolarRadiusKm * 1000.0 * kElectronCrossSectionM2;
      worst = std::max(worst, std::abs(value / sum - 1.0));
      ++compared;
    }
  // The sheath's distance measure jumps slightly where the front hands over to a leg (the
  // front's in-plane distance exceeds the wall's by up to 1/cos δ there), a step in the
  // density that 3 nodes per σ resolve to ~1e-3 (measured: 1.4e-3 at worst here).
  MESSAGE("sheath pixels: largest relative difference ", worst, " over ", compared, " pixels");
  CHECK(worst < 3e-3);
  CHECK(compared >= 5);
  CHECK(lit > 200);  // the shell covers a good part of the frame
}
