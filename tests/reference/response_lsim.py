"""Reference forced response of a constant model with scipy.signal.lsim.

Usage: response_lsim.py MODEL.toml INPUT.csv HOLD [X0]
MODEL.toml: a model file whose matrices are plain numbers (read with tomllib, independently of
the toolkit's loader). INPUT.csv: header t,<inputs>. HOLD: linear (lsim interp=True) or zoh
(interp=False). X0: comma-separated initial state (default zero).
Prints CSV rows t,<states>,<outputs> at the input's sample times, full precision.
"""
import sys
import tomllib

import numpy as np
from scipy import signal


def main():
    model, inp, hold = sys.argv[1], sys.argv[2], sys.argv[3]
    with open(model, "rb") as f:
        m = tomllib.load(f)
    mats = m["matrices"]
    A = np.array(mats["A"], dtype=float)
    n = A.shape[0]
    B = np.array(mats["B"], dtype=float)
    C = np.array(mats.get("C", np.zeros((0, n))), dtype=float).reshape(-1, n)
    p = C.shape[0]
    D = np.array(mats.get("D", np.zeros((p, B.shape[1]))), dtype=float).reshape(p, B.shape[1])
    data = np.loadtxt(inp, delimiter=",", skiprows=1, ndmin=2)
    t, u = data[:, 0], data[:, 1:]
    x0 = np.zeros(n) if len(sys.argv) < 5 else np.array([float(v) for v in sys.argv[4].split(",")])
    # lsim needs at least one output row; use the identity when the model has none.
    Cl, Dl = (C, D) if p > 0 else (np.eye(n), np.zeros((n, B.shape[1])))
    _, y, x = signal.lsim((A, B, Cl, Dl), u, t, X0=x0, interp=(hold == "linear"))
    x = x.reshape(len(t), n)
    y = y.reshape(len(t), -1) if p > 0 else np.zeros((len(t), 0))
    out = np.hstack([t[:, None], x, y])
    for row in out:
        print(",".join(repr(float(v)) for v in row))


if __name__ == "__main__":
    main()
