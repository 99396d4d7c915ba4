"""Replaying a recorded thrust history through the orbit model.

models/orbit_recorded_input.csv is an invented record of a chaser's thrust accelerations
(columns t, ax, ay, az; every 10 s over one orbit; km/s^2). This script replays it through
models/orbit_relative_motion.toml (ordex.respond, the input linear between samples, from rest at
the target), steps the discrete model of the same grid by hand with numpy
(ordex.discretize, x_{k+1} = Phi_k x_k + Gamma0_k u_k + Gamma1_k u_{k+1}), and plots the states
and the input.

Run from the repository (after building the Python package):

    PYTHONPATH=build/python /usr/bin/python3 examples/replay_input_history.py [OUTPUT_FOLDER]

It writes OUTPUT_FOLDER/replay_input_history.svg (default: the current folder), prints a
summary, and ends with checks that exit 1 when one fails:
  - the replay agrees with the hand-stepped discrete model to 1e-9 (relative to the largest
    state of each kind: position, velocity);
  - the replay agrees with scipy's integration of x' = A(t) x + B(t) u(t) (solve_ivp, the
    same piecewise-linear input) to 1e-8 (relative, the same way).
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
    raise SystemExit("replay_input_history: check failed: " + message)


def relative_gap(x, reference):
    """Largest difference, relative to the largest reference value, for positions and velocities
    apart (they differ by orders of magnitude)."""
    gaps = []
    for cols in (slice(0, 3), slice(3, 6)):
        gaps.append(np.abs(x[:, cols] - reference[:, cols]).max() / np.abs(reference[:, cols]).max())
    return max(gaps)


def by_scipy(plant, t, u):
    """x(t_k) from x' = A x + B u, u linear between the samples, by scipy, one interval at a
    time (so that no step straddles a corner of the input)."""
    n = len(plant.states)
    x = np.zeros((len(t), n))
    for k in range(len(t) - 1):
        def rhs(s, y, k=k):
            w = (s - t[k]) / (t[k + 1] - t[k])
            return plant.A(s) @ y + plant.B(s) @ ((1 - w) * u[k] + w * u[k + 1])
        sol = solve_ivp(rhs, (t[k], t[k + 1]), x[k], method="DOP853", rtol=1e-12, atol=1e-15)
        if not sol.success:
            fail("scipy's integration failed on [%g, %g]: %s" % (t[k], t[k + 1], sol.message))
        x[k + 1] = sol.y[:, -1]
    return x


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else "."
    os.makedirs(out, exist_ok=True)
    plant = ordex.load_model(os.path.join(MODELS, "orbit_relative_motion.toml"))
    record = os.path.join(MODELS, "orbit_recorded_input.csv")
    with open(record) as f:
        header = f.readline().strip().split(",")
    if header != ["t"] + list(plant.inputs):
        fail("%s: columns %s, expected t and %s" % (record, header, plant.inputs))
    data = np.loadtxt(record, delimiter=",", skiprows=1)
    t, u = data[:, 0], data[:, 1:]

    replay = ordex.respond(plant, t, u, hold="linear", rtol=1e-10, atol=1e-14)

    # The discrete model on the same times, stepped by hand.
    d = ordex.discretize(plant, t, hold="linear", rtol=1e-10, atol=1e-14)
    x = np.zeros((len(t), len(plant.states)))
    for k in range(len(t) - 1):
        x[k + 1] = d.phi[k] @ x[k] + d.gamma0[k] @ u[k] + d.gamma1[k] @ u[k + 1]

    fig, axes = plt.subplots(3, 1, figsize=(7.5, 7.5), sharex=True)
    for k, name in enumerate(plant.states[:3]):
        axes[0].plot(replay.times, replay.x[:, k], label=name)
    for k, name in enumerate(plant.states[3:]):
        axes[1].plot(replay.times, 1e3 * replay.x[:, 3 + k], label=name)
    for k, name in enumerate(plant.inputs):
        axes[2].plot(t, 1e9 * u[:, k], label=name)
    axes[0].set_ylabel("position [km]")
    axes[1].set_ylabel("velocity [m/s]")
    axes[2].set_ylabel("thrust [um/s^2]")
    axes[2].set_xlabel("t [s]")
    axes[0].set_title("Replay of %s" % os.path.basename(record))
    for ax in axes:
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize="small", ncol=3)
    fig.tight_layout()
    figure = os.path.join(out, "replay_input_history.svg")
    fig.savefig(figure)
    plt.close(fig)

    gap_discrete = relative_gap(replay.x, x)
    print("%d samples over [%.0f, %.0f] s; final position %s km, final velocity %s m/s"
          % (len(t), t[0], t[-1], np.array2string(replay.x_final[:3], precision=4),
             np.array2string(1e3 * replay.x_final[3:], precision=4)))
    print("hand-stepped discrete model: largest relative difference %.1e" % gap_discrete)
    reference = by_scipy(plant, t, u)
    gap_scipy = relative_gap(replay.x, reference)
    print("scipy's integration: largest relative difference %.1e" % gap_scipy)
    print("figure: " + figure)

    if replay.x.shape != (len(t), len(plant.states)):
        fail("the replay has shape %s, expected (%d, %d)" % (replay.x.shape, len(t), len(plant.states)))
    if not gap_discrete <= 1e-9:
        fail("the replay differs from the hand-stepped discrete model by %.1e (relative)" % gap_discrete)
    if not gap_scipy <= 1e-8:
        fail("the replay differs from scipy's integration by %.1e (relative)" % gap_scipy)
    print("all checks passed")


if __name__ == "__main__":
    main()
