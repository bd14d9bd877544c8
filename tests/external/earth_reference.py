#!/usr/bin/python3
"""Earth seen from the Sun with astropy (Debian's python3-astropy), for
tests/fit/arrival_test.cpp: its heliographic latitude (the solar B0 angle) and distance.

Positions from astropy's builtin ephemeris (ERFA's epv00), barycentric ICRS; the Sun–Earth
vector is Earth minus Sun. The solar rotation pole is RA 286.13°, Dec 63.87° (IAU WGCCRE,
from memory), fixed in ICRS; Earth's heliographic latitude is asin(unit(Sun→Earth) · pole).

usage: earth_reference.py ISO [ISO ...]   (UTC)
prints one JSON line per time: {"time": ..., "b0_deg": ..., "distance_km": ...}
"""
import json
import sys
import warnings

import numpy as np
from astropy.coordinates import get_body_barycentric, solar_system_ephemeris
from astropy.time import Time

warnings.simplefilter("ignore")  # ERFA's "dubious year" for dates past its leap-second table

POLE_RA, POLE_DEC = np.radians(286.13), np.radians(63.87)
POLE = np.array([np.cos(POLE_DEC) * np.cos(POLE_RA), np.cos(POLE_DEC) * np.sin(POLE_RA), np.sin(POLE_DEC)])


def main(args):
    with solar_system_ephemeris.set("builtin"):
        for text in args:
            t = Time(text, scale="utc")
            earth = get_body_barycentric("earth", t).xyz.to_value("km")
            sun = get_body_barycentric("sun", t).xyz.to_value("km")
            d = np.asarray(earth - sun, dtype=float)
            r = float(np.linalg.norm(d))
            b0 = float(np.degrees(np.arcsin(np.dot(d / r, POLE))))
            print(json.dumps({"time": text, "b0_deg": b0, "distance_km": r}))


if __name__ == "__main__":
    main(sys.argv[1:])
