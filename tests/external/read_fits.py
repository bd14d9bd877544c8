#!/usr/bin/python3
"""What astropy.io.fits (Debian's python3-astropy) reads from a FITS file that occulta
wrote — the reference for tests/imaging/fits_test.cpp's write checks.

usage: read_fits.py FILE

Prints one JSON object: hdu (index of the first HDU with data), bitpix (ZBITPIX for a
tile-compressed image), compressed, width, height, pixels (rows as FITS axis 2, null for
NaN, "inf"/"-inf"), and header {KEY: value} for that HDU's keywords (commentary left out).
"""
import json
import math
import sys

import numpy as np
from astropy.io import fits


def as_json(value):
    value = float(value)
    if math.isnan(value):
        return None
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return value


def main():
    with fits.open(sys.argv[1]) as hdul:
        index = next(i for i, hdu in enumerate(hdul) if hdu.data is not None)
        hdu = hdul[index]
        compressed = isinstance(hdu, fits.CompImageHDU)
        data = np.array(hdu.data, dtype=np.float64)
        header = {}
        for key, value in hdu.header.items():
            if key in ("COMMENT", "HISTORY", ""):
                continue
            header[key] = bool(value) if isinstance(value, (bool, np.bool_)) else value
        print(json.dumps({
            "hdu": index,
            "bitpix": int(hdu.header["BITPIX"]),
            "compressed": compressed,
            "width": int(data.shape[1]),
            "height": int(data.shape[0]),
            "pixels": [[as_json(v) for v in row] for row in data],
            "header": header,
        }, default=str))


if __name__ == "__main__":
    main()
