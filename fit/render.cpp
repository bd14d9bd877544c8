// fit/render.cpp — frame renderer (approach and accuracy in render.hpp).
#include "fit/render.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <thread>

#include "imaging/constants.hpp"

namespace occulta::fit {

namespace {

// The ray of the observer that passes Sun centre at distance p (R☉) toward position angle
// pa (rad, CCW from north through east). In HCC (x west, y north, z toward the observer at
// distance D) it aims at the plane-of-sky point q (−sin pa, cos pa, 0); the line from
// (0, 0, D) to it passes Sun centre at q D / √(D² + q²), so q = p D / √(D² − p²).
Ray ray_at(const imaging::Observer& observer, double p_rs, double pa) {
  const Eigen::Matrix3d heeq_R_hcc = imaging::hcc_R_heeq(observer).transpose();
  const double d = observer.dist_km / kSolarRadiusKm;
  const double q = p_rs * d / std::sqrt(d * d - p_rs * p_rs);
  const Eigen::Vector3d hcc_target(-q * std::sin(pa), q * std::cos(pa), 0.0);
  const Eigen::Vector3d hcc_obs(0.0, 0.0, d);
  return Ray{heeq_R_hcc * hcc_obs, heeq_R_hcc * (hcc_target - hcc_obs).normalized()};
}

// Closest approach of a ray to Sun centre, and where (as a PA seen by the observer).
void closest_approach(const imaging::Observer& observer, const Ray& ray, double& p_rs, double& pa) {
  const double s0 = -ray.heeq_p_origin_rs.dot(ray.heeq_dir);
  const Eigen::Vector3d hcc = imaging::hcc_R_heeq(observer) * (ray.heeq_p_origin_rs + s0 * ray.heeq_dir);
  p_rs = hcc.norm();
  pa = std::atan2(-hcc.x(), hcc.y());
  if (pa < 0.0) pa += 2.0 * kPi;
}

template <typename Body>
void parallel_rows(int rows, int threads, Body&& body) {
  std::atomic<int> next{0};
  const auto work = [&] {
    for (int y = next++; y < rows; y = next++) body(y);
  };
  std::vector<std::thread> pool;
  for (int t = 1; t < threads; ++t) pool.emplace_back(work);
  work();
  for (auto& t : pool) t.join();
}

DensityField background_density(const RenderScene& scene) {
  const double factor = scene.background_factor;
  if (scene.background == BackgroundCorona::baumbach_allen)
    return [factor](const Eigen::Vector3d& p) { return factor * baumbach_allen_m3(p); };
  if (scene.background == BackgroundCorona::saito)
    return [factor](const Eigen::Vector3d& p) { return factor * saito_m3(p); };
  return {};
}

}  // namespace

bool BackgroundTable::covers(const imaging::Observer& o, const RenderScene& scene, double p_min_rs,
                             double p_max_rs) const {
  // The observer as a header gives it back may differ in the last bits from the one the
  // table was made for (degrees ↔ radians, metres ↔ km): equal to 1e-9 is the same place.
  const auto same = [](double a, double b) { return std::abs(a - b) <= 1e-9 * std::max(1.0, std::abs(a)); };
  return !empty() && background == scene.background && factor == scene.background_factor &&
         same(observer.lon_rad, o.lon_rad) && same(observer.lat_rad, o.lat_rad) && same(observer.dist_km, o.dist_km) &&
         std::log(p_min_rs) >= log_p0 && std::log(p_max_rs) <= log_p0 + dlog_p * (n_p - 1);
}

BackgroundTable tabulate_background(const imaging::Observer& observer, const RenderScene& scene, double p_min_rs,
                                    double p_max_rs, int threads) {
  if (threads <= 0) threads = std::max(1u, std::thread::hardware_concurrency());
  BackgroundTable table;
  table.observer = observer;
  table.background = scene.background;
  table.factor = scene.background_factor;
  const DensityField background = background_density(scene);
  if (!background) return table;
  const bool symmetric = scene.background == BackgroundCorona::baumbach_allen;
  table.n_pa = symmetric ? 1 : 180;
  table.n_p = symmetric ? 1024 : 384;
  table.dpa = 2.0 * kPi / table.n_pa;
  table.log_p0 = std::log(std::max(1.0, p_min_rs));
  table.dlog_p = std::max(1e-9, std::log(p_max_rs * 1.000001) - table.log_p0) / (table.n_p - 1);
  table.log_b.resize(static_cast<size_t>(table.n_pa) * table.n_p);
  table.log_pb.resize(table.log_b.size());
  parallel_rows(table.n_pa, threads, [&](int a) {
    for (int k = 0; k < table.n_p; ++k) {
      const Ray ray = ray_at(observer, std::exp(table.log_p0 + k * table.dlog_p), a * table.dpa);
      const Brightness b = integrate_brightness(ray, background, scene.line_of_sight);
      const size_t i = static_cast<size_t>(a) * table.n_p + k;
      table.log_b[i] = std::log(std::max(b.total_bsun, 1e-300));
      table.log_pb[i] = std::log(std::max(b.polarized_bsun, 1e-300));
    }
  });
  return table;
}

RenderedFrame render_frame(const imaging::ImageGeometry& geometry, const RenderScene& scene, int threads) {
  if (threads <= 0) threads = std::max(1u, std::thread::hardware_concurrency());
  const int w = geometry.width, h = geometry.height;
  RenderedFrame out{cv::Mat(h, w, CV_64F, cv::Scalar(0.0)), cv::Mat(h, w, CV_64F, cv::Scalar(0.0))};
  const imaging::Observer& observer = geometry.observer;

  // Every pixel's line of sight (one wcslib call) and its closest approach.
  std::vector<Eigen::Vector2d> pixels(static_cast<size_t>(w) * h), hpc(pixels.size());
  for (int y = 0; y < h; ++y)
    for (int x = 0; x < w; ++x) pixels[static_cast<size_t>(y) * w + x] = Eigen::Vector2d(x, y);
  imaging::hpc_from_pixels(geometry, pixels, hpc);
  std::vector<Ray> rays(pixels.size());
  std::vector<double> p_of(pixels.size()), pa_of(pixels.size());
  parallel_rows(h, threads, [&](int y) {
    for (int x = 0; x < w; ++x) {
      const size_t i = static_cast<size_t>(y) * w + x;
      rays[i] = ray_from_hpc(observer, hpc[i]);
      closest_approach(observer, rays[i], p_of[i], pa_of[i]);
    }
  });

  // Background table over the frame's range of p (rays meeting the disc are integrated
  // directly): the scene's own when it covers this frame, else one made now.
  const DensityField background = background_density(scene);
  BackgroundTable own;
  const BackgroundTable* table = &own;
  if (background) {
    double p_min = 1e300, p_max = 0.0;
    for (const double p : p_of)
      if (p >= 1.0) p_min = std::min(p_min, p), p_max = std::max(p_max, p);
    if (p_max > 0.0) {
      if (scene.background_table && scene.background_table->covers(observer, scene, p_min, p_max))
        table = scene.background_table.get();
      else
        own = tabulate_background(observer, scene, p_min, p_max, threads);
    }
  }
  const BackgroundTable& bg = *table;

  std::vector<ShellSheathField> fields;
  for (const ShellSheath& sheath : scene.sheaths) fields.push_back(make_sheath_field(sheath));

  parallel_rows(h, threads, [&](int y) {
    double* total = out.total_bsun.ptr<double>(y);
    double* pol = out.polarized_bsun.ptr<double>(y);
    for (int x = 0; x < w; ++x) {
      const size_t i = static_cast<size_t>(y) * w + x;
      const Ray& ray = rays[i];
      if (background && p_of[i] < 1.0) {
        const Brightness b = integrate_brightness(ray, background, scene.line_of_sight);
        total[x] += b.total_bsun, pol[x] += b.polarized_bsun;
      } else if (!bg.empty()) {
        const double fk = std::clamp((std::log(p_of[i]) - bg.log_p0) / bg.dlog_p, 0.0, bg.n_p - 1.000001);
        const int k = static_cast<int>(fk);
        const double tk = fk - k;
        double fa = bg.n_pa == 1 ? 0.0 : pa_of[i] / bg.dpa;
        const int a0 = static_cast<int>(fa) % bg.n_pa, a1 = (a0 + 1) % bg.n_pa;
        fa -= std::floor(fa);
        const auto at = [&](const std::vector<double>& v, int a) {
          const size_t j = static_cast<size_t>(a) * bg.n_p + k;
          return (1.0 - tk) * v[j] + tk * v[j + 1];
        };
        total[x] += std::exp((1.0 - fa) * at(bg.log_b, a0) + fa * at(bg.log_b, a1));
        pol[x] += std::exp((1.0 - fa) * at(bg.log_pb, a0) + fa * at(bg.log_pb, a1));
      }
      for (const ShellSheathField& field : fields) {
        const std::vector<RaySpan> spans = sheath_spans(field, ray);
        if (spans.empty()) continue;
        const DensityField density = [&field](const Eigen::Vector3d& p) { return sheath_density_m3(field, p); };
        const Brightness b = integrate_brightness_in_spans(ray, density, spans, scene.line_of_sight);
        total[x] += b.total_bsun, pol[x] += b.polarized_bsun;
      }
    }
  });
  return out;
}

}  // namespace occulta::fit
