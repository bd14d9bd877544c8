// imaging/geometry.hpp — where a pixel looks, and from where (wcslib + Eigen).
//
// Frames (Thompson 2006, A&A 449, 791):
//   HPC  helioprojective-Cartesian (θx, θy), radians; θx positive to solar west,
//        θy to solar north (FITS CTYPE HPLN-TAN / HPLT-TAN).
//   HCC  heliocentric-Cartesian, km: origin Sun centre, z toward the observer,
//        y in the plane of z and solar north, x = y × z (west).
//   HEEQ heliocentric Earth equatorial, km: x toward the intersection of the solar
//        equator and the central meridian seen from Earth, z solar north. Stonyhurst
//        heliographic longitude/latitude are HEEQ's spherical angles.
// Pixels are 0-based centres (see fits.hpp): x along FITS axis 1, y along axis 2.
// Position angle (PA) is degrees counter-clockwise from solar north through east
// (east = −θx), in [0, 360). Heights are in solar radii from Sun centre.
// Names carry their frames: heeq_p_obs is the observer's position in HEEQ; hcc_R_heeq
// rotates a HEEQ vector into HCC.
#pragma once

#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include <Eigen/Core>
#include <Eigen/Geometry>

#include "imaging/fits.hpp"

struct wcsprm;

namespace occulta::imaging {

struct Observer {
  double lon_rad = 0.0;   // Stonyhurst heliographic longitude (HGLN_OBS)
  double lat_rad = 0.0;   // Stonyhurst heliographic latitude (HGLT_OBS)
  double dist_km = 0.0;   // distance from Sun centre (DSUN_OBS, which FITS gives in metres)

  Eigen::Vector3d heeq_p_obs_km() const;
};

Observer observer_from_degrees(double lon_deg, double lat_deg, double dist_km);

// Rotation taking HEEQ vectors into the observer's HCC frame.
Eigen::Matrix3d hcc_R_heeq(const Observer& observer);

// Thompson (2006) eq. 15/16: a point at distance d (km) from the observer along (θx, θy):
//   x = d cos θy sin θx,  y = d sin θy,  z = D☉ − d cos θy cos θx.
Eigen::Vector3d hcc_from_hpc(const Observer& observer, const Eigen::Vector2d& hpc_rad, double distance_km);
Eigen::Vector2d hpc_from_hcc(const Observer& observer, const Eigen::Vector3d& hcc_p_km);
Eigen::Vector3d heeq_from_hpc(const Observer& observer, const Eigen::Vector2d& hpc_rad, double distance_km);
Eigen::Vector2d hpc_from_heeq(const Observer& observer, const Eigen::Vector3d& heeq_p_km);

// Angular radius of the Sun seen from distance d: asin(R☉ / d).
double solar_angular_radius_rad(double dist_km);

// Position angle (deg, CCW from solar north through east) and sky-plane height (R☉) of
// a helioprojective direction, both taken where the line of sight crosses the plane of
// the sky (the plane through Sun centre normal to the observer's line, HCC z = 0):
// PA = atan2(−x, y) with (x, y) ∝ (cos θy sin θx, sin θy) (Thompson 2006 eq. 15), which
// is atan2(−θx, θy) to first order near the Sun; height = D☉ tan ρ / R☉ with ρ the
// elongation from Sun centre (cos ρ = cos θx cos θy).
double position_angle_deg(const Eigen::Vector2d& hpc_rad);
double sky_height_rs(const Observer& observer, const Eigen::Vector2d& hpc_rad);

// The geometry of one frame, read from its header. Holds a wcslib wcsprm (shared,
// immutable after set-up, so copies are cheap and transforms are safe across threads).
struct ImageGeometry {
  int width = 0, height = 0;                // NAXIS1/NAXIS2 (ZNAXISn when compressed); 0 if absent
  Observer observer;
  Eigen::Vector2d sun_center_px{0.0, 0.0};  // 0-based pixel of HPC (0, 0)
  double arcsec_per_px = 0.0;               // at the reference pixel (mean of both axes)
  double rs_per_px = 0.0;                   // solar radii per pixel at Sun centre, from DSUN_OBS and R☉
  double roll_deg = 0.0;                    // angle of solar north from image +y toward +x, at
                                            // Sun centre, in (−180, 180] (= CROTA2 for a CROTA2
                                            // header with CDELTs > 0; 0 when north is up). Checked
                                            // against WCS Paper II §6.1 and astropy.wcs.
  std::vector<std::string> notes;           // warnings worth showing, e.g. RSUN_ARC disagreement
  std::shared_ptr<const wcsprm> wcs;
};

// From a header (HPLN/HPLT-TAN with CDELT+PC, CD or CROTA2; CUNIT arcsec or deg).
// `observer_override` replaces HGLN_OBS/HGLT_OBS/DSUN_OBS (an event file may give it);
// without it those keywords are required. Throws InputError(source, ...) on any fault.
ImageGeometry read_geometry(const Header& header, const std::string& source,
                            const std::optional<Observer>& observer_override = std::nullopt);

// NaN (both components) where wcslib cannot map the point, e.g. a direction behind the
// TAN projection's tangent plane.
Eigen::Vector2d hpc_from_pixel(const ImageGeometry& geometry, const Eigen::Vector2d& pixel);
Eigen::Vector2d pixel_from_hpc(const ImageGeometry& geometry, const Eigen::Vector2d& hpc_rad);

// Many pixels at once (one wcslib call): hpc_rad[i] = hpc_from_pixel(pixels[i]).
void hpc_from_pixels(const ImageGeometry& geometry, std::span<const Eigen::Vector2d> pixels,
                     std::span<Eigen::Vector2d> hpc_rad);

// Header cards describing a frame's geometry: WCS (HPLN/HPLT-TAN, CDELT in arcsec, PC
// from the roll, CRVAL 0 at CRPIX = Sun centre + 1), HGLN_OBS, HGLT_OBS, DSUN_OBS (m),
// RSUN_REF, RSUN_ARC, WCSNAME, and NAXIS/NAXIS1/NAXIS2 so that read_geometry() of the
// result gives the spec back. CDi_j and CROTAn cards already there are removed (they
// would compete with the PC matrix). Used by the synthesiser and tests.
struct GeometrySpec {
  int width = 0, height = 0;
  Observer observer;
  Eigen::Vector2d sun_center_px{0.0, 0.0};
  double arcsec_per_px = 0.0;
  double roll_deg = 0.0;  // as in ImageGeometry
};
void write_geometry(Header& header, const GeometrySpec& spec);

}  // namespace occulta::imaging
