"""Baseline of bench_response: the forced response of a constant model with
scipy.signal.lsim, as a whole process that does the same job as ordex-respond: read the model
(tomllib) and the input CSV, simulate with linear interpolation of the samples, write
t,<states>,<outputs> as CSV.

Usage: response_lsim.py MODEL.toml INPUT.csv OUTPUT.csv
"""
import sys
import tomllib

import numpy as np
from scipy import signal


def main():
    with open(sys.argv[1], "rb") as f:
        mats = tomllib.load(f)["matrices"]
    A, B, C = (np.array(mats[k], dtype=float) for k in ("A", "B", "C"))
    D = np.array(mats["D"], dtype=float) if "D" in mats else np.zeros((C.shape[0], B.shape[1]))
    data = np.loadtxt(sys.argv[2], delimiter=",", skiprows=1)
    t, u = data[:, 0], data[:, 1:]
    _, y, x = signal.lsim((A, B, C, D), u, t, interp=True)
    np.savetxt(sys.argv[3], np.hstack([t[:, None], x, y.reshape(len(t), -1)]), delimiter=",",
               fmt="%.17g", comments="",
               header=",".join(["t"] + [f"s{i + 1}" for i in range(A.shape[0])] +
                               [f"o{i + 1}" for i in range(C.shape[0])]))


if __name__ == "__main__":
    main()
