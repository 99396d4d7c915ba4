"""Benchmark of ordex-simulate (issue: nonlinear plants): 1,000 dispersed closed-loop runs of the
two-body chaser (models/chaser_two_body.toml) over one orbit, against scipy's solve_ivp (DOP853)
on the same closed loop at the same tolerances, measured in this script. The first runs are
replayed in scipy from the dispersions ordex drew (its JSON), and the final states compared.

  python3 bench/simulate_vs_solve_ivp.py BUILD_DIR [RUNS] [SCIPY_RUNS]
"""
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy.integrate import solve_ivp

build = sys.argv[1]
runs = int(sys.argv[2]) if len(sys.argv) > 2 else 1000
scipy_runs = int(sys.argv[3]) if len(sys.argv) > 3 else 20
here = os.path.dirname(os.path.abspath(__file__))
models = os.path.join(here, "..", "models")
model = os.path.join(models, "chaser_two_body.toml")
rtol, atol = 1e-8, 1e-10

work = tempfile.mkdtemp(prefix="ordex-bench-")
gains = os.path.join(work, "gains.csv")
subprocess.run([os.path.join(build, "bin", "ordex-regulate"), "--model", model, "--weights",
                os.path.join(models, "orbit_approach_weights.toml"), "--samples", "201", "--csv", gains],
               check=True, stdout=subprocess.DEVNULL)
start = time.perf_counter()
out = subprocess.run([os.path.join(build, "bin", "ordex-simulate"), "--model", model, "--gains", gains,
                      "--disperse", os.path.join(models, "chaser_dispersions.toml"), "--runs", str(runs),
                      "--seed", "1", "--samples", "2", "--rtol", str(rtol), "--atol", str(atol), "--json", "-"],
                     check=True, capture_output=True, text=True).stdout
ordex_time = time.perf_counter() - start
report = json.loads(out)

# The same closed loop in numpy: target's Kepler motion, LVLH two-body dynamics, gains.
K = np.loadtxt(gains, delimiter=",", skiprows=1)
gt, gk = K[:, 0], K[:, 1:].reshape(-1, 3, 6)
sma, ecc, mu0 = 9200.0, 0.2, 398600.4418
n = np.sqrt(mu0 / sma**3)
p = sma * (1 - ecc**2)
T = 2 * np.pi / n


def target(t, mu):
    # The model's target moves with the parameter mu (dispersed or not), as its [define] says.
    n = np.sqrt(mu / sma**3)
    M = n * t
    E = M
    for _ in range(30):
        E -= (E - ecc * np.sin(E) - M) / (1 - ecc * np.cos(E))
    f = 2 * np.arctan2(np.sqrt(1 + ecc) * np.sin(E / 2), np.sqrt(1 - ecc) * np.cos(E / 2))
    r = p / (1 + ecc * np.cos(f))
    fdot = np.sqrt(mu * p) / r**2
    rdot = np.sqrt(mu / p) * ecc * np.sin(f)
    return r, fdot, -2 * rdot * fdot / r


def gain(t):
    k = min(max(np.searchsorted(gt, t) - 1, 0), len(gt) - 2)
    s = (t - gt[k]) / (gt[k + 1] - gt[k])
    return (1 - s) * gk[k] + s * gk[k + 1]


def rhs(t, s, mu):
    x, y, z, vx, vy, vz = s
    r, fd, fdd = target(t, mu)
    u = -gain(t) @ s  # the nominal is the target itself: x_n = 0, u_n = 0
    rc3 = ((r + x)**2 + y**2 + z**2)**1.5
    return [vx, vy, vz,
            2 * fd * vy + fdd * y + fd**2 * x + mu / r**2 - mu * (r + x) / rc3 + u[0],
            -2 * fd * vx - fdd * x + fd**2 * y - mu * y / rc3 + u[1],
            -mu * z / rc3 + u[2]]


errors = []
start = time.perf_counter()
for run in report["runs"][:scipy_runs]:
    mu = run.get("parameters", {}).get("mu", mu0)
    sol = solve_ivp(rhs, (0, T), run["dx0"], method="DOP853", rtol=rtol, atol=atol, args=(mu,))
    errors.append(np.max(np.abs(sol.y[:, -1] - np.array(run["x_final"]))))
scipy_time = time.perf_counter() - start
per_ordex = ordex_time / runs
per_scipy = scipy_time / scipy_runs
print(f"ordex-simulate: {runs} runs in {ordex_time:.2f} s ({per_ordex * 1e3:.2f} ms per run, "
      f"{report['threads']} threads, including loading)")
print(f"solve_ivp DOP853: {scipy_runs} runs in {scipy_time:.2f} s ({per_scipy * 1e3:.1f} ms per run)")
print(f"speed-up per run: {per_scipy / per_ordex:.1f}x; largest final-state difference over the replayed "
      f"runs: {max(errors):.3g} (km, km/s)")
