"""Replays a sampled input history on the time-varying test system (gramian_tv_system.py):
x' = A(t) x + B(t) u(t), u a cubic spline through the samples of the CSV (header t,<input>),
integrated by scipy.integrate.solve_ivp (DOP853, rtol 1e-12, atol 1e-14) from x0.
usage: gramian_replay.py INPUT.csv x0_1,x0_2,x0_3   -> JSON {"x_final": [...], "energy": ...}
(energy: the integral of u^2 by Simpson's rule on the samples).
"""
import json
import os
import sys

import numpy as np
from scipy.integrate import simpson, solve_ivp
from scipy.interpolate import CubicSpline

sys.dont_write_bytecode = True  # keep tests/reference free of __pycache__
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from gramian_tv_system import A, B  # noqa: E402


def main():
    data = np.loadtxt(sys.argv[1], delimiter=",", skiprows=1, ndmin=2)
    x0 = np.array([float(v) for v in sys.argv[2].split(",")])
    t, u = data[:, 0], data[:, 1:]
    spline = CubicSpline(t, u, axis=0)
    sol = solve_ivp(lambda s, x: A(s) @ x + B(s) @ spline(s), (t[0], t[-1]), x0,
                    method="DOP853", rtol=1e-12, atol=1e-14)
    energy = float(np.sum([simpson(u[:, i] ** 2, x=t) for i in range(u.shape[1])]))
    print(json.dumps({"x_final": sol.y[:, -1].tolist(), "energy": energy}))


main()
