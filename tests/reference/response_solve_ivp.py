"""Reference forced response of the time-varying test scenario with scipy.integrate.solve_ivp.

The scenario (the same in tests/data/response_pumped.toml and in the C++ tests):
  A(t) = [[0, 1], [-(2 + 0.8 sin(1.7 t)), -0.15]]
  B(t) = [[0, 0], [1 + 0.4 cos(t), 0.3]]
  C(t) = [[1, 0.2 sin(t)]],  D = [[0.1, 0]]
Usage: response_solve_ivp.py INPUT.csv HOLD [X0]
The input is interpolated with HOLD (linear, or zoh: each sample held until the next) and
integrated interval by interval (DOP853, rtol 1e-12, atol 1e-14), so the kinks and jumps of the
input at the samples are never stepped over. Prints CSV rows t,x1,x2,y at the sample times.
"""
import sys

import numpy as np
from scipy.integrate import solve_ivp


def A(t):
    return np.array([[0.0, 1.0], [-(2.0 + 0.8 * np.sin(1.7 * t)), -0.15]])


def B(t):
    return np.array([[0.0, 0.0], [1.0 + 0.4 * np.cos(t), 0.3]])


def C(t):
    return np.array([[1.0, 0.2 * np.sin(t)]])


D = np.array([[0.1, 0.0]])


def main():
    data = np.loadtxt(sys.argv[1], delimiter=",", skiprows=1, ndmin=2)
    hold = sys.argv[2]
    x = np.zeros(2) if len(sys.argv) < 4 else np.array([float(v) for v in sys.argv[3].split(",")])
    t, u = data[:, 0], data[:, 1:]
    rows = []

    def emit(k, x):
        y = C(t[k]) @ x + D @ u[k]
        rows.append([t[k], *x, *y])

    emit(0, x)
    for k in range(len(t) - 1):
        a, b = t[k], t[k + 1]
        ua, ub = u[k], (u[k + 1] if hold == "linear" else u[k])

        def rhs(s, z):
            w = (s - a) / (b - a)
            return A(s) @ z + B(s) @ ((1 - w) * ua + w * ub)

        sol = solve_ivp(rhs, (a, b), x, method="DOP853", rtol=1e-12, atol=1e-14)
        x = sol.y[:, -1]
        emit(k + 1, x)
    for r in rows:
        print(",".join(repr(float(v)) for v in r))


if __name__ == "__main__":
    main()
