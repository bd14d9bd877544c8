// imaging/geometry.cpp — header → wcslib wcsprm, and the transforms between pixels,
// helioprojective, heliocentric and HEEQ coordinates (conventions in geometry.hpp).
#include "imaging/geometry.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string_view>

#include <wcslib/wcs.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>
#include <wcslib/wcsunits.h>

#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string in_quotes(std::string_view text) { return "\"" + std::string(text) + "\""; }

std::string trimmed(std::string_view text) {
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.remove_suffix(1);
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.remove_prefix(1);
  return std::string(text);
}

// The keywords of the primary WCS description that occulta's transforms use (WCS Paper I
// §2–3, Paper II §2): CTYPEi, CUNITi, CRPIXi, CRVALi, CDELTi, CROTAi, PCi_j, CDi_j, PVi_m,
// LONPOLE, LATPOLE. Only these reach wcspih(): its generated scanner is fragile on card
// text it was not written for — a byte outside ASCII in a keyword, value or comment makes
// it read outside its tables (a crash found by fits_fuzz), and WCSAXES = 100000 makes it
// allocate and index that many axes — so a whitelist of what the WCS needs is safer than
// guessing which inputs it mishandles. Axis numbers are 1–9, which keeps the linear
// matrix small yet lets wcssub() see (and refuse) a third axis coupled into axes 1 and 2;
// PVi_m keeps the 0–99 range of Paper II. Alternate descriptions (a letter after the
// keyword) are not read: occulta uses the primary one only.
bool is_axis_number(std::string_view digits, int first, int last) {
  if (digits.empty() || digits.size() > 2 || (digits.size() == 2 && digits[0] == '0')) return false;
  int n = 0;
  for (char c : digits) {
    if (c < '0' || c > '9') return false;
    n = 10 * n + (c - '0');
  }
  return n >= first && n <= last;
}

bool is_wcs_keyword(std::string_view key) {
  if (key == "LONPOLE" || key == "LATPOLE") return true;
  for (std::string_view stem : {"CTYPE", "CUNIT", "CRPIX", "CRVAL", "CDELT", "CROTA"})
    if (key.size() == stem.size() + 1 && key.substr(0, stem.size()) == stem)
      return is_axis_number(key.substr(stem.size()), 1, 9);
  // PCi_j, CDi_j, PVi_m: "i_j" after the two-letter stem.
  for (std::string_view stem : {"PC", "CD", "PV"}) {
    if (key.size() < 5 || key.substr(0, 2) != stem) continue;
    const std::size_t underscore = key.find('_', 2);
    if (underscore == std::string_view::npos) return false;
    const bool pv = stem == "PV";
    return is_axis_number(key.substr(2, underscore - 2), 1, 9) &&
           is_axis_number(key.substr(underscore + 1), pv ? 0 : 1, pv ? 99 : 9);
  }
  return false;
}

// FITS Standard 4.0 §4.2.1.1: string values hold printable ASCII only (32–126).
bool is_printable_ascii(std::string_view text) {
  return std::all_of(text.begin(), text.end(), [](char c) { return c >= ' ' && c <= '~'; });
}

// One WCS card as the 80-character FITS record wcspih() parses (FITS Standard 4.0
// §4.1–4.2): keyword in columns 1–8, "= " in 9–10, the value after it, no comment.
// Values wcspih() could not be given faithfully are left out, so the keyword takes its
// default or read_geometry() refuses the header as it would without it: non-finite reals
// (which FITS cannot hold), strings with characters outside printable ASCII or too long
// for a WCS string (Paper I: at most 68 characters), and logical or undefined values.
std::optional<std::string> fits_record(const HeaderCard& card) {
  if (!is_wcs_keyword(card.key)) return std::nullopt;
  char value[80] = {};
  switch (card.kind) {
    case HeaderCard::Kind::Integer:
      std::snprintf(value, sizeof value, "%20lld", card.integer);
      break;
    case HeaderCard::Kind::Real:
      if (!std::isfinite(card.real)) return std::nullopt;
      // 17 significant digits round-trip any double.
      std::snprintf(value, sizeof value, "%20.17G", card.real);
      break;
    case HeaderCard::Kind::Text: {
      if (!is_printable_ascii(card.text)) return std::nullopt;
      std::string text = "'";
      for (char c : card.text) text += (c == '\'') ? std::string("''") : std::string(1, c);
      while (text.size() < 9) text += ' ';  // strings are at least 8 characters (FITS Standard 4.0 §4.2.1)
      text += "'";
      if (text.size() > 70) return std::nullopt;
      std::snprintf(value, sizeof value, "%s", text.c_str());
      break;
    }
    case HeaderCard::Kind::Logical:
    case HeaderCard::Kind::Commentary:
    case HeaderCard::Kind::Undefined:
      return std::nullopt;
  }
  std::string record = card.key;
  record.resize(8, ' ');
  record += "= ";
  record += value;
  record.resize(80, ' ');
  return record;
}

struct WcsDeleter {
  void operator()(wcsprm* wcs) const {
    wcsfree(wcs);
    delete wcs;
  }
};

// wcsp2s()/wcss2p() take a non-const wcsprm*. Once wcsset() has run (flag == WCSSET)
// they only read it: the set-up is not redone, and since occulta never calls
// wcserr_enable(), a failing coordinate does not write an error record into wcs->err
// either. That is what makes a shared, const wcsprm safe to use from several threads;
// this is the one place where the constness is cast away.
wcsprm* mutable_wcs(const ImageGeometry& geometry) { return const_cast<wcsprm*>(geometry.wcs.get()); }

// Longitudes from wcslib may come back in [0, 360); HPC θx is signed (west positive).
double signed_degrees(double deg) { return deg > 180.0 ? deg - 360.0 : deg; }

// The header's own cards that name axis units, checked before wcslib sees them so the
// error can name the keyword. wcsutrne() applies the same aliases unitfix() would
// ("ARCSEC" → "arcsec", "DEG" → "deg"); wcsunitse() then says whether it is an angle.
void check_angle_unit(const Header& header, const std::string& key, const std::string& source) {
  const HeaderCard* card = header.find(key);
  if (!card) return;  // WCS Paper I: celestial axes default to degrees
  if (card->kind != HeaderCard::Kind::Text)
    throw InputError(source, key + " is not a text value — it should be \"arcsec\" or \"deg\"");
  std::string unit = trimmed(card->text);
  if (unit.empty()) return;
  // wcsutrne() and wcsunitse() are generated scanners too, as fragile as wcspih() on
  // bytes outside ASCII; FITS strings hold printable ASCII only (FITS Standard 4.0 §4.2.1.1).
  if (!is_printable_ascii(unit))
    throw InputError(source, key + " holds characters outside printable ASCII, which a FITS string cannot");
  std::vector<char> buffer(unit.begin(), unit.end());
  buffer.push_back('\0');
  wcsutrne(0, buffer.data(), nullptr);
  double scale = 0.0, offset = 0.0, power = 0.0;
  if (wcsunitse(buffer.data(), "deg", &scale, &offset, &power, nullptr) != 0)
    throw InputError(source, key + " is " + in_quotes(card->text) +
                                 " — not an angle unit (occulta reads arcsec or deg)");
}

std::string ctype_of(const Header& header, const char* key) {
  const HeaderCard* card = header.find(key);
  if (!card || card->kind != HeaderCard::Kind::Text) return {};
  return trimmed(card->text);
}

double required_number(const Header& header, const char* key, const std::string& source) {
  if (const HeaderCard* card = header.find(key); card && card->kind != HeaderCard::Kind::Integer &&
                                                  card->kind != HeaderCard::Kind::Real) {
    throw InputError(source, std::string(key) + " is " + in_quotes(card->text) + " — not a number");
  }
  return *header.number(key);
}

Observer observer_from_header(const Header& header, const std::string& source) {
  std::vector<std::string> missing;
  for (const char* key : {"HGLN_OBS", "HGLT_OBS", "DSUN_OBS"})
    if (!header.find(key)) missing.emplace_back(key);
  if (!missing.empty()) {
    std::string list = missing[0];
    for (std::size_t i = 1; i < missing.size(); ++i) list += (i + 1 == missing.size() ? " and " : ", ") + missing[i];
    throw InputError(source, "the observer's position is unknown: " + list +
                                 (missing.size() == 1 ? " is" : " are") +
                                 " missing (an event file may give the observer instead)");
  }
  const double lon_deg = required_number(header, "HGLN_OBS", source);
  const double lat_deg = required_number(header, "HGLT_OBS", source);
  const double dsun_m = required_number(header, "DSUN_OBS", source);
  if (!std::isfinite(lon_deg) || !std::isfinite(lat_deg) || std::abs(lat_deg) > 90.0)
    throw InputError(source, "HGLN_OBS/HGLT_OBS are " + std::to_string(lon_deg) + "/" + std::to_string(lat_deg) +
                                 " — not a heliographic longitude and latitude in degrees");
  // DSUN_OBS is in metres (Thompson 2006); a value inside the Sun is a unit mistake.
  if (!std::isfinite(dsun_m) || dsun_m <= kSolarRadiusKm * 1000.0)
    throw InputError(source, "DSUN_OBS is " + std::to_string(dsun_m) +
                                 " — the observer's distance in metres must exceed the solar radius (6.957e8 m)");
  return observer_from_degrees(lon_deg, lat_deg, dsun_m / 1000.0);
}

// The primary WCS of the header, celestial axes 1 and 2 only, set up (flag == WCSSET).
std::shared_ptr<const wcsprm> wcs_from_header(const Header& header, const std::string& source) {
  std::string text;
  int nkeyrec = 0;
  for (const HeaderCard& card : header.cards) {
    if (auto record = fits_record(card)) {
      text += *record;
      ++nkeyrec;
    }
  }
  text += std::string("END") + std::string(77, ' ');
  ++nkeyrec;

  int nreject = 0, nwcs = 0;
  wcsprm* all = nullptr;
  // WCSHDR_all: accept the informal forms real headers carry (CROTAn, CDi_j defaults...).
  if (int status = wcspih(text.data(), nkeyrec, WCSHDR_all, 0, &nreject, &nwcs, &all); status != 0)
    throw InputError(source, std::string("its WCS keywords could not be parsed (wcslib: ") + wcshdr_errmsg[status] + ")");

  const wcsprm* primary = nullptr;
  for (int i = 0; i < nwcs; ++i)
    if (all[i].alt[0] == ' ' || all[i].alt[0] == '\0') primary = &all[i];

  std::unique_ptr<wcsprm, WcsDeleter> wcs(new wcsprm{});
  wcs->flag = -1;  // wcssub(): "flag should be set to -1 if wcsdst was not previously initialized"
  int status = primary ? 0 : -1;
  if (primary) {
    // Celestial axes only: a one-plane cube keeps axis 3 out of every transform.
    int nsub = 2, axes[2] = {1, 2};
    status = wcssub(1, primary, &nsub, axes, wcs.get());
  }
  wcsvfree(&nwcs, &all);
  if (status == -1) throw InputError(source, "it has no world coordinate system (no WCS keywords)");
  if (status != 0)
    throw InputError(source, std::string("its WCS axes 1 and 2 could not be separated from the others (wcslib: ") +
                                 wcs_errmsg[status] + ")");

  cdfix(wcs.get());       // CDi_j with a blank row/column for a degenerate axis
  unitfix(0, wcs.get());  // "ARCSEC" → "arcsec" etc., which wcsset() needs
  if (status = wcsset(wcs.get()); status != 0)
    throw InputError(source, std::string("its WCS could not be set up (wcslib: ") + wcs_errmsg[status] + ")");
  if (wcs->lng != 0 || wcs->lat != 1)
    throw InputError(source, "its WCS does not put helioprojective longitude on axis 1 and latitude on axis 2");
  return std::shared_ptr<const wcsprm>(wcs.release(), WcsDeleter{});
}

}  // namespace

Eigen::Vector3d Observer::heeq_p_obs_km() const {
  // Spherical → Cartesian in HEEQ; Stonyhurst longitude/latitude are its angles (Thompson 2006).
  return dist_km * Eigen::Vector3d(std::cos(lat_rad) * std::cos(lon_rad), std::cos(lat_rad) * std::sin(lon_rad),
                                   std::sin(lat_rad));
}

Observer observer_from_degrees(double lon_deg, double lat_deg, double dist_km) {
  return Observer{lon_deg * kRadPerDeg, lat_deg * kRadPerDeg, dist_km};
}

Eigen::Matrix3d hcc_R_heeq(const Observer& observer) {
  // Thompson (2006), heliographic → heliocentric with the observer at (Φ0, B0) (from memory
  // of the paper; geometry_test checks the result is a rotation taking the observer to
  // (0, 0, D), with solar north up and x̂ west):
  //   x = r cos Θ sin(Φ−Φ0)
  //   y = r [sin Θ cos B0 − cos Θ cos(Φ−Φ0) sin B0]
  //   z = r [sin Θ sin B0 + cos Θ cos(Φ−Φ0) cos B0]
  // Written for a HEEQ vector (X, Y, Z) = r (cos Θ cos Φ, cos Θ sin Φ, sin Θ), the rows
  // are the HCC axes expressed in HEEQ: x̂ west, ŷ toward solar north, ẑ toward the observer.
  const double sl = std::sin(observer.lon_rad), cl = std::cos(observer.lon_rad);
  const double sb = std::sin(observer.lat_rad), cb = std::cos(observer.lat_rad);
  Eigen::Matrix3d R;
  R << -sl, cl, 0.0,             //
      -sb * cl, -sb * sl, cb,    //
      cb * cl, cb * sl, sb;
  return R;
}

Eigen::Vector3d hcc_from_hpc(const Observer& observer, const Eigen::Vector2d& hpc_rad, double distance_km) {
  // Thompson (2006) eq. 15.
  const double tx = hpc_rad.x(), ty = hpc_rad.y();
  return {distance_km * std::cos(ty) * std::sin(tx), distance_km * std::sin(ty),
          observer.dist_km - distance_km * std::cos(ty) * std::cos(tx)};
}

Eigen::Vector2d hpc_from_hcc(const Observer& observer, const Eigen::Vector3d& hcc_p_km) {
  // Thompson (2006) eq. 16: d = |(x, y, D − z)|, θx = arg(D − z, x), θy = asin(y / d).
  const double dz = observer.dist_km - hcc_p_km.z();
  const double d = std::sqrt(hcc_p_km.x() * hcc_p_km.x() + hcc_p_km.y() * hcc_p_km.y() + dz * dz);
  return {std::atan2(hcc_p_km.x(), dz), std::asin(hcc_p_km.y() / d)};
}

Eigen::Vector3d heeq_from_hpc(const Observer& observer, const Eigen::Vector2d& hpc_rad, double distance_km) {
  return hcc_R_heeq(observer).transpose() * hcc_from_hpc(observer, hpc_rad, distance_km);
}

Eigen::Vector2d hpc_from_heeq(const Observer& observer, const Eigen::Vector3d& heeq_p_km) {
  return hpc_from_hcc(observer, hcc_R_heeq(observer) * heeq_p_km);
}

double solar_angular_radius_rad(double dist_km) { return std::asin(kSolarRadiusKm / dist_km); }

double position_angle_deg(const Eigen::Vector2d& hpc_rad) {
  // Direction of the point's projection onto the plane of the sky, HCC (x, y) up to a
  // positive factor: (cos θy sin θx, sin θy) (Thompson 2006 eq. 15). PA counts from
  // north (+y) toward east (−x): PA = atan2(−x, y). Near the Sun this is atan2(−θx, θy).
  const double x = std::cos(hpc_rad.y()) * std::sin(hpc_rad.x()), y = std::sin(hpc_rad.y());
  double pa = std::atan2(-x, y) * kDegPerRad;
  if (pa < 0.0) pa += 360.0;
  if (pa >= 360.0) pa -= 360.0;
  return pa;
}

double sky_height_rs(const Observer& observer, const Eigen::Vector2d& hpc_rad) {
  // The line of sight from (0, 0, D) in HCC meets z = 0 at distance D tan ρ from Sun
  // centre, ρ the elongation: cos ρ = cos θx cos θy (Thompson 2006 eq. 15 with z = 0).
  const double cos_rho = std::cos(hpc_rad.x()) * std::cos(hpc_rad.y());
  const double tan_rho = std::sqrt(std::max(0.0, 1.0 - cos_rho * cos_rho)) / cos_rho;
  return observer.dist_km * tan_rho / kSolarRadiusKm;
}

ImageGeometry read_geometry(const Header& header, const std::string& source,
                            const std::optional<Observer>& observer_override) {
  const std::string ctype1 = ctype_of(header, "CTYPE1"), ctype2 = ctype_of(header, "CTYPE2");
  if (ctype1.empty() && ctype2.empty())
    throw InputError(source, "it has no world coordinate system (CTYPE1 and CTYPE2 are missing)");
  if (ctype1 != "HPLN-TAN" || ctype2 != "HPLT-TAN")
    throw InputError(source, "CTYPE1/CTYPE2 are " + in_quotes(ctype1) + "/" + in_quotes(ctype2) +
                                 " — occulta reads helioprojective HPLN-TAN/HPLT-TAN images");
  check_angle_unit(header, "CUNIT1", source);
  check_angle_unit(header, "CUNIT2", source);
  // WCS Paper I lets CDELTi default to 1 (degree, here), which is never a coronagraph's
  // scale: a header without any scale keyword is refused rather than read as 1°/pixel.
  const bool has_scale = std::any_of(header.cards.begin(), header.cards.end(), [](const HeaderCard& card) {
    return card.key == "CDELT1" || card.key == "CDELT2" || card.key.rfind("CD1_", 0) == 0 ||
           card.key.rfind("CD2_", 0) == 0;
  });
  if (!has_scale) throw InputError(source, "its WCS gives no pixel scale (no CDELT1/CDELT2 or CDi_j keywords)");

  ImageGeometry geometry;
  geometry.wcs = wcs_from_header(header, source);
  geometry.observer = observer_override ? *observer_override : observer_from_header(header, source);
  const auto axis_length = [&](const char* key, const char* compressed_key) {
    auto n = header.number(compressed_key);
    if (!n) n = header.number(key);
    return n ? static_cast<int>(*n) : 0;
  };
  geometry.width = axis_length("NAXIS1", "ZNAXIS1");
  geometry.height = axis_length("NAXIS2", "ZNAXIS2");

  geometry.sun_center_px = pixel_from_hpc(geometry, {0.0, 0.0});
  if (!geometry.sun_center_px.allFinite())
    throw InputError(source, "its WCS does not place Sun centre (HPC 0, 0) on the image plane");

  // Scale at the reference pixel: the columns of the linear matrix CDELTi·PCi_j (wcsset()
  // has folded CD or CROTA into PC and converted arcsec to degrees) are the world steps,
  // in the TAN projection plane, of one pixel along x and along y (WCS Paper I §2).
  const wcsprm& w = *geometry.wcs;
  const auto column_norm = [&](int j) {
    return std::hypot(w.cdelt[0] * w.pc[0 * 2 + j], w.cdelt[1] * w.pc[1 * 2 + j]);
  };
  geometry.arcsec_per_px = 0.5 * (column_norm(0) + column_norm(1)) * 3600.0;
  const double rsun_arcsec = solar_angular_radius_rad(geometry.observer.dist_km) * kArcsecPerRad;
  geometry.rs_per_px = geometry.arcsec_per_px / rsun_arcsec;

  // Roll: the image direction in which solar north points at Sun centre, found by
  // stepping north in HPC. roll = atan2(Δx, Δy): the angle from +y toward +x.
  const double step = std::max(geometry.arcsec_per_px, 1e-3) / kArcsecPerRad;
  const Eigen::Vector2d north = pixel_from_hpc(geometry, {0.0, step}) - pixel_from_hpc(geometry, {0.0, -step});
  geometry.roll_deg = std::atan2(north.x(), north.y()) * kDegPerRad;

  if (auto rsun_arc = header.number("RSUN_ARC")) {
    if (std::abs(*rsun_arc - rsun_arcsec) > 0.01 * rsun_arcsec) {
      char note[200];
      std::snprintf(note, sizeof note,
                    "%s: RSUN_ARC is %.2f arcsec but DSUN_OBS gives a solar radius of %.2f arcsec; "
                    "occulta uses the value from DSUN_OBS.",
                    source.c_str(), *rsun_arc, rsun_arcsec);
      geometry.notes.emplace_back(note);
    }
  }
  return geometry;
}

Eigen::Vector2d hpc_from_pixel(const ImageGeometry& geometry, const Eigen::Vector2d& pixel) {
  Eigen::Vector2d hpc;
  hpc_from_pixels(geometry, std::span<const Eigen::Vector2d>(&pixel, 1), std::span<Eigen::Vector2d>(&hpc, 1));
  return hpc;
}

void hpc_from_pixels(const ImageGeometry& geometry, std::span<const Eigen::Vector2d> pixels,
                     std::span<Eigen::Vector2d> hpc_rad) {
  // Pixels are 0-based; wcslib's pixel coordinates are FITS's 1-based ones (fits.hpp).
  // Chunks keep the scratch arrays bounded for whole-image batches.
  constexpr std::size_t kChunk = 1 << 16;
  std::vector<double> pixcrd, imgcrd, world, phi, theta;
  std::vector<int> stat;
  for (std::size_t start = 0; start < pixels.size(); start += kChunk) {
    const std::size_t n = std::min(kChunk, pixels.size() - start);
    pixcrd.resize(2 * n);
    imgcrd.resize(2 * n);
    world.resize(2 * n);
    phi.resize(n);
    theta.resize(n);
    stat.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
      pixcrd[2 * i] = pixels[start + i].x() + 1.0;
      pixcrd[2 * i + 1] = pixels[start + i].y() + 1.0;
    }
    const int status = wcsp2s(mutable_wcs(geometry), static_cast<int>(n), 2, pixcrd.data(), imgcrd.data(), phi.data(),
                              theta.data(), world.data(), stat.data());
    for (std::size_t i = 0; i < n; ++i) {
      // Status 8 marks individual invalid coordinates (stat[i] != 0); anything else failed all.
      if ((status != 0 && status != 8) || stat[i] != 0) {
        hpc_rad[start + i] = {kNaN, kNaN};
      } else {
        hpc_rad[start + i] = {signed_degrees(world[2 * i]) * kRadPerDeg, world[2 * i + 1] * kRadPerDeg};
      }
    }
  }
}

Eigen::Vector2d pixel_from_hpc(const ImageGeometry& geometry, const Eigen::Vector2d& hpc_rad) {
  double world[2] = {hpc_rad.x() * kDegPerRad, hpc_rad.y() * kDegPerRad};
  double phi = 0.0, theta = 0.0, imgcrd[2] = {}, pixcrd[2] = {};
  int stat = 0;
  const int status = wcss2p(mutable_wcs(geometry), 1, 2, world, &phi, &theta, imgcrd, pixcrd, &stat);
  if (status != 0 || stat != 0) return {kNaN, kNaN};  // e.g. behind the TAN tangent plane
  return {pixcrd[0] - 1.0, pixcrd[1] - 1.0};
}

void write_geometry(Header& header, const GeometrySpec& spec) {
  // Any other linear-matrix form would compete with the PC matrix written here.
  std::erase_if(header.cards, [](const HeaderCard& card) {
    const std::string& k = card.key;
    return k.rfind("CD1_", 0) == 0 || k.rfind("CD2_", 0) == 0 || k == "CROTA1" || k == "CROTA2";
  });
  // NAXISn describe the image to read_geometry(); write_fits() replaces structural
  // cards with ones made from the pixels it writes.
  header.set_integer("NAXIS", 2);
  header.set_integer("NAXIS1", spec.width);
  header.set_integer("NAXIS2", spec.height);
  header.set_text("WCSNAME", "Helioprojective-Cartesian", "Thompson 2006");
  header.set_text("CTYPE1", "HPLN-TAN", "helioprojective longitude, gnomonic");
  header.set_text("CTYPE2", "HPLT-TAN", "helioprojective latitude, gnomonic");
  header.set_text("CUNIT1", "arcsec");
  header.set_text("CUNIT2", "arcsec");
  // FITS pixels are 1-based: our 0-based Sun centre c is FITS pixel c + 1.
  header.set_real("CRPIX1", spec.sun_center_px.x() + 1.0, "Sun centre, 1-based");
  header.set_real("CRPIX2", spec.sun_center_px.y() + 1.0, "Sun centre, 1-based");
  header.set_real("CRVAL1", 0.0);
  header.set_real("CRVAL2", 0.0);
  header.set_real("CDELT1", spec.arcsec_per_px, "arcsec per pixel");
  header.set_real("CDELT2", spec.arcsec_per_px, "arcsec per pixel");
  // With equal CDELTs, PC for a rotation ρ (the CROTA2 → PC rule of WCS Paper II §6.1, from
  // memory; geometry_test checks the sign against astropy.wcs and a hand TAN formula):
  //   PC1_1 = cos ρ, PC1_2 = −sin ρ, PC2_1 = sin ρ, PC2_2 = cos ρ.
  // Solar north (intermediate x = 0, y > 0) then lies along pixel (sin ρ, cos ρ): at ρ
  // from +y toward +x, which is roll_deg's meaning.
  const double roll = spec.roll_deg * kRadPerDeg;
  header.set_real("PC1_1", std::cos(roll));
  header.set_real("PC1_2", -std::sin(roll));
  header.set_real("PC2_1", std::sin(roll));
  header.set_real("PC2_2", std::cos(roll));
  header.set_real("HGLN_OBS", spec.observer.lon_rad * kDegPerRad, "observer Stonyhurst longitude, deg");
  header.set_real("HGLT_OBS", spec.observer.lat_rad * kDegPerRad, "observer Stonyhurst latitude, deg");
  header.set_real("DSUN_OBS", spec.observer.dist_km * 1000.0, "observer distance from Sun centre, m");
  header.set_real("RSUN_REF", kSolarRadiusKm * 1000.0, "solar radius, m (IAU 2015 B3)");
  header.set_real("RSUN_ARC", solar_angular_radius_rad(spec.observer.dist_km) * kArcsecPerRad,
                  "solar angular radius, arcsec");
}

}  // namespace occulta::imaging
