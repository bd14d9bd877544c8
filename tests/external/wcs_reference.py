#!/usr/bin/env python3
"""Reference pixel <-> world transforms from astropy.wcs (Debian's python3-astropy,
which wraps wcslib) for tests/imaging/geometry_test.cpp.

Usage: wcs_reference.py REQUEST.json
       wcs_reference.py --solar-radius-at-1au

REQUEST.json: {"header": [[keyword, value], ...],   the header's cards, in order
               or "fits": path, "hdu": index        a FITS file's header (astropy.io.fits)
               "pixels": [[x, y], ...],             0-based pixel centres
               "world":  [[lon_deg, lat_deg], ...]} HPLN/HPLT in degrees
Prints one JSON object: {"world": all_pix2world(pixels, origin 0) in degrees, with
longitudes in (-180, 180] as HPC is signed; "pixels": all_world2pix(world, origin 0)}.

--solar-radius-at-1au prints asin(R_sun / au) in arcsec from astropy.constants
(IAU 2015 B3 nominal solar radius, IAU 2012 B2 astronomical unit).
"""
import json
import math
import sys
import warnings

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

# astropy reports the fixes wcslib applies (e.g. CROTA2 -> PC, unit aliases) as
# warnings; the transform is what is compared, so they are silenced.
warnings.simplefilter("ignore")


def main(args):
    if args == ["--solar-radius-at-1au"]:
        from astropy import constants
        ratio = constants.R_sun.to_value("m") / constants.au.to_value("m")
        print(json.dumps({"arcsec": math.degrees(math.asin(ratio)) * 3600.0}))
        return
    with open(args[0]) as f:
        request = json.load(f)
    if "fits" in request:
        with fits.open(request["fits"]) as hdul:
            header = hdul[request.get("hdu", 0)].header.copy()
    else:
        header = fits.Header()
        for key, value in request["header"]:
            header[key] = value
    wcs = WCS(header)
    out = {}
    if request.get("pixels"):
        world = wcs.all_pix2world(np.array(request["pixels"], dtype=float), 0)
        world[:, 0] = np.where(world[:, 0] > 180.0, world[:, 0] - 360.0, world[:, 0])
        out["world"] = world.tolist()
    if request.get("world"):
        out["pixels"] = wcs.all_world2pix(np.array(request["world"], dtype=float), 0).tolist()
    print(json.dumps(out))


if __name__ == "__main__":
    main(sys.argv[1:])
