"""Shared set-up of the plot and HDF5 tests: where the apps and models are, and running an app."""
import os
import subprocess

SOURCE_DIR = os.environ.get("ORDEX_SOURCE_DIR",
                            os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))
BIN_DIR = os.environ.get("ORDEX_BIN_DIR", os.path.join(SOURCE_DIR, "build", "bin"))
MODELS = os.path.join(SOURCE_DIR, "models")
DATA = os.path.join(SOURCE_DIR, "tests", "data")


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
