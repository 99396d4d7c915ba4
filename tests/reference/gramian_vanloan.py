"""Reference Gramians of a constant (A, B, C) over [0, T] from scipy.

Van Loan, IEEE TAC 23 (1978) 395-404: expm([[-A, B B'], [0, A']] T) = [[F1, G1], [0, F3]] gives
the reachability Gramian W_r(T) = F3' G1 (here written with F3 = exp(A' T)); observability by
duality (A -> A', B B' -> C' C). The controllability Gramian is exp(-A T) W_r exp(-A T)'.
With "lyap" the long-window limit of a stable pair is also printed, from
scipy.linalg.solve_continuous_lyapunov (A W + W A' = -B B').

usage: gramian_vanloan.py '{"A": [[...]], "B": [[...]], "C": [[...]], "T": 2.0}'
prints JSON {"reachability", "controllability", "observability", "lyap_reach", "lyap_obs"}.
"""
import json
import sys

import numpy as np
from scipy.linalg import expm, solve_continuous_lyapunov


def van_loan(a, q, t):
    n = a.shape[0]
    blk = np.zeros((2 * n, 2 * n))
    blk[:n, :n] = -a
    blk[:n, n:] = q
    blk[n:, n:] = a.T
    e = expm(blk * t)
    f3 = e[n:, n:]
    g1 = e[:n, n:]
    w = f3.T @ g1
    return 0.5 * (w + w.T)


def main():
    d = json.loads(sys.argv[1])
    a = np.array(d["A"], dtype=float)
    b = np.array(d["B"], dtype=float)
    t = float(d["T"])
    out = {}
    wr = van_loan(a, b @ b.T, t)
    out["reachability"] = wr.tolist()
    em = expm(-a * t)
    out["controllability"] = (em @ wr @ em.T).tolist()
    if "C" in d:
        c = np.array(d["C"], dtype=float)
        out["observability"] = van_loan(a.T, c.T @ c, t).tolist()
    if d.get("lyap"):
        out["lyap_reach"] = solve_continuous_lyapunov(a, -b @ b.T).tolist()
        if "C" in d:
            out["lyap_obs"] = solve_continuous_lyapunov(a.T, -c.T @ c).tolist()
    print(json.dumps(out))


main()
