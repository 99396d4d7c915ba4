"""Reference discrete-time model of a constant model on a uniform step H.

Usage: response_c2d.py MODEL.toml H HOLD
zoh: scipy.signal.cont2discrete(method='zoh') gives Phi = expm(A H) and Gamma.
linear: the block exponential that scipy.signal.lsim uses for interp=True,
  expm([[A H, B H, 0], [0, 0, I], [0, 0, 0]]) = [[Phi, G1, G2], ...],
  x_{k+1} = Phi x_k + (G1 - G2) u_k + G2 u_{k+1}.
Prints JSON {"phi": ..., "gamma": ...} or {"phi", "gamma0", "gamma1"}.
"""
import json
import sys
import tomllib

import numpy as np
from scipy import linalg, signal


def main():
    with open(sys.argv[1], "rb") as f:
        mats = tomllib.load(f)["matrices"]
    h, hold = float(sys.argv[2]), sys.argv[3]
    A = np.array(mats["A"], dtype=float)
    B = np.array(mats["B"], dtype=float)
    n, m = B.shape
    if hold == "zoh":
        Ad, Bd, *_ = signal.cont2discrete((A, B, np.eye(n), np.zeros((n, m))), h, method="zoh")
        print(json.dumps({"phi": Ad.tolist(), "gamma": Bd.tolist()}))
        return
    M = np.zeros((n + 2 * m, n + 2 * m))
    M[:n, :n] = A * h
    M[:n, n:n + m] = B * h
    M[n:n + m, n + m:] = np.eye(m)
    E = linalg.expm(M)
    G1, G2 = E[:n, n:n + m], E[:n, n + m:]
    print(json.dumps({"phi": E[:n, :n].tolist(), "gamma0": (G1 - G2).tolist(), "gamma1": G2.tolist()}))


if __name__ == "__main__":
    main()
