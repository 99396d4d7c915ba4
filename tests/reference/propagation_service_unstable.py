"""Reference response of the unstable plant of tests/data/response_unstable.toml by
scipy.integrate.solve_ivp (DOP853, rtol 1e-13, atol 1e-300 so that only the relative tolerance
acts), interval by interval between the input samples, so the kinks of the interpolated input
are never stepped over.

  A(t) = [[0, 1], [2 + 0.6 sin(1.3 t), -0.1]],  B(t) = [[0], [1 + 0.3 cos(t)]]
Usage: propagation_service_unstable.py INPUT.csv HOLD X0   (HOLD linear or zoh, X0 "a,b")
Prints CSV rows t,tilt,rate at the sample times.
"""
import sys

import numpy as np
from scipy.integrate import solve_ivp


def A(t):
    return np.array([[0.0, 1.0], [2.0 + 0.6 * np.sin(1.3 * t), -0.1]])


def B(t):
    return np.array([[0.0], [1.0 + 0.3 * np.cos(t)]])


def main():
    data = np.loadtxt(sys.argv[1], delimiter=",", skiprows=1, ndmin=2)
    hold = sys.argv[2]
    x = np.array([float(v) for v in sys.argv[3].split(",")])
    t, u = data[:, 0], data[:, 1:]
    print(",".join(repr(float(v)) for v in [t[0], *x]))
    for k in range(len(t) - 1):
        a, b = t[k], t[k + 1]
        ua, ub = u[k], (u[k + 1] if hold == "linear" else u[k])

        def rhs(s, z):
            w = (s - a) / (b - a)
            return A(s) @ z + B(s) @ ((1 - w) * ua + w * ub)

        sol = solve_ivp(rhs, (a, b), x, method="DOP853", rtol=1e-13, atol=1e-300)
        x = sol.y[:, -1]
        print(",".join(repr(float(v)) for v in [b, *x]))


if __name__ == "__main__":
    main()
