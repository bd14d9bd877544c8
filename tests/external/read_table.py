"""Reads a FITS binary table with astropy (Debian's python3-astropy: astropy.table.Table.read)
and prints, one JSON object per line, first {"units": {column: unit or null}} (units as
astropy understands them: TUNITn parsed by astropy.units), then each row as {column:
value}: numbers as numbers, text as text, missing values (NaN, TNULLn, masked) as null."""
import json
import math
import sys

import numpy as np
from astropy.table import Table

table = Table.read(sys.argv[1])
print(json.dumps({"units": {name: (None if table[name].unit is None else str(table[name].unit))
                            for name in table.colnames}}))
for row in table:
    out = {}
    for name in table.colnames:
        value = row[name]
        if np.ma.is_masked(value):
            out[name] = None
        elif isinstance(value, (np.floating, float)):
            out[name] = None if math.isnan(value) else float(value)
        elif isinstance(value, (np.integer, int)):
            out[name] = int(value)
        else:
            out[name] = str(value).rstrip(" ")
    print(json.dumps(out))
