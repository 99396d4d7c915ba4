"""Each binding against the C++ apps: the same model file and options through ordex (the
Python package) and through bin/ordex-* must give the same numbers (the JSON summaries and CSVs
carry full precision), for transition, floquet, gramian, regulate, respond, discretize and
estimate. The numbers themselves are checked against scipy in test_jobs.py; here the binding
layer (option mapping, array layout, row-major vs column-major, defaults) is what would break.
Run by ctest as python_apps_agree."""
import json
import os
import subprocess

import numpy as np
import pytest

import ordex

MODELS = os.environ.get("ORDEX_MODELS_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "models"))
DATA = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "data")
# The build tree's bin/ beside python/ordex (PYTHONPATH=build/python), unless given.
BIN_DIR = os.environ.get("ORDEX_BIN_DIR",
                         os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(ordex.__file__))), "bin"))
RTOL = 1e-12  # the same library computes both: only the last bits may differ


def app_json(*args):
    p = subprocess.run([os.path.join(BIN_DIR, args[0])] + [str(a) for a in args[1:]] + ["--json", "-"],
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 0, p.stderr
    return json.loads(p.stdout)


def close(a, b, atol=0.0):
    np.testing.assert_allclose(np.asarray(a, float), np.asarray(b, float), rtol=RTOL, atol=atol)


def test_transition():
    model = os.path.join(MODELS, "mathieu.toml")
    summary = app_json("ordex-propagate", "--model", model, "--from", 0, "--to", 2.5, "--set", "q=0.7",
                       "--threads", 1)  # one piece, as the binding integrates it
    r = ordex.transition(ordex.load_model(model, set={"q": 0.7}), 0.0, 2.5)
    close(r.phi, summary["phi"], atol=1e-15)
    assert r.steps == summary["steps"]
    assert r.method == summary["method"]


def test_floquet():
    model = os.path.join(MODELS, "mathieu.toml")
    summary = app_json("ordex-propagate", "--model", model, "--floquet", "--set", "q=1.4", "--threads", 1)
    f = ordex.floquet(ordex.load_model(model, set={"q": 1.4}))
    close(f.monodromy, summary["phi"], atol=1e-15)  # Phi over one period
    want = [complex(m["re"], m["im"]) for m in summary["floquet"]["multipliers"]]
    np.testing.assert_allclose(f.multipliers, want, rtol=RTOL, atol=1e-15)
    assert f.stable == summary["floquet"]["stable"]


def test_gramian():
    model = os.path.join(DATA, "response_constant.toml")
    summary = app_json("ordex-gramian", "--model", model, "--from", 0, "--to", 2)
    g = ordex.gramian(ordex.load_model(model), 0.0, 2.0)
    close(g.gramian, summary["gramian"], atol=1e-15)
    close(g.eigenvalues, summary["eigenvalues"], atol=1e-15)
    assert g.rank == summary["rank"]


def test_regulate():
    model, weights = os.path.join(DATA, "riccati_tv.toml"), os.path.join(DATA, "riccati_tv_weights.toml")
    summary = app_json("ordex-regulate", "--model", model, "--weights", weights, "--samples", 11)
    r = ordex.regulate(ordex.load_model(model), summary["t0"], summary["t1"], weights=weights, samples=11)
    close(r.P0, summary["P0"], atol=1e-15)
    close(r.K0, summary["K0"], atol=1e-15)
    close(r.times, summary["gain_schedule"]["times"])
    close(r.gains, summary["gain_schedule"]["K"], atol=1e-15)  # (samples, m, n) in both


@pytest.mark.parametrize("hold", ["linear", "zoh"])
def test_respond(tmp_path, hold):
    model = os.path.join(DATA, "response_pumped.toml")
    t = np.linspace(0.0, 4.0, 33)
    u = np.column_stack([np.sin(1.3 * t), 0.5 - 0.1 * t])
    with open(tmp_path / "u.csv", "w") as f:
        f.write("t,u1,u2\n")
        for k in range(len(t)):
            f.write("%r,%r,%r\n" % (t[k], u[k, 0], u[k, 1]))
    summary = app_json("ordex-respond", "--model", model, "--input", tmp_path / "u.csv", "--hold", hold,
                       "--x0", "0.3,-0.1", "--csv", tmp_path / "out.csv")
    values = np.loadtxt(tmp_path / "out.csv", delimiter=",", skiprows=1)
    r = ordex.respond(ordex.load_model(model), t, u, x0=[0.3, -0.1], hold=hold)
    close(r.times, values[:, 0])
    close(r.x, values[:, 1:3], atol=1e-15)
    close(r.y, values[:, 3:4], atol=1e-15)
    close(r.x_final, summary["x_final"], atol=1e-15)


def test_discretize():
    model = os.path.join(DATA, "response_constant.toml")
    summary = app_json("ordex-discretize", "--model", model, "--from", 0, "--to", 4, "--step", 0.25)
    d = ordex.discretize(ordex.load_model(model), t0=0.0, t1=4.0, step=0.25)
    close(d.times, summary["times"])
    close(d.phi, summary["phi"], atol=1e-15)
    close(d.gamma, summary["gamma"], atol=1e-15)


def test_estimate():
    model, noise = os.path.join(MODELS, "sled_depth.toml"), os.path.join(MODELS, "sled_depth_noise.toml")
    summary = app_json("ordex-estimate", "--model", model, "--noise", noise, "--samples", 11)
    e = ordex.estimate(ordex.load_model(model), summary["t0"], summary["t1"], noise=noise, samples=11)
    close(e.P_final, summary["P_final"], atol=1e-15)
    close(e.L0, summary["L0"], atol=1e-15)
    close(e.gain_times, summary["gain_schedule"]["times"])
    close(e.L, summary["gain_schedule"]["L"], atol=1e-15)
