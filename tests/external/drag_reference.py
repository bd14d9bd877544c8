#!/usr/bin/python3
"""The drag-based model's equation of motion integrated numerically with
scipy.integrate.solve_ivp (Debian's python3-scipy), for tests/fit/arrival_test.cpp.

Vršnak et al. (2013, Sol. Phys. 285, 295): dv/dt = −γ (v − w)|v − w|, dr/dt = v.
Integrated with the DOP853 Runge–Kutta method at rtol 1e-13; no closed form is used.

usage: drag_reference.py R0_KM V0_KM_S W_KM_S GAMMA_PER_KM T_S [T_S ...]
prints one JSON line per time: {"t_s": ..., "r_km": ..., "v_km_s": ...}
"""
import json
import sys

from scipy.integrate import solve_ivp


def main(args):
    r0, v0, w, gamma = (float(a) for a in args[:4])
    times = [float(a) for a in args[4:]]

    def rhs(_t, y):
        r, v = y
        return [v, -gamma * (v - w) * abs(v - w)]

    sol = solve_ivp(rhs, (0.0, max(times)), [r0, v0], method="DOP853", t_eval=sorted(times),
                    rtol=1e-13, atol=[1e-6, 1e-12])
    if not sol.success:
        sys.exit(f"solve_ivp failed: {sol.message}")
    for t, r, v in zip(sol.t, sol.y[0], sol.y[1]):
        print(json.dumps({"t_s": t, "r_km": r, "v_km_s": v}))


if __name__ == "__main__":
    main(sys.argv[1:])
