// fit/render.cpp — frame renderer (approach and accuracy in render.hpp).
#include "fit/render.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <span>
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
  if (scene.background == BackgroundCorona::none) return table;
  const bool symmetric = scene.background == BackgroundCorona::baumbach_allen;
  table.n_pa = symmetric ? 1 : 180;
  table.n_p = symmetric ? 1024 : 384;
  table.dpa = 2.0 * kPi / table.n_pa;
  table.log_p0 = std::log(std::max(1.0, p_min_rs));
  table.dlog_p = std::max(1e-9, std::log(p_max_rs * 1.000001) - table.log_p0) / (table.n_p - 1);
  table.log_b.resize(static_cast<size_t>(table.n_pa) * table.n_p);
  table.log_pb.resize(table.log_b.size());
  // Every ray of one closest approach p is the same ray turned about the observer–Sun line
  // (ray_at): its nodes (smooth_ray_nodes) lie at the same distances s, hence the same r
  // from Sun centre and the same scattering angle (cos χ = (s − s₀)/r). So the scattering
  // and the radial part of the density are computed once per p; each PA adds only its
  // latitude (Saito, through |sin φ| = |z|/r of its nodes). The sums are those of
  // integrate_brightness (thomson.cpp) in another order: equal to rounding.
  const double u = scene.line_of_sight.limb_darkening, factor = scene.background_factor * kM3PerCm3;
  const double bsun_per_column = kSolarRadiusKm * 1000.0 * kElectronCrossSectionM2;  // N_e ds: m⁻³ · R☉ → B☉
  parallel_rows(table.n_p, threads, [&](int k) {
    const double p_rs = std::exp(table.log_p0 + k * table.dlog_p);
    const Ray ray0 = ray_at(observer, p_rs, 0.0);
    const std::vector<RayNode> nodes = smooth_ray_nodes(ray0, scene.line_of_sight);
    const size_t n = nodes.size();
    std::vector<double> inv_r(n, 0.0), w_total(n, 0.0), w_polarized(n, 0.0);  // w: ds × per-electron scattering
    std::vector<SaitoRadial> radial(n);
    for (size_t i = 0; i < n; ++i) {
      const Eigen::Vector3d q = ray0.heeq_p_origin_rs + nodes[i].s_rs * ray0.heeq_dir;
      const double r = q.norm();
      if (r < 1.0) continue;  // no electrons inside the Sun (density.hpp)
      const double cos_chi = q.dot(ray0.heeq_dir) / r;
      const Scattering sc = scattering_per_electron(r, 1.0 - cos_chi * cos_chi, u);
      const double ds = nodes[i].ds_rs * (symmetric ? factor * baumbach_allen_cm3(r) : 1.0);
      inv_r[i] = 1.0 / r;
      w_total[i] = ds * sc.total();
      w_polarized[i] = ds * sc.polarized();
      if (!symmetric) radial[i] = saito_radial(r);
    }
    for (int a = 0; a < table.n_pa; ++a) {
      const Ray ray = a == 0 ? ray0 : ray_at(observer, p_rs, a * table.dpa);
      double total = 0.0, polarized = 0.0;
      for (size_t i = 0; i < n; ++i) {
        double density = 1.0;
        if (!symmetric) {
          const double z = ray.heeq_p_origin_rs.z() + nodes[i].s_rs * ray.heeq_dir.z();
          density = factor * saito_cm3(radial[i], std::min(1.0, std::abs(z) * inv_r[i]));
        }
        total += density * w_total[i];
        polarized += density * w_polarized[i];
      }
      const size_t j = static_cast<size_t>(a) * table.n_p + k;
      table.log_b[j] = std::log(std::max(total * bsun_per_column, 1e-300));
      table.log_pb[j] = std::log(std::max(polarized * bsun_per_column, 1e-300));
    }
  });
  return table;
}

RenderedFrame render_frame(const imaging::ImageGeometry& geometry, const RenderScene& scene, int threads) {
  if (threads <= 0) threads = std::max(1u, std::thread::hardware_concurrency());
  const int w = geometry.width, h = geometry.height;
  // Every pixel is written below, so the planes need no clearing.
  RenderedFrame out{cv::Mat(h, w, CV_64F), cv::Mat(h, w, CV_64F)};
  const imaging::Observer& observer = geometry.observer;

  // Every pixel's helioprojective direction: wcslib, in blocks of rows (it is not shared
  // among threads).
  std::vector<Eigen::Vector2d> hpc(static_cast<size_t>(w) * h);
  {
    constexpr int kBlockRows = 32;
    std::vector<Eigen::Vector2d> pixels;
    for (int y0 = 0; y0 < h; y0 += kBlockRows) {
      const int rows = std::min(kBlockRows, h - y0);
      pixels.clear();
      for (int y = y0; y < y0 + rows; ++y)
        for (int x = 0; x < w; ++x) pixels.emplace_back(x, y);
      imaging::hpc_from_pixels(geometry, pixels, std::span(hpc).subspan(static_cast<size_t>(y0) * w, pixels.size()));
    }
  }
  // A pixel's line of sight in HCC (Thompson 2006 eq. 15; x̂ west, ŷ north, ẑ toward the
  // observer at (0, 0, D)) is the unit vector ŵ = (cos θy sin θx, sin θy, −cos θy cos θx).
  // It passes Sun centre at s₀ = −D ŵz along it, at distance p = D √(ŵx² + ŵy²), toward
  // the position angle atan2(−ŵx, ŵy) (PA from north through east, −x̂) — the same line,
  // closest approach and PA as ray_from_hpc's in HEEQ, without a rotation per pixel.
  const Eigen::Matrix3d heeq_R_hcc = imaging::hcc_R_heeq(observer).transpose();
  const Eigen::Vector3d heeq_p_obs_rs = observer.heeq_p_obs_km() / kSolarRadiusKm;
  const double d_rs = observer.dist_km / kSolarRadiusKm;
  const auto hcc_dir = [](const Eigen::Vector2d& t) {
    const double cy = std::cos(t.y());
    return Eigen::Vector3d(cy * std::sin(t.x()), std::sin(t.y()), -cy * std::cos(t.x()));
  };
  std::vector<double> p_of(hpc.size());
  std::vector<double> row_p_min(static_cast<size_t>(h), 1e300), row_p_max(static_cast<size_t>(h), 0.0);
  parallel_rows(h, threads, [&](int y) {
    for (int x = 0; x < w; ++x) {
      const size_t i = static_cast<size_t>(y) * w + x;
      const Eigen::Vector3d v = hcc_dir(hpc[i]);
      const double p = d_rs * std::hypot(v.x(), v.y());
      p_of[i] = p;
      if (p >= 1.0) row_p_min[y] = std::min(row_p_min[y], p), row_p_max[y] = std::max(row_p_max[y], p);
    }
  });

  // Background table over the frame's range of p (rays meeting the disc are integrated
  // directly): the scene's own when it covers this frame, else one made now.
  const DensityField background = background_density(scene);
  BackgroundTable own;
  const BackgroundTable* table = &own;
  if (background) {
    const double p_min = *std::min_element(row_p_min.begin(), row_p_min.end());
    const double p_max = *std::max_element(row_p_max.begin(), row_p_max.end());
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
      const Eigen::Vector3d hcc_w = hcc_dir(hpc[i]);
      const Ray ray{heeq_p_obs_rs, heeq_R_hcc * hcc_w};
      total[x] = pol[x] = 0.0;
      if (background && p_of[i] < 1.0) {
        const Brightness b = integrate_brightness(ray, background, scene.line_of_sight);
        total[x] += b.total_bsun, pol[x] += b.polarized_bsun;
      } else if (!bg.empty() && p_of[i] > 0.0 && std::isfinite(p_of[i]) && hcc_w.allFinite()) {
        // (A pixel with no finite line of sight gets no background: the table's indices
        // below would come from NaN.)
        double pa = 0.0;
        if (bg.n_pa > 1) {
          pa = std::atan2(-hcc_w.x(), hcc_w.y());
          if (pa < 0.0) pa += 2.0 * kPi;
        }
        const double fk = std::clamp((std::log(p_of[i]) - bg.log_p0) / bg.dlog_p, 0.0, bg.n_p - 1.000001);
        const int k = static_cast<int>(fk);
        const double tk = fk - k;
        double fa = pa / bg.dpa;
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
