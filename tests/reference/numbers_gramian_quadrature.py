"""Reference Gramians of time-varying pairs by the Lyapunov differential equation (scipy).

usage: numbers_gramian_quadrature.py '{"model": "chain", "n_masses": 2, "T": 60, ...}'
The chain: n_masses point masses in a line joined by springs of stiffness k, masses burning down
linearly m_i(t) = m0_i (1 - r t) (invented numbers), a force on the first mass. States
(x_1, v_1, ..., x_n, v_n). Prints JSON {"reach": W_r(0, T)} from solve_ivp (DOP853, rtol 1e-12) on
dW/dt = A W + W A' + B B', W(0) = 0, in the states scaled by "units" when given (x_i / units_i).
"""
import json
import sys

import numpy as np
from scipy.integrate import solve_ivp


def chain(nm, k, m0, r):
    n = 2 * nm

    def a_of(t):
        a = np.zeros((n, n))
        for i in range(nm):
            m = m0[i] * (1 - r * t)
            a[2 * i, 2 * i + 1] = 1.0
            if i > 0:
                a[2 * i + 1, 2 * i] -= k / m
                a[2 * i + 1, 2 * (i - 1)] += k / m
            if i + 1 < nm:
                a[2 * i + 1, 2 * i] -= k / m
                a[2 * i + 1, 2 * (i + 1)] += k / m
        return a

    def b_of(t):
        b = np.zeros((n, 1))
        b[1, 0] = 1.0 / (m0[0] * (1 - r * t))
        return b

    return n, a_of, b_of


def main():
    d = json.loads(sys.argv[1])
    nm = int(d["n_masses"])
    n, a_of, b_of = chain(nm, float(d["k"]), [float(x) for x in d["m0"]], float(d["r"]))

    def rhs(t, y):
        w = y.reshape(n, n)
        a = a_of(t)
        b = b_of(t)
        return (a @ w + w @ a.T + b @ b.T).ravel()

    sol = solve_ivp(rhs, (0.0, float(d["T"])), np.zeros(n * n), method="DOP853", rtol=1e-12, atol=1e-14)
    w = sol.y[:, -1].reshape(n, n)
    w = 0.5 * (w + w.T)
    print(json.dumps({"reach": w.tolist(), "eigenvalues": np.linalg.eigvalsh(w).tolist()}))


main()
