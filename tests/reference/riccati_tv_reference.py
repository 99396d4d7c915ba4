"""Reference for the time-varying LQR test: the Riccati differential equation
  -dP/dt = A'P + PA - (PB + N) R^-1 (B'P + N') + Q,  P(t1) = Qf
integrated backwards by scipy.integrate.solve_ivp (DOP853, rtol 1e-12, atol 1e-14) for the plant
of tests/data/riccati_tv.toml and the weights of tests/data/riccati_tv_weights.toml (the formulas
below mirror those files). Prints JSON {"t": [...], "P": [n x n per time]} at the times given as
comma-separated argv[1] (default 0)."""
import json
import sys

import numpy as np
from scipy.integrate import solve_ivp


def A(t):
    return np.array([[0.0, 1.0], [-(1 + 0.5 * np.sin(t)), -0.2]])


def B(t):
    return np.array([[0.0], [1 + 0.3 * np.cos(t)]])


def Q(t):
    return np.array([[2 + np.sin(t), 0.3], [0.3, 1.0]])


def R(t):
    return np.array([[0.5 + 0.2 * np.cos(2 * t)]])


N = np.array([[0.1], [0.05]])
Qf = np.array([[1.0, 0.0], [0.0, 0.5]])
T0, T1 = 0.0, 5.0


def rhs(t, p):
    P = p.reshape(2, 2)
    G = B(t).T @ P + N.T
    dP = -(A(t).T @ P + P @ A(t) - G.T @ np.linalg.solve(R(t), G) + Q(t))
    return dP.ravel()


def main():
    times = [float(s) for s in sys.argv[1].split(",")] if len(sys.argv) > 1 else [T0]
    order = sorted(set(times), reverse=True)
    sol = solve_ivp(rhs, (T1, T0), Qf.ravel(), method="DOP853", rtol=1e-12, atol=1e-14,
                    t_eval=order, dense_output=True)
    if not sol.success:
        raise SystemExit("solve_ivp failed: " + sol.message)
    out = {"t": times, "P": [sol.sol(t).reshape(2, 2).tolist() for t in times]}
    print(json.dumps(out))


if __name__ == "__main__":
    main()
