#!/usr/bin/env python3
"""Reference times from astropy.time (Debian's python3-astropy) for tests/imaging/time_test.cpp.

Usage: time_reference.py ISO [ISO ...]        one JSON line per argument
       time_reference.py --mjd MJD [MJD ...]

Each line: {"input": ..., "seconds": UTC seconds since 2000-01-01T00:00:00 with every
day 86 400 s long (leap seconds ignored, as occulta counts), "isot": astropy's
YYYY-MM-DDThh:mm:ss.sss of that time}. astropy keeps a UTC time as a two-part Julian
date (jd1 + jd2) whose days are all one day long, so the difference of Julian dates
times 86 400 is exactly the leap-second-free count.
"""
import json
import sys
import warnings

from astropy.time import Time

# Future dates make ERFA warn about "dubious years" (no leap-second table yet); the
# leap-second-free count used here does not depend on that table.
warnings.simplefilter("ignore")

J2000_UTC_JD = 2451544.5  # JD of 2000-01-01T00:00:00


def describe(label, t):
    days = (t.jd1 - J2000_UTC_JD) + t.jd2
    return {"input": label, "seconds": days * 86400.0, "isot": t.isot}


def main(args):
    if args and args[0] == "--mjd":
        for text in args[1:]:
            print(json.dumps(describe(text, Time(float(text), format="mjd", scale="utc"))))
    else:
        for text in args:
            print(json.dumps(describe(text, Time(text, scale="utc"))))


if __name__ == "__main__":
    main(sys.argv[1:])
