"""ordex-sweep --hdf5 read back with h5py: one dataset per column holding the CSV table's numbers
bit for bit (whatever the threads or MPI ranks), the error texts, the summary's header as
attributes; a resumed sweep writes the same file as an uninterrupted one; outputs that would
overwrite an input are refused.
Outside references: the Mathieu stability chart from scipy.special.mathieu_a / mathieu_b
(tests/reference/sweep_mathieu_chart.py; Abramowitz & Stegun ch. 20); Liouville's formula
(det M = exp(integral of trace A): 1 for Mathieu's equation, so its largest multiplier is at least
1; exp(-sqrt(d) pi) with damping sqrt(d), so a point inside the stable band has |mu| =
exp(-sqrt(d) pi / 2)). Run by ctest as plot_sweep."""
import csv
import json
import os
import subprocess
import sys

import numpy as np
import pytest

from plot_support import HDF5_BUILT, MODELS, SOURCE_DIR, app, needs_hdf5, path, run  # noqa: F401 (path: a fixture)

MPIEXEC = os.environ.get("ORDEX_MPIEXEC", "")
if HDF5_BUILT:
    import h5py

MATHIEU = os.path.join(MODELS, "mathieu.toml")
# A damped Mathieu oscillator whose damping sqrt(d) is not a number for d < 0: that point fails.
DAMPED = ('[system]\nstates = ["x", "v"]\nperiod = "pi"\n[parameters]\na = 2.0\nq = 0.5\nd = 0.01\n'
          '[matrices]\nA = [[0, 1], ["-(a - 2*q*cos(2*t))", "-sqrt(d)"]]\n')


def read_table(path):
    """The CSV table as {column: numpy array of floats, 'error': list of texts} and its header."""
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    header, body = rows[0], rows[1:]
    table = {name: np.array([float(r[i]) for r in body]) for i, name in enumerate(header[:-1])}
    table["error"] = [r[-1] for r in body]
    return header, table


def read_h5(path):
    with h5py.File(path, "r") as f:
        columns = list(f.attrs["columns"])
        data = {name: f[name][:] for name in columns[:-1]}
        data["error"] = list(f["error"].asstr()[:])
        attrs = dict(f.attrs)
    return columns, data, attrs


def mpirun(np_, args):
    env = dict(os.environ, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1")
    return subprocess.run([MPIEXEC, "--oversubscribe", "-np", str(np_), app("ordex-sweep")] + [str(a) for a in args],
                          capture_output=True, text=True, timeout=300, env=env)


@pytest.mark.skipif(HDF5_BUILT, reason="this build writes HDF5 (the tests below check it)")
def test_refused_when_not_built():
    p = run(["ordex-sweep", "--model", MATHIEU, "--job", "floquet", "--grid", "a=0:1:2", "--hdf5", "x.h5"],
            expect=2)
    assert "no HDF5" in p.stderr


@needs_hdf5
def test_columns_are_the_csv_whatever_threads_and_ranks(path):
    args = ["ordex-sweep", "--model", MATHIEU, "--job", "floquet", "--grid", "a=-0.5:6.5:15", "--grid",
            "q=0.25:2:4", "--rtol", "1e-10", "--atol", "1e-12"]
    run(args + ["--threads", 1, "--csv", path("t1.csv"), "--hdf5", path("t1.h5")])
    run(args + ["--threads", 2, "--hdf5", path("t2.h5")])
    header, table = read_table(path("t1.csv"))
    columns, data, attrs = read_h5(path("t1.h5"))
    assert columns == header
    assert columns == ["a", "q", "max_abs_multiplier", "stable", "error"]
    for name in header[:-1]:
        assert data[name].shape == (60,)
        assert data[name].dtype == np.float64
        assert data[name].tobytes() == table[name].tobytes(), name  # bit for bit
    assert data["error"] == table["error"]
    assert data["error"] == [""] * 60
    # The summary's header as attributes.
    assert attrs["app"] == "ordex-sweep"
    assert attrs["job"] == "floquet"
    assert list(attrs["parameters"]) == ["a", "q"]
    assert list(attrs["figures"]) == ["max_abs_multiplier", "stable"]
    assert attrs["points"] == 60
    assert attrs["threads"] == 1
    assert json.loads(attrs["model"])["title"] == "Mathieu equation"
    assert round(abs((attrs["t1"] - attrs["t0"]) - np.pi), 14) == 0  # one period
    assert json.loads(attrs["plan"])["axes"][1] == {"name": "q", "from": 0.25, "to": 2.0, "count": 4}
    # Liouville: det M = 1, so the largest multiplier has modulus at least 1.
    assert np.all(data["max_abs_multiplier"] > 1 - 1e-7), data["max_abs_multiplier"]
    # The chart against scipy's characteristic values, read from the HDF5 columns.
    points = ["%r,%r" % (a, q) for a, q in zip(data["a"], data["q"])]
    ref = subprocess.run([sys.executable, os.path.join(SOURCE_DIR, "tests", "reference", "sweep_mathieu_chart.py"),
                          "0.05"] + points, capture_output=True, text=True, timeout=120)
    assert ref.returncode == 0, ref.stderr
    verdicts = ref.stdout.split()
    mu = data["max_abs_multiplier"]
    stable = [m for m, v in zip(mu, verdicts) if v == "stable"]
    unstable = [m for m, v in zip(mu, verdicts) if v == "unstable"]
    assert len(stable) >= 15
    assert len(unstable) >= 15
    assert max(stable) < 1 + 1e-6
    assert min(unstable) > 1 + 1e-3
    # Two threads and MPI ranks: the same columns.
    others = ["t2.h5"]
    if MPIEXEC:
        for n in (2, 3):
            p = mpirun(n, args[1:] + ["--hdf5", path("m%d.h5" % n)])
            assert p.returncode == 0, p.stderr
            others.append("m%d.h5" % n)
    for name in others:
        c, d, a = read_h5(path(name))
        assert c == columns
        for col in header[:-1]:
            assert d[col].tobytes() == data[col].tobytes(), (name, col)
        assert d["error"] == data["error"]
        assert a["computed"] == 60
    if MPIEXEC:
        assert read_h5(path("m3.h5"))[2]["ranks"] == 3


@needs_hdf5
def test_failing_point_and_resume(path):
    model = path('rig "b", damped.toml')  # a comma and a quote: the error field is quoted in the CSV
    with open(model, "w") as f:
        f.write(DAMPED)
    args = ["ordex-sweep", "--model", model, "--job", "floquet", "--grid", "d=-0.01:0.03:5", "--grid", "q=0.4:0.5:2",
            "--threads", 2]
    run(args + ["--csv", path("full.csv"), "--hdf5", path("full.h5")])
    header, table = read_table(path("full.csv"))
    columns, data, attrs = read_h5(path("full.h5"))
    assert data["error"] == table["error"]
    for k in (0, 1):  # d = -0.01: sqrt(d) is not a number
        assert "evaluates to nan" in data["error"][k]
        assert 'rig "b", damped.toml' in data["error"][k]
        assert np.isnan(data["max_abs_multiplier"][k])
    for name in header[:-1]:
        np.testing.assert_array_equal(data[name], table[name])
    # Liouville with damping sqrt(d) at a = 2, inside the stable band for these q.
    d = data["d"][2:]
    np.testing.assert_allclose(data["max_abs_multiplier"][2:], np.exp(-np.sqrt(d) * np.pi / 2), atol=1e-6)
    assert attrs["failed"] == 2
    assert json.loads(attrs["first_failures"])[1]["point"] == 2
    # Interrupted after 3 rows and half of the fourth (the failing rows among those kept).
    with open(path("full.csv")) as f:
        lines = f.read().split("\n")
    with open(path("cut.csv"), "w") as f:
        f.write("\n".join(lines[:4]) + "\n" + lines[4][:6])
    p = run(args + ["--csv", path("cut.csv"), "--hdf5", path("resumed.h5"), "--resume"])
    assert "7 computed, 3 resumed" in p.stderr
    c, resumed, a = read_h5(path("resumed.h5"))
    assert c == columns
    for name in header[:-1]:
        assert resumed[name].tobytes() == data[name].tobytes(), name
    assert resumed["error"] == data["error"]
    assert a["resumed"] == 3


@needs_hdf5
def test_refused_outputs(tmp_path, path):
    with open(MATHIEU, "rb") as f:
        before = f.read()
    args = ["ordex-sweep", "--model", MATHIEU, "--job", "floquet", "--grid", "a=0:1:2"]
    for extra, needle in ((["--hdf5", MATHIEU], "mathieu.toml"),
                          (["--hdf5", path("x"), "--csv", path("x")], "x"),
                          (["--hdf5", "-"], "--hdf5"),
                          (["--hdf5", path("nofolder/x.h5")], "nofolder")):
        p = run(args + extra, expect=2)
        assert len(p.stderr.splitlines()) == 1, p.stderr
        assert p.stderr.startswith("ordex-sweep: error: "), p.stderr
        assert needle in p.stderr
    with open(MATHIEU, "rb") as f:
        assert f.read() == before
    assert os.listdir(tmp_path) == []  # nothing written, no temporary left
