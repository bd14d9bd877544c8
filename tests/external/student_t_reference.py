#!/usr/bin/python3
"""Prints, as JSON lines, Student's t quantile at the normal's 2-sigma point from scipy
(Debian's python3-scipy), for the kinematic fits' small-sample widening.

usage: student_t_reference.py DOF...

Output, one line per DOF: {"dof": DOF, "t": scipy.stats.t.ppf(scipy.stats.norm.cdf(2), DOF),
"central": scipy.stats.t.cdf(2.5, DOF) - scipy.stats.t.cdf(-2.5, DOF)}
"""
import json
import sys

from scipy import stats

for arg in sys.argv[1:]:
    dof = int(arg)
    print(json.dumps({"dof": dof, "t": float(stats.t.ppf(stats.norm.cdf(2.0), dof)),
                      "central": float(stats.t.cdf(2.5, dof) - stats.t.cdf(-2.5, dof))}))
