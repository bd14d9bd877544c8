#!/usr/bin/python3
"""Writes coronagraph-like FITS frames with astropy (Debian's python3-astropy), the
"other software" that `occulta inspect` must read, plus expected.json: for each file
what astropy itself says of it (size, BITPIX, time, observer, the pixel of Sun centre
from astropy.wcs, solar radii per pixel), or that the file is broken on purpose.

usage: write_solar_frames.py OUT_DIR
"""
import json
import math
import os
import sys
import warnings

import numpy as np
from astropy.io import fits
from astropy.time import Time
from astropy.wcs import WCS

R_SUN_KM = 695700.0        # IAU 2015 B3
AU_KM = 149597870.7        # IAU 2012 B2

warnings.simplefilter("ignore")  # astropy notes on future dates and MJD-OBS fixes
out = sys.argv[1]
os.makedirs(out, exist_ok=True)
expected = {}


def solar_header(nx, ny, crpix, cdelt_arcsec, lon, lat, dist_au, date, rotation=None, cd=False, unit="arcsec"):
    h = fits.Header()
    h["CTYPE1"], h["CTYPE2"] = "HPLN-TAN", "HPLT-TAN"
    h["CUNIT1"], h["CUNIT2"] = unit, unit
    scale = 1.0 if unit == "arcsec" else 1.0 / 3600.0
    h["CRPIX1"], h["CRPIX2"] = crpix
    h["CRVAL1"], h["CRVAL2"] = 12.0 * scale, -7.0 * scale   # pointing slightly off Sun centre
    c = cdelt_arcsec * scale
    if cd:
        t = math.radians(rotation or 0.0)
        h["CD1_1"], h["CD1_2"] = c * math.cos(t), -c * math.sin(t)
        h["CD2_1"], h["CD2_2"] = c * math.sin(t), c * math.cos(t)
    else:
        h["CDELT1"], h["CDELT2"] = c, c
        if rotation is not None:
            h["CROTA2"] = rotation
    h["HGLN_OBS"], h["HGLT_OBS"] = lon, lat
    h["DSUN_OBS"] = dist_au * AU_KM * 1000.0
    h["RSUN_ARC"] = math.degrees(math.asin(R_SUN_KM / (dist_au * AU_KM))) * 3600.0
    h["DATE-OBS"] = date
    h["EXPTIME"] = 8.5
    return h


def record(name, header, bitpix, width, height, finite_fraction):
    w = WCS(header)
    # astropy.wcs (wcslib inside); origin 0 = our 0-based pixel centres.
    sx, sy = w.wcs_world2pix([[0.0, 0.0]], 0)[0]
    # Roll: where solar north points in the image, as the angle from +y toward +x of
    # the pixel step from Sun centre to a point 100" north of it.
    step = 100.0 / 3600.0  # astropy.wcs world coordinates are degrees whatever CUNIT says
    nx_, ny_ = w.wcs_world2pix([[0.0, step]], 0)[0]
    roll_deg = math.degrees(math.atan2(nx_ - sx, ny_ - sy))
    # Pixel scale at the reference pixel, degrees per pixel (astropy's own reading of
    # CDELT/PC, CD or CROTA2 and of CUNIT).
    scale_deg = float(np.sqrt(abs(np.linalg.det(w.pixel_scale_matrix))))
    dist_km = header["DSUN_OBS"] / 1000.0
    t = Time(header["DATE-OBS"], format="isot", scale="utc")
    t.precision = 3
    expected[name] = {
        "ok": True, "width": width, "height": height, "bitpix": bitpix,
        "iso": t.isot, "exposure_s": header["EXPTIME"],
        "lon_deg": header["HGLN_OBS"], "lat_deg": header["HGLT_OBS"], "dist_au": dist_km / AU_KM,
        "sun_center_px": [float(sx), float(sy)], "roll_deg": roll_deg,
        # Sky-plane solar radii per pixel at Sun centre: D☉ · (pixel angle) / R☉.
        "rs_per_px": dist_km * math.radians(scale_deg) / R_SUN_KM,
        "finite_fraction": finite_fraction,
    }


rng = np.random.default_rng(7)

# 1. int16 with BSCALE/BZERO and BLANK, CROTA2 roll, arcsec units, primary HDU.
ny, nx = 96, 128
raw = rng.integers(-20000, 20000, size=(ny, nx)).astype(np.int16)
raw[5, 7] = -32768
h = solar_header(nx, ny, (64.5, 48.5), 30.0, 15.0, -3.0, 0.985, "2031-03-14T06:12:30.250", rotation=12.5)
hdu = fits.PrimaryHDU(raw, header=h)
hdu.header["BSCALE"], hdu.header["BZERO"], hdu.header["BLANK"] = 0.5, 100.0, -32768
hdu.writeto(os.path.join(out, "int16_roll.fits"), overwrite=True)
record("int16_roll.fits", h, 16, nx, ny, 1.0 - 1.0 / (nx * ny))

# 2. float32 in an image extension, CD matrix, degree units, primary HDU empty.
data = rng.normal(100.0, 5.0, size=(80, 64)).astype(np.float32)
data[0, :4] = np.nan
h = solar_header(64, 80, (30.0, 41.0), 45.0, -60.0, 4.0, 0.96, "2031-03-14T06:20:00", rotation=-35.0, cd=True,
                 unit="deg")
fits.HDUList([fits.PrimaryHDU(), fits.ImageHDU(data, header=h)]).writeto(os.path.join(out, "float_ext_cd.fits"),
                                                                         overwrite=True)
record("float_ext_cd.fits", h, -32, 64, 80, 1.0 - 4.0 / (64 * 80))

# 3. Rice tile-compressed int16, north up.
raw = rng.integers(0, 4000, size=(64, 64)).astype(np.int16)
h = solar_header(64, 64, (32.5, 32.5), 60.0, 75.0, 0.0, 1.02, "2031-03-14T07:00:00.5")
fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(raw, header=h, compression_type="RICE_1")]).writeto(
    os.path.join(out, "rice.fits"), overwrite=True)
record("rice.fits", h, 16, 64, 64, 1.0)

# Broken on purpose: each must give a clean problem naming the fault.
h = solar_header(32, 32, (16.5, 16.5), 60.0, 0.0, 0.0, 1.0, "2031-03-14T06:00:00")
del h["HGLN_OBS"]
fits.PrimaryHDU(np.zeros((32, 32), np.float32), header=h).writeto(os.path.join(out, "no_observer.fits"),
                                                                  overwrite=True)
expected["no_observer.fits"] = {"ok": False, "phrase": "HGLN_OBS"}

h = solar_header(32, 32, (16.5, 16.5), 60.0, 0.0, 0.0, 1.0, "2031-13-04T07:00")
fits.PrimaryHDU(np.zeros((32, 32), np.float32), header=h).writeto(os.path.join(out, "bad_date.fits"),
                                                                  overwrite=True)
expected["bad_date.fits"] = {"ok": False, "phrase": "month 13"}

h = solar_header(32, 32, (16.5, 16.5), 60.0, 0.0, 0.0, 1.0, "2031-03-14T06:00:00")
for key in ("CTYPE1", "CTYPE2", "CUNIT1", "CUNIT2", "CRPIX1", "CRPIX2", "CRVAL1", "CRVAL2", "CDELT1", "CDELT2"):
    del h[key]
fits.PrimaryHDU(np.zeros((32, 32), np.float32), header=h).writeto(os.path.join(out, "no_wcs.fits"),
                                                                  overwrite=True)
expected["no_wcs.fits"] = {"ok": False, "phrase": "world coordinate system"}

with open(os.path.join(out, "not_fits.fits"), "w") as f:
    f.write("this is a text file, not FITS\n")
expected["not_fits.fits"] = {"ok": False, "phrase": "not a FITS file"}

with open(os.path.join(out, "expected.json"), "w") as f:
    json.dump(expected, f, indent=1)
