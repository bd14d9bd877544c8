#!/usr/bin/python3
"""Prints, as JSON, where astropy (Debian's python3-astropy) puts Sun centre in each
FITS file given: {"path": [x, y]} in 0-based pixel coordinates (astropy.wcs origin 0),
read from the first HDU that holds an image (tile-compressed ones included).

usage: sun_center.py FILE...
"""
import json
import sys
import warnings

from astropy.io import fits
from astropy.wcs import WCS

warnings.simplefilter("ignore")  # astropy's notes on future dates and MJD-OBS fixes
out = {}
for path in sys.argv[1:]:
    with fits.open(path) as hdus:
        hdu = next(h for h in hdus if h.is_image and h.data is not None)
        x, y = WCS(hdu.header).wcs_world2pix([[0.0, 0.0]], 0)[0]
        out[path] = [float(x), float(y)]
print(json.dumps(out))
