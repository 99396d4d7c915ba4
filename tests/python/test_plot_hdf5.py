"""--hdf5 output of the apps read back with h5py: the datasets are the CSV's numbers, the
attributes carry the summary's header, the numbers obey outside checks, and a long discrete
model and a long response are streamed (the app's memory does not grow with the number of
intervals or output times).
Outside references: Liouville's formula (det Phi = 1 for Mathieu's equation, trace A = 0);
scipy.linalg.expm for the zero-order-hold step of a constant plant, Phi = e^{Ah},
Gamma = A^-1 (e^{Ah} - I) B (the usual closed form for invertible A); the Riccati terminal
condition P(t1) = Qf; x(t) = A^-1 (e^{At} - I) B u for a constant input from rest. Run by ctest
as plot_hdf5 (pytest)."""
import json
import os
import subprocess
import sys

import numpy as np
import pytest
import scipy.linalg

from plot_support import DATA, HDF5_BUILT, MODELS, app, needs_hdf5, path, read_csv, run, write_input  # noqa: F401 (path: a fixture)


# Under AddressSanitizer (scripts/test-sanitizers.sh sets ORDEX_SANITIZED) freed memory waits in
# the sanitizer's quarantine (256 MB by default), so a run's peak grows with the number of
# allocations it makes, not with what it holds: the memory comparisons mean nothing there.
SANITIZED = os.environ.get("ORDEX_SANITIZED", "") not in ("", "0")
if HDF5_BUILT:
    import h5py


def attr_json(f, key):
    return json.loads(f.attrs[key])


def test_compact_by_default_indented_on_request():
    model = os.path.join(MODELS, "mathieu.toml")
    compact = run(["ordex-propagate", "--model", model, "--json", "-"]).stdout
    indented = run(["ordex-propagate", "--model", model, "--json", "-", "--json-indent", 3]).stdout
    assert compact.count("\n") == 1  # one line
    assert compact.startswith('{"app":"ordex-propagate","ordex_version":'), compact[:60]
    assert indented.count("\n") > 20
    assert '\n   "app": "ordex-propagate",' in indented
    a, b = json.loads(compact), json.loads(indented)
    for d in (a, b):
        d.pop("seconds", None)  # wall time, if reported, differs between runs
    assert a == b
    p = run(["ordex-propagate", "--model", model, "--json-indent", 17], expect=2)
    assert p.stderr == ("ordex-propagate: error: --json-indent: 17 is outside [0, 16]\n")


@pytest.mark.skipif(HDF5_BUILT, reason="this build writes HDF5 (the tests below check it)")
def test_refused_when_not_built():
    p = run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--hdf5", "x.h5"], expect=2)
    assert "no HDF5" in p.stderr


@needs_hdf5
def test_transition_matrix_series(path):
    run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--samples", 33,
         "--csv", path("phi.csv"), "--hdf5", path("phi.h5")])
    header, values = read_csv(path("phi.csv"))
    with h5py.File(path("phi.h5"), "r") as f:
        assert f["phi"].shape == (33, 2, 2)
        np.testing.assert_array_equal(f["t"][:], values[:, 0])
        np.testing.assert_array_equal(f["phi"][:].reshape(33, 4), values[:, 1:])  # row-major, like the CSV
        np.testing.assert_allclose(np.linalg.det(f["phi"][:]), 1.0, rtol=1e-7)  # Liouville, trace A = 0
        assert f.attrs["app"] == "ordex-propagate"
        assert list(f.attrs["states"]) == ["x", "v"]
        assert f.attrs["t0"] == 0.0
        assert round(abs(f.attrs["t1"] - np.pi), 15) == 0
        assert attr_json(f, "model")["title"] == "Mathieu equation"
        assert attr_json(f, "model")["parameters"] == ({"a": 1.0, "q": 0.5})
        assert "ordex_version" in f.attrs
        assert "method" in f.attrs


@needs_hdf5
def test_gain_schedule(path):
    run(["ordex-regulate", "--model", os.path.join(DATA, "riccati_tv.toml"), "--weights",
         os.path.join(DATA, "riccati_tv_weights.toml"), "--samples", 26, "--csv", path("K.csv"),
         "--p-csv", path("P.csv"), "--hdf5", path("K.h5")])
    _, K = read_csv(path("K.csv"))
    _, P = read_csv(path("P.csv"))
    with h5py.File(path("K.h5"), "r") as f:
        assert f["K"].shape == (26, 1, 2)
        assert f["P"].shape == (26, 2, 2)
        np.testing.assert_array_equal(f["t"][:], K[:, 0])
        np.testing.assert_array_equal(f["K"][:].reshape(26, 2), K[:, 1:])
        np.testing.assert_array_equal(f["P"][:].reshape(26, 4), P[:, 1:])
        np.testing.assert_allclose(f["P"][-1], [[1, 0], [0, 0.5]], atol=1e-12)  # P(t1) = Qf of the weights file
        assert f.attrs["app"] == "ordex-regulate"
        assert list(f.attrs["inputs"]) == ["f"]
        assert "Caution" in f.attrs["caution"]
        np.testing.assert_array_equal(json.loads(f.attrs["K0"]), f["K"][0])  # a matrix: JSON text


@needs_hdf5
def test_responses_in_groups(path):
    t = np.linspace(0, 4, 41)
    write_input(path("u1.csv"), t, [np.ones_like(t), np.zeros_like(t)], ["t", "u1", "u2"])
    write_input(path("u2.csv"), t, [np.sin(t), np.cos(t)], ["t", "u1", "u2"])
    os.mkdir(path("runs"))
    run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", path("u1.csv"),
         "--input", path("u2.csv"), "--csv", path("runs"), "--hdf5", path("runs.h5")])
    with h5py.File(path("runs.h5"), "r") as f:
        assert list(f.attrs["states"]) == ["x1", "x2"]
        assert list(f.attrs["outputs"]) == ["y"]
        for k, stem in enumerate(("u1", "u2"), start=1):
            g = f["run_%d" % k]
            header, values = read_csv(path("runs/%s.csv" % stem))
            np.testing.assert_array_equal(g["t"][:], values[:, 0])
            np.testing.assert_array_equal(g["x"][:], values[:, 1:3])
            np.testing.assert_array_equal(g["y"][:], values[:, 3:4])
            assert g.attrs["input"] == (path(stem + ".csv"))
            np.testing.assert_array_equal(g.attrs["x_final"], values[-1, 1:3])


def constant_model(path, n, m):
    """A chain of n states, damped and coupled (invented numbers), with m inputs."""
    A = -0.6 * np.eye(n) + 0.25 * np.eye(n, k=1) - 0.2 * np.eye(n, k=-1)
    B = np.zeros((n, m))
    for j in range(m):
        B[(7 * j) % n, j] = 1.0 + 0.1 * j
    rows = lambda M: "[" + ", ".join("[" + ", ".join(repr(float(x)) for x in r) + "]" for r in M) + "]"
    path = path("chain%d.toml" % n)
    with open(path, "w") as f:
        f.write('[system]\ntitle = "damped chain"\nstates = [%s]\ninputs = [%s]\n[matrices]\nA = %s\nB = %s\n' % (
            ", ".join('"s%d"' % i for i in range(n)), ", ".join('"u%d"' % j for j in range(m)), rows(A), rows(B)))
    return path, A, B


def peak_memory_kb(args):
    """Largest resident memory of the app run with ARGS, in kB (measured in a child so that
    no other run counts)."""
    code = ("import resource, subprocess, sys\n"
            "p = subprocess.run(sys.argv[1:], capture_output=True, text=True)\n"
            "sys.stderr.write(p.stderr)\n"
            "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss if p.returncode == 0 else -1)\n")
    p = subprocess.run([sys.executable, "-c", code, app(args[0])] + [str(a) for a in args[1:]],
                       capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stderr
    kb = int(p.stdout.strip())
    assert kb > 0, p.stderr
    return kb


@needs_hdf5
def test_discrete_model_streamed(path):
    n, m, h = 40, 3, 0.01
    model, A, B = constant_model(path, n, m)
    small = peak_memory_kb(["ordex-discretize", "--model", model, "--from", 0, "--to", 6, "--step", h,
                                 "--hdf5", path("small.h5")])
    large = peak_memory_kb(["ordex-discretize", "--model", model, "--from", 0, "--to", 60, "--step", h,
                                 "--hdf5", path("large.h5")])
    # 6000 intervals of phi (40 x 40) and gamma (40 x 3) are 80 MB of doubles; held in memory
    # they would raise the peak by that much over the 600-interval run. Streamed, the peak stays.
    if not SANITIZED:
        assert large - small < 20 * 1024, "peak memory grew from %d kB to %d kB" % (small, large)
    expm = scipy.linalg.expm(A * h)
    gamma = np.linalg.solve(A, expm - np.eye(n)) @ B
    with h5py.File(path("large.h5"), "r") as f:
        assert f["phi"].shape == (6000, n, n)
        assert f["gamma"].shape == (6000, n, m)
        assert f["t"].shape == (6001,)
        np.testing.assert_allclose(f["t"][[0, 1, -1]], [0, h, 60], rtol=1e-13, atol=1e-15)
        for k in (0, 2999, 5999):
            np.testing.assert_allclose(f["phi"][k], expm, rtol=1e-8, atol=1e-12)
            np.testing.assert_allclose(f["gamma"][k], gamma, rtol=1e-8, atol=1e-12)
        assert f.attrs["intervals"] == 6000
        assert f.attrs["hold"] == "zoh"
        assert attr_json(f, "model")["title"] == "damped chain"
        assert len(f.attrs["states"]) == n
        # Growth over the grid, computed as the steps streamed by: |e^{60 A}|_2 (scipy).
        assert round(abs((f.attrs["growth"] / np.linalg.norm(scipy.linalg.expm(60 * A), 2)) - 1.0), 6) == 0


@needs_hdf5
def test_response_streamed(path):
    n, m = 40, 3
    model, A, B = constant_model(path, n, m)
    u = np.array([1.0, 0.5, -1.0])
    write_input(path("hold.csv"), [0.0, 60.0], [[x, x] for x in u], ["t", "u0", "u1", "u2"])
    runs = {}
    for N in (20001, 200001):
        runs[N] = peak_memory_kb(["ordex-respond", "--model", model, "--input", path("hold.csv"),
                                       "--hold", "zoh", "--samples", N, "--hdf5", path("r%d.h5" % N)])
    # 200,000 samples of 40 states are 64 MB of doubles; held in memory they would raise the
    # peak by about that much over the 20,000-sample run. Streamed, the peak stays.
    if not SANITIZED:
        assert runs[200001] - runs[20001] < 20 * 1024, \
            "peak memory grew from %d kB to %d kB" % (runs[20001], runs[200001])
    with h5py.File(path("r200001.h5"), "r") as f:
        g = f["run_1"]
        assert g["t"].shape == (200001,)
        assert g["x"].shape == (200001, n)
        assert "y" not in g  # the model has no outputs
        assert g.attrs["samples"] == 200001
        # x(t) = A^-1 (e^{At} - I) B u from x(0) = 0 under a constant input (variation of
        # constants; scipy.linalg.expm).
        for k in (1, 100000, 200000):
            t = g["t"][k]
            assert round(abs(t - (60.0 * k / 200000)), 12) == 0
            want = np.linalg.solve(A, scipy.linalg.expm(A * t) - np.eye(n)) @ (B @ u)
            np.testing.assert_allclose(g["x"][k], want, rtol=1e-8, atol=1e-11)
        np.testing.assert_array_equal(g.attrs["x_final"], g["x"][-1])


@needs_hdf5
def test_single_response_matches_csv(path):
    t = np.linspace(0, 3, 31)
    write_input(path("one.csv"), t, [np.cos(2 * t), t / 3], ["t", "u1", "u2"])
    run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", path("one.csv"),
         "--hold", "linear", "--samples", 17, "--csv", path("one_out.csv"), "--json", path("one.json"),
         "--hdf5", path("one.h5")])
    header, values = read_csv(path("one_out.csv"))
    with open(path("one.json")) as f:
        summary = json.load(f)
    with h5py.File(path("one.h5"), "r") as f:
        assert list(f.keys()) == ["run_1"]
        g = f["run_1"]
        np.testing.assert_array_equal(g["t"][:], values[:, 0])
        np.testing.assert_array_equal(g["x"][:], values[:, 1:3])
        np.testing.assert_array_equal(g["y"][:], values[:, 3:4])
        np.testing.assert_array_equal(g["x"][-1], summary["x_final"])
        assert f.attrs["app"] == "ordex-respond"
        assert f.attrs["hold"] == "linear"
        assert header == ["t", "x1", "x2", "y"]


@needs_hdf5
def test_discrete_model_matches_csv_with_linear_hold(path):
    run(["ordex-discretize", "--model", os.path.join(DATA, "response_pumped.toml"), "--from", 0, "--to", 2,
         "--samples", 9, "--hold", "linear", "--csv", path("d.csv"), "--json", path("d.json"),
         "--hdf5", path("d.h5")])
    header, values = read_csv(path("d.csv"))
    with open(path("d.json")) as f:
        summary = json.load(f)
    with h5py.File(path("d.h5"), "r") as f:
        np.testing.assert_array_equal(f["t"][:], summary["times"])
        np.testing.assert_array_equal(f["phi"][:].reshape(8, 4), values[:, 3:7])
        np.testing.assert_array_equal(f["gamma0"][:].reshape(8, 4), values[:, 7:11])
        np.testing.assert_array_equal(f["gamma1"][:].reshape(8, 4), values[:, 11:15])
        np.testing.assert_array_equal(f["phi"][:], np.array(summary["phi"]))
        assert "phi" not in f.attrs  # the series are datasets, not attributes
        assert f.attrs["hold"] == "linear"


@needs_hdf5
def test_refused_outputs(path):
    model = os.path.join(MODELS, "mathieu.toml")
    with open(model, "rb") as f:
        before = f.read()
    for target, needle in ((model, "mathieu.toml"), ("-", "--hdf5"), (path("nofolder/x.h5"), "nofolder")):
        p = run(["ordex-propagate", "--model", model, "--hdf5", target], expect=2)
        assert len(p.stderr.splitlines()) == 1, p.stderr
        assert p.stderr.startswith("ordex-propagate: error: "), p.stderr
        assert needle in p.stderr
    with open(model, "rb") as f:
        assert f.read() == before
    # A numerical failure half-way (A(t) = 1/(t - 1) at t = 1) leaves no file, complete or not.
    blowup = path("blowup.h5")
    p = run(["ordex-propagate", "--model", os.path.join(DATA, "cli_blowup.toml"), "--hdf5", blowup], expect=3)
    assert len(p.stderr.splitlines()) == 1, p.stderr
    assert not os.path.exists(blowup)
    assert [x for x in os.listdir(path("")) if x.startswith(".ordex-")] == []
