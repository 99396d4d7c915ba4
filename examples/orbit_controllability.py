"""Controllability along an eccentric orbit: how well can a chaser craft be steered in a window?

The bundled model models/orbit_relative_motion.toml is the relative motion of a chaser near a
target on an invented 9200 km x 0.2 orbit (units km, s, km/s; thrust accelerations in km/s^2).
This script computes the reachability Gramian W_r(a, a + L) over sliding windows of one orbit
(ordex.gramian with window_length), for two window lengths, and plots the weakest eigenvalue
lambda_min of each window against the window's start: the smaller lambda_min, the more thrust
energy the hardest state change of that window needs (energy = d' W_r^-1 d).

Run from the repository (after building the Python package):

    PYTHONPATH=build/python /usr/bin/python3 examples/orbit_controllability.py [OUTPUT_FOLDER]

It writes OUTPUT_FOLDER/orbit_controllability.svg (default: the current folder), prints a
summary, and ends with checks that exit 1 when one fails:
  - every window's Gramian is positive definite (three thrust axes: the pair is controllable
    over any window);
  - a longer window ending at the same time has a larger weakest eigenvalue (W_r(a, b) grows
    in the semidefinite order as a moves back: the integrand Phi(b, s) B B' Phi(b, s)' is
    positive semidefinite, so by Weyl's inequality lambda_min cannot shrink);
  - the weakest window's eigenvalues agree with scipy's solution of the Lyapunov differential
    equation W' = A W + W A' + B B', W(a) = 0 (solve_ivp, an integrator outside ordex).
"""
import os
import sys

import numpy as np
import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from scipy.integrate import solve_ivp  # noqa: E402

import ordex  # noqa: E402

MODELS = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "models")


def fail(message):
    raise SystemExit("orbit_controllability: check failed: " + message)


def lyapunov_reachability(plant, a, b):
    """W_r(a, b) by scipy: W' = A W + W A' + B B' from W(a) = 0 (an independent integrator)."""
    n = len(plant.states)

    def rhs(t, w):
        W = w.reshape(n, n)
        A, B = plant.A(t), plant.B(t)
        return (A @ W + W @ A.T + B @ B.T).ravel()

    sol = solve_ivp(rhs, (a, b), np.zeros(n * n), method="DOP853", rtol=1e-11, atol=1e-14)
    if not sol.success:
        fail("scipy's Lyapunov integration failed: " + sol.message)
    W = sol.y[:, -1].reshape(n, n)
    return 0.5 * (W + W.T)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else "."
    os.makedirs(out, exist_ok=True)
    plant = ordex.load_model(os.path.join(MODELS, "orbit_relative_motion.toml"))
    t0, t1 = plant.window                      # one orbit, periapsis to periapsis
    period = t1 - t0
    short = period / 8                         # about 18 minutes
    long_ = 2 * short
    stride = short / 10                        # the same stride: the windows' ends line up

    profiles = {}
    for length in (short, long_):
        g = ordex.gramian(plant, t0, t1, kind="reachability", window_length=length, stride=stride,
                          check_fraction=1e-8, rtol=1e-10, atol=1e-14)
        profiles[length] = g.profile
    p1, p2 = profiles[short], profiles[long_]

    # The figure: lambda_min over the window start, both lengths, with the weakest window marked.
    weakest = int(np.argmin(p1.lambda_min))
    fig, ax = plt.subplots(figsize=(7.5, 4.2))
    for p, length in ((p1, short), (p2, long_)):
        ax.semilogy(p.t_start, p.lambda_min, ".-", label="windows of %.0f s" % length)
    ax.semilogy([p1.t_start[weakest]], [p1.lambda_min[weakest]], "o", mfc="none", ms=10, color="k",
                label="weakest %.0f s window" % short)
    ax.set_xlabel("window start t [s] (periapsis at 0, apoapsis at %.0f s)" % (period / 2))
    ax.set_ylabel("lambda_min of W_r(t, t + L)")
    ax.set_title("Reachability along the orbit: weakest Gramian eigenvalue per window")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize="small")
    fig.tight_layout()
    figure = os.path.join(out, "orbit_controllability.svg")
    fig.savefig(figure)
    plt.close(fig)

    print("orbit period %.1f s; %d windows of %.0f s and %d of %.0f s, stride %.1f s"
          % (period, len(p1.t_start), short, len(p2.t_start), long_, stride))
    print("weakest %.0f s window starts at %.1f s: lambda_min %.4e, lambda_max %.4e"
          % (short, p1.t_start[weakest], p1.lambda_min[weakest], p1.lambda_max[weakest]))
    strongest = int(np.argmax(p1.lambda_min))
    print("strongest %.0f s window starts at %.1f s: lambda_min %.4e (%.2f times the weakest)"
          % (short, p1.t_start[strongest], p1.lambda_min[strongest],
             p1.lambda_min[strongest] / p1.lambda_min[weakest]))
    print("figure: " + figure)

    # Check 1: positive definite everywhere, full rank.
    n = len(plant.states)
    for p, length in ((p1, short), (p2, long_)):
        if not np.all(p.lambda_min > 0):
            fail("a %.0f s window has lambda_min <= 0" % length)
        if not np.all(np.asarray(p.rank) == n):
            fail("a %.0f s window is not of rank %d: ranks %s" % (length, n, sorted(set(p.rank))))

    # Check 2: with the same end b, the longer window's lambda_min is at least the shorter one's.
    pairs = 0
    for i, end in enumerate(p2.t_end):
        j = np.flatnonzero(np.isclose(p1.t_end, end, rtol=0, atol=1e-6 * period))
        if j.size == 0:
            continue
        pairs += 1
        if not p2.lambda_min[i] >= p1.lambda_min[j[0]]:
            fail("window [%.1f, %.1f] has lambda_min %.6e below the shorter window's %.6e"
                 % (p2.t_start[i], end, p2.lambda_min[i], p1.lambda_min[j[0]]))
    if pairs < len(p2.t_end) - 1:
        fail("only %d of %d long windows share their end with a short one" % (pairs, len(p2.t_end)))
    print("longer windows are stronger: %d pairs with a common end, growth of lambda_min %.1f to %.1f times"
          % (pairs, *_growth_range(p1, p2, period)))

    # Check 3: the weakest window against scipy's Lyapunov equation.
    a, b = p1.t_start[weakest], p1.t_end[weakest]
    reference = np.linalg.eigvalsh(lyapunov_reachability(plant, a, b))
    for name, ours, theirs in (("lambda_min", p1.lambda_min[weakest], reference[0]),
                               ("lambda_max", p1.lambda_max[weakest], reference[-1])):
        rel = abs(ours - theirs) / abs(theirs)
        print("%s of [%.1f, %.1f]: ordex %.10e, scipy %.10e (relative difference %.1e)"
              % (name, a, b, ours, theirs, rel))
        if rel > 1e-6:
            fail("%s of the weakest window differs from scipy's by %.1e (relative)" % (name, rel))
    print("all checks passed")


def _growth_range(p1, p2, period):
    ratios = []
    for i, end in enumerate(p2.t_end):
        j = np.flatnonzero(np.isclose(p1.t_end, end, rtol=0, atol=1e-6 * period))
        if j.size:
            ratios.append(p2.lambda_min[i] / p1.lambda_min[j[0]])
    return min(ratios), max(ratios)


if __name__ == "__main__":
    main()
