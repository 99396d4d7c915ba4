"""Reference for the regulator on the stiff periodic plant of tests/data/regulator_stiff_blade.toml
(the formulas below mirror that file) with the default weights Q = I, R = I, Qf = 0: the Riccati
differential equation
  -dP/dt = A'P + PA - P B R^-1 B'P + Q,  P(t1) = 0
integrated backwards by scipy.integrate.solve_ivp (Radau, an implicit method for stiff problems,
rtol 1e-10, atol 1e-13). Prints JSON {"t": [...], "P": [2 x 2 per time], "K": [1 x 2 per time]}
at the times given as comma-separated argv[1]."""
import json
import sys

import numpy as np
from scipy.integrate import solve_ivp

OMEGA, C0, K0, MU, B0 = 38.0, 400.0, 2e4, 0.1, 1.0
T0, T1 = 0.0, 12 * 2 * np.pi / OMEGA


def A(t):
    k = K0 * (1 + 0.8 * np.sin(OMEGA * t) + MU * np.sin(2 * OMEGA * t))
    c = C0 * (1 + 0.8 * np.cos(OMEGA * t))
    return np.array([[0.0, 1.0], [-k, -c]])


B = np.array([[0.0], [B0]])
Q = np.eye(2)
R = np.eye(1)


def rhs(t, p):
    P = p.reshape(2, 2)
    G = B.T @ P
    dP = -(A(t).T @ P + P @ A(t) - G.T @ np.linalg.solve(R, G) + Q)
    return dP.ravel()


def main():
    times = [float(x) for x in sys.argv[1].split(",")]
    sol = solve_ivp(rhs, (T1, T0), np.zeros(4), method="Radau", rtol=1e-10, atol=1e-13,
                    dense_output=True)
    if not sol.success:
        raise SystemExit("solve_ivp failed: " + sol.message)
    out = {"t": times, "P": [], "K": []}
    for t in times:
        P = sol.sol(t).reshape(2, 2)
        P = 0.5 * (P + P.T)
        out["P"].append(P.tolist())
        out["K"].append(np.linalg.solve(R, B.T @ P).tolist())
    print(json.dumps(out))


if __name__ == "__main__":
    main()
