// fit/render.hpp — a whole frame of Thomson-scattered brightness: every pixel's line of
// sight (imaging/geometry) through the background corona and any CME sheaths.
//
// Output is B and pB in units of the mean solar brightness B☉ (fit/thomson.hpp), one
// value per pixel, CV_64F, rows = image y. Pixels whose line of sight meets the disc
// hold the corona in front of it (the occulter hides them in a coronagraph anyway).
//
// Speed: the background is not integrated pixel by pixel. A spherically symmetric
// density (Baumbach–Allen) gives a brightness that depends only on the line of sight's
// closest approach p to Sun centre, so it is tabulated once per frame on 1024 values of
// log p and interpolated (log B linear in log p). Saito's density depends on latitude as
// well: tabulated on a (position angle, log p) grid of 2° × 384, interpolated
// bilinearly in (PA, log p, log B); the rays of one p share their nodes, scattering and
// radial density, so each PA adds only the latitude term (render.cpp). Measured against per-pixel integration
// (render_test.cpp): 1e-5 (Baumbach–Allen), 3e-3 (Saito, at its equatorial cusp). A sheath is integrated per pixel, only along the
// chords that its bounding spheres cut from the ray (fit/density.hpp), and only for the
// pixels whose rays meet them. Rows are shared among threads.
#pragma once

#include <memory>
#include <vector>

#include <opencv2/core.hpp>

#include "fit/density.hpp"
#include "fit/thomson.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

enum class BackgroundCorona { none, baumbach_allen, saito };

struct BackgroundTable;

struct RenderScene {
  BackgroundCorona background = BackgroundCorona::baumbach_allen;
  double background_factor = 1.0;  // multiplies the background density
  std::vector<ShellSheath> sheaths;
  LineOfSightOptions line_of_sight;
  // Optional: a table made by tabulate_background() for this scene and observer. It does
  // not depend on the pixel grid, so one table serves every frame of a view; used when it
  // covers the frame's range of p, else the frame makes its own.
  std::shared_ptr<const BackgroundTable> background_table;
};

// Background brightness against (position angle, closest approach p) for one observer:
// log B and log pB, linear in log p (one PA row for a symmetric density).
struct BackgroundTable {
  imaging::Observer observer;
  BackgroundCorona background = BackgroundCorona::none;
  double factor = 1.0;
  int n_pa = 1, n_p = 0;
  double log_p0 = 0.0, dlog_p = 1.0, dpa = 2.0 * kPi;
  std::vector<double> log_b, log_pb;  // [pa][p]
  bool empty() const { return n_p == 0; }
  bool covers(const imaging::Observer& o, const RenderScene& scene, double p_min_rs, double p_max_rs) const;
};

// The table over p ∈ [p_min_rs, p_max_rs] (p_min_rs ≥ 1: rays meeting the disc are
// integrated directly). threads ≤ 0: std::thread::hardware_concurrency().
BackgroundTable tabulate_background(const imaging::Observer& observer, const RenderScene& scene, double p_min_rs,
                                    double p_max_rs, int threads = 0);

struct RenderedFrame {
  cv::Mat total_bsun, polarized_bsun;  // CV_64F, geometry.height × geometry.width
};

// threads ≤ 0: std::thread::hardware_concurrency().
RenderedFrame render_frame(const imaging::ImageGeometry& geometry, const RenderScene& scene, int threads = 0);

}  // namespace occulta::fit
