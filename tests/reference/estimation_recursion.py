"""Reference for the covariance analysis tests: the discrete-time covariance recursion of a
constant system with scheduled measurements, written from the textbook formulas:
  between measurements (interval dt):  P <- Phi P Phi' + Qd,  Phi = expm(A dt),
      Qd = int_0^dt expm(A s) G Qn G' expm(A s)' ds from Van Loan's block exponential
      (C. F. Van Loan, Computing integrals involving the matrix exponential, IEEE TAC 23 (1978)
      395-404): expm([[-A, GQG'], [0, A']] dt) = [[., M12], [0, M22]], Qd = M22' M12;
  at a measurement (H, R):  K = P H' (H P H' + R)^-1,  P <- (I - K H) P  (the textbook form).
argv[1] is JSON {"A", "G", "Qn", "P0", "t0", "t1", "updates": [{"t", "H", "R"}, ...]} (in time
order); prints JSON {"P_final", "P_after": [P after each update]}.

With "monte_carlo": {"runs", "seed", "gains": [K per update, n x k]} it also simulates RUNS
plants and filters (exact discrete-time process noise, measurement noise of covariance R,
x(t0) ~ N(0, P0)) with the given gains and prints "error_covariance" (the sample covariance
of the filter error at t1) and the two-sided 99.9% chi-square bounds of a sample variance,
"chi2_low" and "chi2_high" (scipy.stats.chi2.ppf at 0.0005 and 0.9995, divided by runs - 1),
to be multiplied by the predicted variance."""
import json
import sys

import numpy as np
from scipy.linalg import expm
from scipy.stats import chi2


def discretize(A, S, dt):
    n = A.shape[0]
    M = np.zeros((2 * n, 2 * n))
    M[:n, :n] = -A
    M[:n, n:] = S
    M[n:, n:] = A.T
    E = expm(M * dt)
    Phi = E[n:, n:].T
    Qd = Phi @ E[:n, n:]
    return Phi, 0.5 * (Qd + Qd.T)


def main():
    d = json.loads(sys.argv[1])
    A, G, Qn, P = (np.array(d[k], dtype=float) for k in ("A", "G", "Qn", "P0"))
    S = G @ Qn @ G.T
    n = A.shape[0]
    t = float(d["t0"])
    after = []
    mc = d.get("monte_carlo")
    if mc:
        rng = np.random.default_rng(mc["seed"])
        runs = mc["runs"]
        x = rng.multivariate_normal(np.zeros(n), P, size=runs)   # true state
        xh = np.zeros((runs, n))                                  # estimate
    for k, u in enumerate(d["updates"]):
        dt = float(u["t"]) - t
        if dt > 0:
            Phi, Qd = discretize(A, S, dt)
            P = Phi @ P @ Phi.T + Qd
            if mc:
                x = x @ Phi.T + rng.multivariate_normal(np.zeros(n), Qd, size=runs, method="eigh")
                xh = xh @ Phi.T
            t = float(u["t"])
        H, R = np.array(u["H"], dtype=float), np.array(u["R"], dtype=float)
        K = P @ H.T @ np.linalg.inv(H @ P @ H.T + R)
        P = (np.eye(n) - K @ H) @ P
        P = 0.5 * (P + P.T)
        after.append(P.tolist())
        if mc:
            y = x @ H.T + rng.multivariate_normal(np.zeros(H.shape[0]), R, size=runs)
            Kg = np.array(mc["gains"][k], dtype=float)
            xh = xh + (y - xh @ H.T) @ Kg.T
    dt = float(d["t1"]) - t
    if dt > 0:
        Phi, Qd = discretize(A, S, dt)
        P = Phi @ P @ Phi.T + Qd
        if mc:
            x = x @ Phi.T + rng.multivariate_normal(np.zeros(n), Qd, size=runs, method="eigh")
            xh = xh @ Phi.T
    out = {"P_final": P.tolist(), "P_after": after}
    if mc:
        e = x - xh
        out["error_covariance"] = np.cov(e, rowvar=False).tolist()
        out["chi2_low"] = chi2.ppf(0.0005, runs - 1) / (runs - 1)
        out["chi2_high"] = chi2.ppf(0.9995, runs - 1) / (runs - 1)
    print(json.dumps(out))


if __name__ == "__main__":
    main()
