"""Shared set-up of the plot and HDF5 tests: where the apps and models are, and running an app."""
import os
import subprocess

import pytest

SOURCE_DIR = os.environ.get("ORDEX_SOURCE_DIR",
                            os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))
BIN_DIR = os.environ.get("ORDEX_BIN_DIR", os.path.join(SOURCE_DIR, "build", "bin"))
MODELS = os.path.join(SOURCE_DIR, "models")
DATA = os.path.join(SOURCE_DIR, "tests", "data")
HDF5_BUILT = os.environ.get("ORDEX_HDF5", "ON").upper() not in ("OFF", "FALSE", "0")
needs_hdf5 = pytest.mark.skipif(not HDF5_BUILT, reason="built without HDF5 (ORDEX_HDF5=OFF or no libhdf5-dev)")


@pytest.fixture
def path(tmp_path):
    """NAME inside the test's own temporary folder (a fixture: import it into the test file)."""
    return lambda name: str(tmp_path / name)


def load_plot_module():
    """python/ordex/plot.py of this source tree, loaded by file: it needs no compiled extension,
    so the tests do not depend on the package's __init__ (which loads the bindings)."""
    import importlib.util
    spec = importlib.util.spec_from_file_location("ordex_plot_under_test",
                                                  os.path.join(SOURCE_DIR, "python", "ordex", "plot.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def app(name):
    return os.path.join(BIN_DIR, name)


def run(args, expect=0):
    """Runs an app (ARGS[0] a name in BIN_DIR); returns the completed process, checking its status."""
    p = subprocess.run([app(args[0])] + [str(a) for a in args[1:]], capture_output=True, text=True, timeout=300)
    if p.returncode != expect:
        raise AssertionError("%s exited %d (expected %d): %s" % (" ".join(map(str, args)), p.returncode, expect,
                                                                 p.stderr.strip()[-2000:]))
    return p


def write_input(path, times, columns, header):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for k, t in enumerate(times):
            f.write(",".join(repr(float(v)) for v in [t] + [c[k] for c in columns]) + "\n")


def read_csv(path):
    import numpy as np
    with open(path) as f:
        header = f.readline().strip().split(",")
    return header, np.loadtxt(path, delimiter=",", skiprows=1, ndmin=2)


def write_app_results(d):
    """The app results both figure tests read, written into folder D: Mathieu's Phi (phi.csv, .json)
    and Floquet analysis (floquet.json), the orbit's Gramian profile (profile.csv, .json), a
    regulator's gains and P (K.csv, P.csv, regulate.json), a steady two-input history
    (steady.csv), a constant plant's discrete model (discrete.csv, .json), a Mathieu chart
    (chart.csv), a dispersed nonlinear batch (simulate.json) and a covariance analysis
    (estimate.json)."""
    import numpy as np
    mathieu = os.path.join(MODELS, "mathieu.toml")
    run(["ordex-propagate", "--model", mathieu, "--csv", f"{d}/phi.csv", "--samples", 41, "--json", f"{d}/phi.json"])
    run(["ordex-propagate", "--model", mathieu, "--floquet", "--set", "q=1.4", "--json", f"{d}/floquet.json"])
    run(["ordex-gramian", "--model", os.path.join(MODELS, "orbit_relative_motion.toml"), "--window-length", 1500,
         "--csv", f"{d}/profile.csv", "--json", f"{d}/profile.json"])
    run(["ordex-regulate", "--model", os.path.join(DATA, "riccati_tv.toml"), "--weights",
         os.path.join(DATA, "riccati_tv_weights.toml"), "--samples", 31, "--csv", f"{d}/K.csv",
         "--p-csv", f"{d}/P.csv", "--json", f"{d}/regulate.json"])
    t = np.linspace(0, 6, 61)
    write_input(f"{d}/steady.csv", t, [np.ones_like(t), 0.5 * np.ones_like(t)], ["t", "u1", "u2"])
    run(["ordex-discretize", "--model", os.path.join(DATA, "response_constant.toml"), "--from", 0, "--to", 4,
         "--step", 0.25, "--csv", f"{d}/discrete.csv", "--json", f"{d}/discrete.json"])
    run(["ordex-sweep", "--model", mathieu, "--job", "floquet", "--grid", "a=0.2:2.2:6", "--grid", "q=0:1.5:4",
         "--csv", f"{d}/chart.csv"])
    run(["ordex-simulate", "--model", os.path.join(MODELS, "chaser_two_body.toml"), "--runs", 5, "--seed", 2,
         "--disperse", os.path.join(MODELS, "chaser_dispersions.toml"), "--json", f"{d}/simulate.json"])
    run(["ordex-estimate", "--model", os.path.join(MODELS, "sled_depth.toml"), "--noise",
         os.path.join(MODELS, "sled_depth_noise.toml"), "--samples", 21, "--json", f"{d}/estimate.json"])
