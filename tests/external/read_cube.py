#!/usr/bin/python3
"""Reads a cube and its table with astropy (Debian's python3-astropy) and prints JSON:
the cube's shape as numpy gives it (planes, rows, columns), every pixel as a flat list
in FITS order, the table's extension name and columns.

usage: read_cube.py FILE
"""
import json
import sys
import warnings

import numpy as np
from astropy.io import fits

warnings.simplefilter("ignore")
with fits.open(sys.argv[1]) as hdus:
    cube = hdus[0].data
    out = {"shape": list(cube.shape), "pixels": [None if not np.isfinite(v) else float(v) for v in cube.ravel()],
           "ctype3": hdus[0].header.get("CTYPE3")}
    if len(hdus) > 1:
        table = hdus[1]
        out["extname"] = table.header["EXTNAME"]
        out["columns"] = {name: [x if isinstance(x, str) else float(x) for x in table.data[name]]
                          for name in table.columns.names}
print(json.dumps(out))
