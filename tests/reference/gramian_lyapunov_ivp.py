"""Reference Gramians of the time-varying test system (gramian_tv_system.py) over [t0, t1]:
the Lyapunov differential equations integrated by scipy.integrate.solve_ivp (DOP853,
rtol 1e-12, atol 1e-14) on all n^2 entries:
  reachability    dW/dt  = A W + W A' + B B',  W(t0) = 0, forward to t1
  controllability dW/dt0 = A W + W A' - B B',  W(t1) = 0, backward to t0
  observability   dM/dt0 = -A' M - M A - C' C, M(t1) = 0, backward to t0
usage: gramian_lyapunov_ivp.py T0 T1   -> JSON {"reachability", "controllability", "observability"}
"""
import json
import os
import sys

import numpy as np
from scipy.integrate import solve_ivp

sys.dont_write_bytecode = True  # keep tests/reference free of __pycache__
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from gramian_tv_system import A, B, C  # noqa: E402

N = 3


def integrate(f, t_from, t_to):
    sol = solve_ivp(lambda t, y: f(t, y.reshape(N, N)).ravel(), (t_from, t_to), np.zeros(N * N),
                    method="DOP853", rtol=1e-12, atol=1e-14)
    if not sol.success:
        raise SystemExit(sol.message)
    w = sol.y[:, -1].reshape(N, N)
    return (0.5 * (w + w.T)).tolist()


def main():
    t0, t1 = float(sys.argv[1]), float(sys.argv[2])
    out = {
        "reachability": integrate(lambda t, w: A(t) @ w + w @ A(t).T + B(t) @ B(t).T, t0, t1),
        "controllability": integrate(lambda t, w: A(t) @ w + w @ A(t).T - B(t) @ B(t).T, t1, t0),
        "observability": integrate(lambda t, w: -A(t).T @ w - w @ A(t) - C(t).T @ C(t), t1, t0),
    }
    print(json.dumps(out))


main()
