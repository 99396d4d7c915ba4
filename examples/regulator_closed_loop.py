"""A final-approach regulator for a chaser craft, and its closed loop.

The chaser of models/orbit_relative_motion.toml (an invented 9200 km x 0.2 orbit; units km, s,
km/s, thrust accelerations km/s^2) starts a few km from the target and is brought to it over
one orbit by the finite-horizon LQR regulator u = -K(t) x with the weights of
models/orbit_approach_weights.toml (ordex.regulate). The library also flies the closed loop
from x0 and integrates its cost. This script plots the closed-loop states and the gain
schedule, and prints the predicted cost x0' P(t0) x0, the simulated cost and the hardware
caution that goes with any gain schedule.

Run from the repository (after building the Python package):

    PYTHONPATH=build/python /usr/bin/python3 examples/regulator_closed_loop.py [OUTPUT_FOLDER]

It writes OUTPUT_FOLDER/regulator_states.svg and OUTPUT_FOLDER/regulator_gains.svg (default:
the current folder), prints a summary, and ends with checks that exit 1 when one fails:
  - the simulated cost of the closed-loop run agrees with x0' P(t0) x0 to 1e-4 (relative): the
    optimal cost of the finite-horizon LQR problem is x0' P(t0) x0 (Kalman 1960; Anderson and
    Moore, Optimal Control, ch. 2), and the run is a separate integration of the plant;
  - P(t0) agrees with scipy's backward integration of the Riccati differential equation
    -P' = A'P + PA - P B R^-1 B' P + Q, P(t1) = Qf (solve_ivp) to 1e-6 (relative);
  - K(t0) = R^-1 B(t0)' P(t0);
  - the chaser ends near the target: the loop's time scale (about 500 s) is short beside the
    orbit (about 8800 s), so the final range is below 1e-3 of the initial one.
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

# The approach weights, as in models/orbit_approach_weights.toml (read by ordex from the file;
# repeated here for the scipy check).
Q = np.diag([1.0, 1.0, 1.0, 0.0, 0.0, 0.0])
R = np.diag([6e10, 6e10, 6e10])
QF = np.diag([100.0, 100.0, 100.0, 1e7, 1e7, 1e7])

# Initial offset: 2 km below, 4 km behind and 0.5 km beside the target, drifting at 1 m/s.
X0 = np.array([-2.0, -4.0, 0.5, 0.0, 0.001, 0.0])


def fail(message):
    raise SystemExit("regulator_closed_loop: check failed: " + message)


def riccati_by_scipy(plant, t0, t1):
    """P(t0) from -P' = A'P + PA - P B R^-1 B' P + Q, P(t1) = QF, integrated backward by scipy."""
    n = len(plant.states)
    Rinv = np.linalg.inv(R)

    def rhs(t, p):
        P = p.reshape(n, n)
        A, B = plant.A(t), plant.B(t)
        return -(A.T @ P + P @ A - P @ B @ Rinv @ B.T @ P + Q).ravel()

    sol = solve_ivp(rhs, (t1, t0), QF.ravel(), method="DOP853", rtol=1e-11, atol=1e-9)
    if not sol.success:
        fail("scipy's Riccati integration failed: " + sol.message)
    P = sol.y[:, -1].reshape(n, n)
    return 0.5 * (P + P.T)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else "."
    os.makedirs(out, exist_ok=True)
    plant = ordex.load_model(os.path.join(MODELS, "orbit_relative_motion.toml"))
    t0, t1 = plant.window
    lqr = ordex.regulate(plant, t0, t1, weights=os.path.join(MODELS, "orbit_approach_weights.toml"),
                         x0=X0, samples=201)

    # Figures: the closed-loop run, and the gains (position and velocity columns apart: they
    # differ by the loop's time scale).
    t, x = lqr.run_times, lqr.run_states
    fig, axes = plt.subplots(3, 1, figsize=(7.5, 7.5), sharex=True)
    for k, name in enumerate(plant.states[:3]):
        axes[0].plot(t, x[:, k], label=name)
    for k, name in enumerate(plant.states[3:]):
        axes[1].plot(t, 1e3 * x[:, 3 + k], label=name)
    for k, name in enumerate(plant.inputs):
        axes[2].plot(t, 1e6 * lqr.run_inputs[:, k], label=name)
    axes[0].set_ylabel("position [km]")
    axes[1].set_ylabel("velocity [m/s]")
    axes[2].set_ylabel("thrust [mm/s^2]")
    axes[2].set_xlabel("t [s]")
    axes[0].set_title("Closed-loop approach from (%g, %g, %g) km, (%g, %g, %g) m/s"
                      % (*X0[:3], *(1e3 * X0[3:])))
    for ax in axes:
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize="small", ncol=3)
    fig.tight_layout()
    states_figure = os.path.join(out, "regulator_states.svg")
    fig.savefig(states_figure)
    plt.close(fig)

    fig, axes = plt.subplots(2, 1, figsize=(7.5, 6.0), sharex=True)
    for i, u in enumerate(plant.inputs):
        for j, s in enumerate(plant.states):
            block = lqr.gains[:, :, :3] if j < 3 else lqr.gains[:, :, 3:]
            if np.abs(lqr.gains[:, i, j]).max() > 1e-6 * np.abs(block).max():  # skip the zeros
                ax = axes[0] if j < 3 else axes[1]
                ax.plot(lqr.times, lqr.gains[:, i, j], label="K[%s, %s]" % (u, s))
    axes[0].set_ylabel("gain on position [1/s^2]")
    axes[1].set_ylabel("gain on velocity [1/s]")
    axes[1].set_xlabel("t [s]")
    axes[0].set_title("Gain schedule K(t) of u = -K(t) x")
    for ax in axes:
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize="x-small", ncol=3)
    fig.tight_layout()
    gains_figure = os.path.join(out, "regulator_gains.svg")
    fig.savefig(gains_figure)
    plt.close(fig)

    predicted = float(X0 @ lqr.P0 @ X0)
    rel_cost = abs(lqr.cost_simulated - predicted) / predicted
    range0, range1 = np.linalg.norm(X0[:3]), np.linalg.norm(lqr.x_final[:3])
    print("horizon [%.1f, %.1f] s, %d gain samples, closed loop %s"
          % (t0, t1, len(lqr.times), lqr.closed_loop_status))
    print("cost: predicted x0'P0x0 = %.8e, simulated = %.8e (relative difference %.1e)"
          % (predicted, lqr.cost_simulated, rel_cost))
    print("range to the target: %.3f km at the start, %.3e km at the end" % (range0, range1))
    print("peak thrust %.3e km/s^2" % np.abs(lqr.run_inputs).max())
    reference = riccati_by_scipy(plant, t0, t1)
    rel_p = np.linalg.norm(lqr.P0 - reference) / np.linalg.norm(reference)
    print("P(t0) against scipy's Riccati integration: relative difference %.1e" % rel_p)
    print("figures: %s, %s" % (states_figure, gains_figure))
    print(lqr.caution)

    # Checks.
    if lqr.closed_loop_status != "ok":
        fail("the closed-loop run did not complete: %s" % lqr.closed_loop_reason)
    if rel_cost > 1e-4:
        fail("simulated cost %.8e differs from x0'P0x0 = %.8e by %.1e (relative)"
             % (lqr.cost_simulated, predicted, rel_cost))
    if abs(lqr.cost_predicted - predicted) > 1e-12 * predicted:
        fail("cost_predicted %.10e is not x0'P0x0 = %.10e" % (lqr.cost_predicted, predicted))
    if rel_p > 1e-6:
        fail("P(t0) differs from scipy's by %.1e (relative)" % rel_p)
    K0 = np.linalg.solve(R, plant.B(t0).T @ lqr.P0)
    rel_k = np.linalg.norm(lqr.K0 - K0) / np.linalg.norm(K0)
    if rel_k > 1e-9:
        fail("K0 differs from R^-1 B' P0 by %.1e (relative)" % rel_k)
    if range1 > 1e-3 * range0:
        fail("the chaser ends %.3e km from the target (started at %.3f km)" % (range1, range0))
    if lqr.caution != ordex.CAUTION:
        fail("the regulator's result does not carry the hardware caution")
    print("all checks passed")


if __name__ == "__main__":
    main()
