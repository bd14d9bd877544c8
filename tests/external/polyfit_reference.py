#!/usr/bin/python3
"""Prints, as JSON, numpy.polyfit's (Debian's python3-numpy) least-squares polynomial
through height-time points, for the kinematic fits' external check.

usage: polyfit_reference.py DEGREE REF_TIME POINT...
       polyfit_reference.py DEGREE REF_TIME @FILE

A POINT is "t,h" or "t,h,sigma"; a FILE holds one such point a line (commas or blanks).
The fit is in x = t - REF_TIME. With sigmas, numpy gets weights w = 1/sigma and
cov="unscaled" (the covariance is (X^T W X)^-1, taking the sigmas as absolute); without,
cov=True, which numpy scales by chi2/(M - (DEGREE + 1)) — the residual variance s^2.

Output: {"coefficients": [highest power first, as numpy returns them],
         "covariance": [[...], ...] (same order), "cov_mode": "unscaled" | "scaled"}
"""
import json
import sys

import numpy as np


def read_points(args):
    if len(args) == 1 and args[0].startswith("@"):
        with open(args[0][1:]) as f:
            lines = [line.replace(",", " ").split() for line in f if line.strip()]
    else:
        lines = [a.split(",") for a in args]
    return [[float(v) for v in line] for line in lines]


def main():
    if len(sys.argv) < 4:
        sys.exit(__doc__)
    degree = int(sys.argv[1])
    ref_time = float(sys.argv[2])
    points = read_points(sys.argv[3:])
    widths = {len(p) for p in points}
    if widths not in ({2}, {3}):
        sys.exit("every point needs t,h or every point t,h,sigma")
    t = np.array([p[0] for p in points])
    h = np.array([p[1] for p in points])
    x = t - ref_time
    if widths == {3}:
        sigma = np.array([p[2] for p in points])
        coef, cov = np.polyfit(x, h, degree, w=1.0 / sigma, cov="unscaled")
        mode = "unscaled"
    else:
        coef, cov = np.polyfit(x, h, degree, cov=True)
        mode = "scaled"
    print(json.dumps({"coefficients": [float(c) for c in coef],
                      "covariance": [[float(c) for c in row] for row in cov],
                      "cov_mode": mode}))


main()
