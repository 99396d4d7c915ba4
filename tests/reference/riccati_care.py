"""Reference for the long-horizon LQR test: the algebraic Riccati equation
  A'X + XA - (XB + N) R^-1 (B'X + N') + Q = 0
solved by scipy.linalg.solve_continuous_are (argument s = N). argv[1] is JSON
{"A": .., "B": .., "Q": .., "R": .., "N": ..} (lists of rows); prints JSON {"P": .., "K": ..,
"closed_loop_eigenvalues_re": .., "closed_loop_eigenvalues_im": ..} with K = R^-1 (B'P + N')."""
import json
import sys

import numpy as np
from scipy.linalg import solve_continuous_are


def main():
    d = json.loads(sys.argv[1])
    A, B, Q, R = (np.array(d[k], dtype=float) for k in ("A", "B", "Q", "R"))
    N = np.array(d["N"], dtype=float) if "N" in d else np.zeros(B.shape)
    P = solve_continuous_are(A, B, Q, R, s=N)
    K = np.linalg.solve(R, B.T @ P + N.T)
    ev = np.linalg.eigvals(A - B @ K)
    print(json.dumps({"P": P.tolist(), "K": K.tolist(),
                      "closed_loop_eigenvalues_re": ev.real.tolist(),
                      "closed_loop_eigenvalues_im": ev.imag.tolist()}))


if __name__ == "__main__":
    main()
