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
// bilinearly in (PA, log p, log B). Measured against per-pixel integration
// (render_test.cpp): 1e-5 (Baumbach–Allen), 3e-3 (Saito, at its equatorial cusp). A sheath is integrated per pixel, only along the
// chords that its bounding spheres cut from the ray (fit/density.hpp), and only for the
// pixels whose rays meet them. Rows are shared among threads.
#pragma once

#include <vector>

#include <opencv2/core.hpp>

#include "fit/density.hpp"
#include "fit/thomson.hpp"
#include "imaging/geometry.hpp"

namespace occulta::fit {

enum class BackgroundCorona { none, baumbach_allen, saito };

struct RenderScene {
  BackgroundCorona background = BackgroundCorona::baumbach_allen;
  double background_factor = 1.0;  // multiplies the background density
  std::vector<ShellSheath> sheaths;
  LineOfSightOptions line_of_sight;
};

struct RenderedFrame {
  cv::Mat total_bsun, polarized_bsun;  // CV_64F, geometry.height × geometry.width
};

// threads ≤ 0: std::thread::hardware_concurrency().
RenderedFrame render_frame(const imaging::ImageGeometry& geometry, const RenderScene& scene, int threads = 0);

}  // namespace occulta::fit
