// viewer/stereo.hpp — tie-pointing between views (Inhester 2006, "Stereoscopy basics for the
// STEREO mission", arXiv:astro-ph/0612649: epipolar geometry). A place clicked on one view
// is a line of sight from that view's observer; seen from another observer it is a line
// on that view's sky, the epipolar line, and the same feature lies on it. Clicking the
// feature there gives a second line of sight; the two pass closest at the feature.
//
// Conventions: sky positions in R☉ on a view's registered display grid (x west, y north;
// viewer/state.hpp), turned into directions through that grid's own WCS (a north-up TAN
// grid, imaging/register.hpp grid_geometry — the transform that drew the frame); HEEQ
// positions in km (imaging/geometry.hpp) or R☉ where named; Stonyhurst longitude and
// latitude in degrees (positive west and north).
#pragma once

#include <optional>
#include <vector>

#include <Eigen/Core>

#include "imaging/geometry.hpp"
#include "imaging/register.hpp"
#include "viewer/pictures.hpp"

namespace occulta::viewer {

// A line of sight: from the observer, along a unit direction (HEEQ).
struct LineOfSight {
  Eigen::Vector3d heeq_p_obs_km;
  Eigen::Vector3d heeq_direction;
};

// The line of sight through a sky position of a view's grid seen from `observer`; nullopt
// where the grid's WCS maps no direction.
std::optional<LineOfSight> line_of_sight(const imaging::RegisteredGrid& grid, const imaging::Observer& observer,
                                         double x_rs, double y_rs);

// A HEEQ point (km) on another view's sky (R☉ on its grid), or nullopt when it is behind
// that observer or off its WCS.
std::optional<Eigen::Vector2d> sky_position(const imaging::RegisteredGrid& grid, const imaging::Observer& observer,
                                            const Eigen::Vector3d& heeq_p_km);

// The epipolar line: the line of sight's points within `reach_rs` of Sun centre, seen on
// another view's sky, as a polyline of `samples` points evenly spaced along the line of
// sight (the part in front of that observer). Empty when the line of sight passes farther
// than reach_rs from the Sun.
std::vector<Eigen::Vector2d> epipolar_line(const LineOfSight& seen, const imaging::RegisteredGrid& grid,
                                           const imaging::Observer& observer, double reach_rs, int samples = 200);

// The 3-D place two lines of sight point at: the midpoint of their closest approach.
struct Triangulated {
  Eigen::Vector3d heeq_p_rs;           // HEEQ, R☉
  double lon_deg = 0.0, lat_deg = 0.0;  // Stonyhurst
  double distance_rs = 0.0;            // from Sun centre
  double miss_rs = 0.0;                // how far apart the two lines pass (0: they meet)
  double angle_deg = 0.0;              // between the two lines (small: poorly determined depth)
};
// nullopt when the lines are (nearly) parallel: no depth can be had.
std::optional<Triangulated> triangulate(const LineOfSight& a, const LineOfSight& b);

// The line of sight through a mark, from its view's frame nearest the mark's time; nullopt
// when the view is not among `views` or has no frames.
std::optional<LineOfSight> line_of_sight(const SkyMark& mark, const std::vector<ViewPictures>& views);

// Two marks on two different views tied: their lines of sight triangulated; nullopt when
// either has no line of sight or the lines are parallel.
std::optional<TiePoint> tie_marks(const SkyMark& a, const SkyMark& b, const std::vector<ViewPictures>& views);

}  // namespace occulta::viewer
