// fit/thomson.cpp — Billings coefficients, per-electron scattering, line-of-sight sums.
#include "fit/thomson.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include "imaging/constants.hpp"

namespace occulta::fit {

namespace {

constexpr double kMetresPerRs = kSolarRadiusKm * 1000.0;

// Gauss–Legendre nodes and weights on [−1, 1] for n points: Newton's method on P_n from
// the Chebyshev-like first guess cos(π (i + 3/4) / (n + 1/2)) (Abramowitz & Stegun 25.4.29,
// weights 2 / ((1 − x²) P_n′(x)²)).
struct GaussLegendre {
  std::vector<double> x, w;
};
GaussLegendre gauss_legendre(int n) {
  GaussLegendre g;
  g.x.resize(n), g.w.resize(n);
  for (int i = 0; i < n; ++i) {
    double x = std::cos(kPi * (i + 0.75) / (n + 0.5)), dp = 0.0;
    for (int it = 0; it < 100; ++it) {
      double p0 = 1.0, p1 = x;  // P_0, P_1; recurrence (k+1) P_{k+1} = (2k+1) x P_k − k P_{k−1}
      for (int k = 1; k < n; ++k) {
        const double p2 = ((2.0 * k + 1.0) * x * p1 - k * p0) / (k + 1.0);
        p0 = p1, p1 = p2;
      }
      dp = n * (x * p1 - p0) / (x * x - 1.0);
      const double dx = p1 / dp;
      x -= dx;
      if (std::abs(dx) < 1e-16) break;
    }
    g.x[i] = x;
    g.w[i] = 2.0 / ((1.0 - x * x) * dp * dp);
  }
  return g;
}

// Rules for 3, 8, 16, …, 256 nodes, made once (thread-safe static initialisation).
const GaussLegendre& rule(int n) {
  static const std::array<GaussLegendre, 7> rules = [] {
    std::array<GaussLegendre, 7> r;
    r[0] = gauss_legendre(3);
    for (int i = 1; i < 7; ++i) r[i] = gauss_legendre(4 << i);  // 8 … 256
    return r;
  }();
  if (n <= 3) return rules[0];
  for (int i = 1; i < 7; ++i)
    if ((4 << i) >= n) return rules[i];
  return rules[6];
}

// The part of a ray worth integrating: inside the outer sphere, in front of the
// observer, and short of the solar surface when the ray meets the disc.
struct RayGeometry {
  double s0 = 0.0, p = 0.0;          // closest approach: distance along the ray, distance from Sun centre
  double from = 0.0, to = 0.0;       // integration limits along the ray (R☉); from ≥ to means nothing
};
RayGeometry ray_geometry(const Ray& ray, double outer_radius_rs) {
  RayGeometry g;
  const Eigen::Vector3d& o = ray.heeq_p_origin_rs;
  g.s0 = -o.dot(ray.heeq_dir);
  g.p = (o + g.s0 * ray.heeq_dir).norm();
  if (g.p >= outer_radius_rs) return g;
  const double half = std::sqrt(outer_radius_rs * outer_radius_rs - g.p * g.p);
  g.from = std::max(0.0, g.s0 - half);
  g.to = g.s0 + half;
  if (g.p < 1.0) g.to = std::min(g.to, g.s0 - std::sqrt(1.0 - g.p * g.p));  // stop at the near side of the Sun
  return g;
}

// ∫ f(s) ds over [from, to] less the fine spans (smooth Gauss–Legendre in θ,
// s = s₀ + p′ tan θ with p′ = max(p, 1)), plus the fine spans (composite 3-point rule).
// f(acc, s, ds) accumulates the integrand at the distance s along the ray, weight ds.
template <typename Acc, typename F>
Acc integrate_ray(const Ray& ray, const LineOfSightOptions& options, std::span<const RaySpan> fine_in, F&& f,
                  bool spans_only = false) {
  Acc sum{};
  const RayGeometry g = ray_geometry(ray, options.outer_radius_rs);
  if (!(g.to > g.from)) return sum;
  const double scale = std::max(g.p, 1.0);
  const auto theta_of = [&](double s) { return std::atan((s - g.s0) / scale); };
  const double theta_total = theta_of(g.to) - theta_of(g.from);

  std::vector<RaySpan> fine;
  for (const RaySpan& span : fine_in) {
    RaySpan clipped = span;
    clipped.from_rs = std::max(span.from_rs, g.from);
    clipped.to_rs = std::min(span.to_rs, g.to);
    if (clipped.to_rs > clipped.from_rs) fine.push_back(clipped);
  }
  fine = merge_spans(std::move(fine));

  const auto smooth_piece = [&](double a, double b) {
    if (spans_only || !(b > a)) return;
    const double ta = theta_of(a), tb = theta_of(b);
    const int n = std::max(8, static_cast<int>(std::ceil(options.smooth_nodes * (tb - ta) / theta_total)));
    const GaussLegendre& gl = rule(n);
    const double mid = 0.5 * (ta + tb), half = 0.5 * (tb - ta);
    for (size_t i = 0; i < gl.x.size(); ++i) {
      const double theta = mid + half * gl.x[i];
      const double c = std::cos(theta);
      const double s = g.s0 + scale * std::tan(theta);
      const double ds_dtheta = scale / (c * c);
      f(sum, s, gl.w[i] * half * ds_dtheta);
    }
  };
  const auto fine_piece = [&](const RaySpan& span) {
    const GaussLegendre& gl = rule(3);
    const double length = span.to_rs - span.from_rs;
    const int pieces = std::max(1, static_cast<int>(std::ceil(length / span.max_step_rs)));
    const double h = length / pieces;
    for (int k = 0; k < pieces; ++k) {
      const double mid = span.from_rs + (k + 0.5) * h;
      for (size_t i = 0; i < 3; ++i) f(sum, mid + 0.5 * h * gl.x[i], gl.w[i] * 0.5 * h);
    }
  };

  double cursor = g.from;
  for (const RaySpan& span : fine) {
    smooth_piece(cursor, span.from_rs);
    fine_piece(span);
    cursor = span.to_rs;
  }
  smooth_piece(cursor, g.to);
  return sum;
}

}  // namespace

ScatteringCoefficients scattering_coefficients(double r_rs) {
  const double s = 1.0 / r_rs, s2 = s * s;
  const double c = std::sqrt(1.0 - s2);
  ScatteringCoefficients k;
  k.A = c * s2;
  // C = 4/3 − c − c³/3 rewritten with w = 1 − c = s²/(1 + c), free of cancellation:
  // c = 1 − w, c³ = 1 − 3w + 3w² − w³ ⇒ C = 2w − w² + w³/3.
  const double w = s2 / (1.0 + c);
  k.C = 2.0 * w - w * w + w * w * w / 3.0;
  if (s >= 0.05) {
    // ln((1 + s)/c) = atanh s, since (1 + s)/√(1 − s²) = √((1 + s)/(1 − s)).
    const double e = (c * c / s) * std::atanh(s);
    k.B = -0.125 * (1.0 - 3.0 * s2 - (1.0 + 3.0 * s2) * e);
    k.D = 0.125 * (5.0 + s2 - (5.0 - s2) * e);
  } else {
    // Series. atanh s = Σ s^(2k+1)/(2k+1), so E = (c²/s) atanh s = 1 − Σ_{k≥1} e_k s^(2k)
    // with e_k = 2/(4k² − 1). Substituted into the brackets:
    //   8D  =  Σ d_k s^(2k),  d_1 = 2 + 5 e_1 = 16/3,  d_k = 5 e_k − e_(k−1)
    //   −8B =  Σ b_k s^(2k),  b_1 = −6 + e_1 = −16/3, b_k = e_k + 3 e_(k−1)
    // i.e. D = (2/3) s² + (2/105) s⁶ + …, B = (2/3) s² − (4/15) s⁴ + …; both → (2/3) Ω²,
    // the point-source value with the disc-averaged limb darkening (thomson_test.cpp).
    const auto e_k = [](int kk) { return 2.0 / (4.0 * kk * kk - 1.0); };
    double power = s2, sum_d = (16.0 / 3.0) * power, sum_b = (-16.0 / 3.0) * power;
    for (int kk = 2; kk <= 12; ++kk) {
      power *= s2;
      sum_d += (5.0 * e_k(kk) - e_k(kk - 1)) * power;
      sum_b += (e_k(kk) + 3.0 * e_k(kk - 1)) * power;
    }
    k.D = 0.125 * sum_d;
    k.B = -0.125 * sum_b;
  }
  return k;
}

Scattering scattering_per_electron(double r_rs, double sin2_chi, double u) {
  const ScatteringCoefficients k = scattering_coefficients(r_rs);
  // Billings (1966): I_t = I₀ (π σ_e/2)[(1 − u)C + uD], I_t − I_r = I₀ (π σ_e/2) sin²χ [(1 − u)A + uB];
  // divided by B☉ σ_e with B☉ = I₀ (1 − u/3).
  const double norm = 0.5 * kPi / (1.0 - u / 3.0);
  Scattering out;
  out.tangential = norm * ((1.0 - u) * k.C + u * k.D);
  out.radial = out.tangential - norm * sin2_chi * ((1.0 - u) * k.A + u * k.B);
  return out;
}

Ray ray_from_hpc(const imaging::Observer& observer, const Eigen::Vector2d& hpc_rad) {
  Ray ray;
  const Eigen::Vector3d heeq_obs_km = observer.heeq_p_obs_km();
  ray.heeq_p_origin_rs = heeq_obs_km / kSolarRadiusKm;
  // Any point along the direction will do; one at the Sun's distance keeps digits.
  ray.heeq_dir = (imaging::heeq_from_hpc(observer, hpc_rad, observer.dist_km) - heeq_obs_km).normalized();
  return ray;
}

std::vector<RayNode> smooth_ray_nodes(const Ray& ray, const LineOfSightOptions& options) {
  return integrate_ray<std::vector<RayNode>>(
      ray, options, {}, [](std::vector<RayNode>& nodes, double s, double ds) { nodes.push_back({s, ds}); });
}

std::vector<RaySpan> merge_spans(std::vector<RaySpan> spans) {
  std::sort(spans.begin(), spans.end(), [](const RaySpan& a, const RaySpan& b) { return a.from_rs < b.from_rs; });
  std::vector<RaySpan> merged;
  for (const RaySpan& span : spans) {
    if (!(span.to_rs > span.from_rs)) continue;
    if (!merged.empty() && span.from_rs <= merged.back().to_rs) {
      merged.back().to_rs = std::max(merged.back().to_rs, span.to_rs);
      merged.back().max_step_rs = std::min(merged.back().max_step_rs, span.max_step_rs);
    } else {
      merged.push_back(span);
    }
  }
  return merged;
}

namespace {

Brightness brightness_along(const Ray& ray, const DensityField& density_m3, const LineOfSightOptions& options,
                            std::span<const RaySpan> fine, bool spans_only) {
  const double u = options.limb_darkening;
  const auto add = [&](Brightness& acc, double s, double ds) {
    const Eigen::Vector3d p = ray.heeq_p_origin_rs + s * ray.heeq_dir;
    const double n = density_m3(p);
    if (n == 0.0) return;
    const double r = p.norm();
    const double cos_chi = p.dot(ray.heeq_dir) / r;  // χ between the Sun–electron line and the line of sight
    const Scattering sc = scattering_per_electron(r, 1.0 - cos_chi * cos_chi, u);
    acc.total_bsun += n * ds * sc.total();
    acc.polarized_bsun += n * ds * sc.polarized();
  };
  Brightness b = integrate_ray<Brightness>(ray, options, fine, add, spans_only);
  // N_e (m⁻³) · ds (R☉ → m) · σ_e (m²): brightness in B☉.
  b.total_bsun *= kMetresPerRs * kElectronCrossSectionM2;
  b.polarized_bsun *= kMetresPerRs * kElectronCrossSectionM2;
  return b;
}

}  // namespace

Brightness integrate_brightness(const Ray& ray, const DensityField& density_m3, const LineOfSightOptions& options,
                                std::span<const RaySpan> fine) {
  return brightness_along(ray, density_m3, options, fine, false);
}

Brightness integrate_brightness_in_spans(const Ray& ray, const DensityField& density_m3, std::span<const RaySpan> spans,
                                         const LineOfSightOptions& options) {
  return brightness_along(ray, density_m3, options, spans, true);
}

double integrate_column_m2(const Ray& ray, const DensityField& density_m3, const LineOfSightOptions& options,
                           std::span<const RaySpan> fine) {
  const double column = integrate_ray<double>(
      ray, options, fine,
      [&](double& acc, double s, double ds) { acc += density_m3(ray.heeq_p_origin_rs + s * ray.heeq_dir) * ds; });
  return column * kMetresPerRs;
}

}  // namespace occulta::fit
