// viewer/height_time.hpp — the height–time panel of a view: the time–height map of its
// running differences along one position angle, and the kinematic fit (fit/kinematics,
// chosen as `measure` chooses it) of the view's points with its σ band.
//
// Conventions: times UTC seconds since 2000; heights R☉ in the plane of the sky; PA in
// degrees from solar north through east. Images as viewer/pictures.hpp (CV_32F, σ, NaN for
// no data); the map's rows are the polar grid's heights, its columns the view's frames.
#pragma once

#include <optional>
#include <string>

#include <opencv2/core.hpp>

#include "fit/kinematics.hpp"
#include "viewer/pictures.hpp"
#include "viewer/plot.hpp"

namespace occulta::viewer {

// The PA a view's height–time panel follows: the one picked (state.height_time_pa_deg),
// else the shown CME's automatic track in the view (viewer/cme_list.hpp), else the mean
// direction of the view's points, else none.
std::optional<double> height_time_pa(const WindowState& state, const std::string& view);

// The time–height map along pa_deg: per frame, the mean of the polar running difference's
// columns within ±band_deg of it (NaN ignored), per height row.
cv::Mat time_height_map(const ViewPictures& view, double pa_deg, double band_deg = 2.0);

// Where the map lies: columns from halfway before the first frame to halfway after the
// last (between frames: halfway to the neighbours, drawn as equal columns), rows edge to
// edge of the polar grid's height cells.
ImageExtent time_height_extent(const ViewPictures& view);

// The kinematic fit of the view's points (the analyst's and automatic ones in the list):
// fit::choose_height_time_model, robust, as `measure` runs it on a view's track (its
// resolution floor: the polar grid's height step / √12). None with fewer than 3 points.
// Made anew at each call: the window keeps its fits in its cache (window_cache.hpp).
std::optional<fit::HeightTimeFit> height_time_fit(const WindowState& state, const ViewPictures& view);

// σ of the fitted height at utc_s from the fit's covariance (first order):
// J = [1, τ/R☉, ½τ²/(1000 R☉)], σ² = J C Jᵀ, τ = t − t_ref (s), R☉ in km.
double height_sigma_rs(const fit::HeightTimeFit& fit, double utc_s);

}  // namespace occulta::viewer
