"""--hdf5 output of the apps read back with h5py: the datasets are the CSV's numbers, the
attributes carry the summary's header, the numbers obey outside checks, and a long discrete
model is streamed (the app's memory does not grow with the number of intervals).
Outside references: Liouville's formula (det Phi = 1 for Mathieu's equation, trace A = 0);
scipy.linalg.expm for the zero-order-hold step of a constant plant, Phi = e^{Ah},
Gamma = A^-1 (e^{Ah} - I) B (the usual closed form for invertible A); the Riccati terminal
condition P(t1) = Qf. Run by ctest as plot_hdf5."""
import json
import os
import subprocess
import sys
import tempfile
import unittest

import numpy as np
import scipy.linalg

from plot_support import DATA, MODELS, app, read_csv, run, write_input


HDF5_BUILT = os.environ.get("ORDEX_HDF5", "ON").upper() not in ("OFF", "FALSE", "0")
if HDF5_BUILT:
    import h5py


def attr_json(f, key):
    return json.loads(f.attrs[key])


class CompactJson(unittest.TestCase):
    def test_compact_by_default_indented_on_request(self):
        model = os.path.join(MODELS, "mathieu.toml")
        compact = run(["ordex-propagate", "--model", model, "--json", "-"]).stdout
        indented = run(["ordex-propagate", "--model", model, "--json", "-", "--json-indent", 3]).stdout
        self.assertEqual(compact.count("\n"), 1)  # one line
        self.assertTrue(compact.startswith('{"app":"ordex-propagate","ordex_version":'), compact[:60])
        self.assertGreater(indented.count("\n"), 20)
        self.assertIn('\n   "app": "ordex-propagate",', indented)
        a, b = json.loads(compact), json.loads(indented)
        for d in (a, b):
            d.pop("seconds", None)  # wall time, if reported, differs between runs
        self.assertEqual(a, b)
        p = run(["ordex-propagate", "--model", model, "--json-indent", 17], expect=2)
        self.assertEqual(p.stderr, "ordex-propagate: error: --json-indent: 17 is outside [0, 16]\n")


class WithoutHdf5(unittest.TestCase):
    @unittest.skipIf(HDF5_BUILT, "this build writes HDF5 (the tests below check it)")
    def test_refused_when_not_built(self):
        p = run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--hdf5", "x.h5"], expect=2)
        self.assertIn("no HDF5", p.stderr)


@unittest.skipUnless(HDF5_BUILT, "built without HDF5 (ORDEX_HDF5=OFF or no libhdf5-dev)")
class Hdf5Output(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.dir = cls.tmp.name

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def path(self, name):
        return os.path.join(self.dir, name)

    def test_transition_matrix_series(self):
        run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--samples", 33,
             "--csv", self.path("phi.csv"), "--hdf5", self.path("phi.h5")])
        header, values = read_csv(self.path("phi.csv"))
        with h5py.File(self.path("phi.h5"), "r") as f:
            self.assertEqual(f["phi"].shape, (33, 2, 2))
            np.testing.assert_array_equal(f["t"][:], values[:, 0])
            np.testing.assert_array_equal(f["phi"][:].reshape(33, 4), values[:, 1:])  # row-major, like the CSV
            np.testing.assert_allclose(np.linalg.det(f["phi"][:]), 1.0, rtol=1e-7)  # Liouville, trace A = 0
            self.assertEqual(f.attrs["app"], "ordex-propagate")
            self.assertEqual(list(f.attrs["states"]), ["x", "v"])
            self.assertEqual(f.attrs["t0"], 0.0)
            self.assertAlmostEqual(f.attrs["t1"], np.pi, places=15)
            self.assertEqual(attr_json(f, "model")["title"], "Mathieu equation")
            self.assertEqual(attr_json(f, "model")["parameters"], {"a": 1.0, "q": 0.5})
            self.assertIn("ordex_version", f.attrs)
            self.assertIn("method", f.attrs)

    def test_gain_schedule(self):
        run(["ordex-regulate", "--model", os.path.join(DATA, "riccati_tv.toml"), "--weights",
             os.path.join(DATA, "riccati_tv_weights.toml"), "--samples", 26, "--csv", self.path("K.csv"),
             "--p-csv", self.path("P.csv"), "--hdf5", self.path("K.h5")])
        _, K = read_csv(self.path("K.csv"))
        _, P = read_csv(self.path("P.csv"))
        with h5py.File(self.path("K.h5"), "r") as f:
            self.assertEqual(f["K"].shape, (26, 1, 2))
            self.assertEqual(f["P"].shape, (26, 2, 2))
            np.testing.assert_array_equal(f["t"][:], K[:, 0])
            np.testing.assert_array_equal(f["K"][:].reshape(26, 2), K[:, 1:])
            np.testing.assert_array_equal(f["P"][:].reshape(26, 4), P[:, 1:])
            np.testing.assert_allclose(f["P"][-1], [[1, 0], [0, 0.5]], atol=1e-12)  # P(t1) = Qf of the weights file
            self.assertEqual(f.attrs["app"], "ordex-regulate")
            self.assertEqual(list(f.attrs["inputs"]), ["f"])
            self.assertIn("Caution", f.attrs["caution"])
            np.testing.assert_array_equal(json.loads(f.attrs["K0"]), f["K"][0])  # a matrix: JSON text

    def test_responses_in_groups(self):
        t = np.linspace(0, 4, 41)
        write_input(self.path("u1.csv"), t, [np.ones_like(t), np.zeros_like(t)], ["t", "u1", "u2"])
        write_input(self.path("u2.csv"), t, [np.sin(t), np.cos(t)], ["t", "u1", "u2"])
        os.mkdir(self.path("runs"))
        run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", self.path("u1.csv"),
             "--input", self.path("u2.csv"), "--csv", self.path("runs"), "--hdf5", self.path("runs.h5")])
        with h5py.File(self.path("runs.h5"), "r") as f:
            self.assertEqual(list(f.attrs["states"]), ["x1", "x2"])
            self.assertEqual(list(f.attrs["outputs"]), ["y"])
            for k, stem in enumerate(("u1", "u2"), start=1):
                g = f["run_%d" % k]
                header, values = read_csv(self.path("runs/%s.csv" % stem))
                np.testing.assert_array_equal(g["t"][:], values[:, 0])
                np.testing.assert_array_equal(g["x"][:], values[:, 1:3])
                np.testing.assert_array_equal(g["y"][:], values[:, 3:4])
                self.assertEqual(g.attrs["input"], self.path(stem + ".csv"))
                np.testing.assert_array_equal(g.attrs["x_final"], values[-1, 1:3])

    def constant_model(self, n, m):
        """A chain of n states, damped and coupled (invented numbers), with m inputs."""
        A = -0.6 * np.eye(n) + 0.25 * np.eye(n, k=1) - 0.2 * np.eye(n, k=-1)
        B = np.zeros((n, m))
        for j in range(m):
            B[(7 * j) % n, j] = 1.0 + 0.1 * j
        rows = lambda M: "[" + ", ".join("[" + ", ".join(repr(float(x)) for x in r) + "]" for r in M) + "]"
        path = self.path("chain%d.toml" % n)
        with open(path, "w") as f:
            f.write('[system]\ntitle = "damped chain"\nstates = [%s]\ninputs = [%s]\n[matrices]\nA = %s\nB = %s\n' % (
                ", ".join('"s%d"' % i for i in range(n)), ", ".join('"u%d"' % j for j in range(m)), rows(A), rows(B)))
        return path, A, B

    def peak_memory_kb(self, args):
        """Largest resident memory of the app run with ARGS, in kB (measured in a child so that
        no other run counts)."""
        code = ("import resource, subprocess, sys\n"
                "p = subprocess.run(sys.argv[1:], capture_output=True, text=True)\n"
                "sys.stderr.write(p.stderr)\n"
                "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss if p.returncode == 0 else -1)\n")
        p = subprocess.run([sys.executable, "-c", code, app(args[0])] + [str(a) for a in args[1:]],
                           capture_output=True, text=True, timeout=300)
        self.assertEqual(p.returncode, 0, p.stderr)
        kb = int(p.stdout.strip())
        self.assertGreater(kb, 0, p.stderr)
        return kb

    def test_discrete_model_streamed(self):
        n, m, h = 40, 3, 0.01
        model, A, B = self.constant_model(n, m)
        small = self.peak_memory_kb(["ordex-discretize", "--model", model, "--from", 0, "--to", 6, "--step", h,
                                     "--hdf5", self.path("small.h5")])
        large = self.peak_memory_kb(["ordex-discretize", "--model", model, "--from", 0, "--to", 60, "--step", h,
                                     "--hdf5", self.path("large.h5")])
        # 6000 intervals of phi (40 x 40) and gamma (40 x 3) are 80 MB of doubles; held in memory
        # they would raise the peak by that much over the 600-interval run. Streamed, the peak stays.
        self.assertLess(large - small, 20 * 1024, "peak memory grew from %d kB to %d kB" % (small, large))
        expm = scipy.linalg.expm(A * h)
        gamma = np.linalg.solve(A, expm - np.eye(n)) @ B
        with h5py.File(self.path("large.h5"), "r") as f:
            self.assertEqual(f["phi"].shape, (6000, n, n))
            self.assertEqual(f["gamma"].shape, (6000, n, m))
            self.assertEqual(f["t"].shape, (6001,))
            np.testing.assert_allclose(f["t"][[0, 1, -1]], [0, h, 60], rtol=1e-13, atol=1e-15)
            for k in (0, 2999, 5999):
                np.testing.assert_allclose(f["phi"][k], expm, rtol=1e-8, atol=1e-12)
                np.testing.assert_allclose(f["gamma"][k], gamma, rtol=1e-8, atol=1e-12)
            self.assertEqual(f.attrs["intervals"], 6000)
            self.assertEqual(f.attrs["hold"], "zoh")
            self.assertEqual(attr_json(f, "model")["title"], "damped chain")
            self.assertEqual(len(f.attrs["states"]), n)
            # Growth over the grid, computed as the steps streamed by: |e^{60 A}|_2 (scipy).
            self.assertAlmostEqual(f.attrs["growth"] / np.linalg.norm(scipy.linalg.expm(60 * A), 2), 1.0, places=6)

    def test_response_streamed(self):
        n, m = 40, 3
        model, A, B = self.constant_model(n, m)
        u = np.array([1.0, 0.5, -1.0])
        write_input(self.path("hold.csv"), [0.0, 60.0], [[x, x] for x in u], ["t", "u0", "u1", "u2"])
        runs = {}
        for N in (20001, 200001):
            runs[N] = self.peak_memory_kb(["ordex-respond", "--model", model, "--input", self.path("hold.csv"),
                                           "--hold", "zoh", "--samples", N, "--hdf5", self.path("r%d.h5" % N)])
        # 200,000 samples of 40 states are 64 MB of doubles; held in memory they would raise the
        # peak by about that much over the 20,000-sample run. Streamed, the peak stays.
        self.assertLess(runs[200001] - runs[20001], 20 * 1024,
                        "peak memory grew from %d kB to %d kB" % (runs[20001], runs[200001]))
        with h5py.File(self.path("r200001.h5"), "r") as f:
            g = f["run_1"]
            self.assertEqual(g["t"].shape, (200001,))
            self.assertEqual(g["x"].shape, (200001, n))
            self.assertNotIn("y", g)  # the model has no outputs
            self.assertEqual(g.attrs["samples"], 200001)
            # x(t) = A^-1 (e^{At} - I) B u from x(0) = 0 under a constant input (variation of
            # constants; scipy.linalg.expm).
            for k in (1, 100000, 200000):
                t = g["t"][k]
                self.assertAlmostEqual(t, 60.0 * k / 200000, places=12)
                want = np.linalg.solve(A, scipy.linalg.expm(A * t) - np.eye(n)) @ (B @ u)
                np.testing.assert_allclose(g["x"][k], want, rtol=1e-8, atol=1e-11)
            np.testing.assert_array_equal(g.attrs["x_final"], g["x"][-1])

    def test_single_response_matches_csv(self):
        t = np.linspace(0, 3, 31)
        write_input(self.path("one.csv"), t, [np.cos(2 * t), t / 3], ["t", "u1", "u2"])
        run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", self.path("one.csv"),
             "--hold", "linear", "--samples", 17, "--csv", self.path("one_out.csv"), "--json", self.path("one.json"),
             "--hdf5", self.path("one.h5")])
        header, values = read_csv(self.path("one_out.csv"))
        with open(self.path("one.json")) as f:
            summary = json.load(f)
        with h5py.File(self.path("one.h5"), "r") as f:
            self.assertEqual(list(f.keys()), ["run_1"])
            g = f["run_1"]
            np.testing.assert_array_equal(g["t"][:], values[:, 0])
            np.testing.assert_array_equal(g["x"][:], values[:, 1:3])
            np.testing.assert_array_equal(g["y"][:], values[:, 3:4])
            np.testing.assert_array_equal(g["x"][-1], summary["x_final"])
            self.assertEqual(f.attrs["app"], "ordex-respond")
            self.assertEqual(f.attrs["hold"], "linear")
            self.assertEqual(header, ["t", "x1", "x2", "y"])

    def test_discrete_model_matches_csv_with_linear_hold(self):
        run(["ordex-discretize", "--model", os.path.join(DATA, "response_pumped.toml"), "--from", 0, "--to", 2,
             "--samples", 9, "--hold", "linear", "--csv", self.path("d.csv"), "--json", self.path("d.json"),
             "--hdf5", self.path("d.h5")])
        header, values = read_csv(self.path("d.csv"))
        with open(self.path("d.json")) as f:
            summary = json.load(f)
        with h5py.File(self.path("d.h5"), "r") as f:
            np.testing.assert_array_equal(f["t"][:], summary["times"])
            np.testing.assert_array_equal(f["phi"][:].reshape(8, 4), values[:, 3:7])
            np.testing.assert_array_equal(f["gamma0"][:].reshape(8, 4), values[:, 7:11])
            np.testing.assert_array_equal(f["gamma1"][:].reshape(8, 4), values[:, 11:15])
            np.testing.assert_array_equal(f["phi"][:], np.array(summary["phi"]))
            self.assertNotIn("phi", f.attrs)  # the series are datasets, not attributes
            self.assertEqual(f.attrs["hold"], "linear")

    def test_refused_outputs(self):
        model = os.path.join(MODELS, "mathieu.toml")
        with open(model, "rb") as f:
            before = f.read()
        for target, needle in ((model, "mathieu.toml"), ("-", "--hdf5"), (self.path("nofolder/x.h5"), "nofolder")):
            p = run(["ordex-propagate", "--model", model, "--hdf5", target], expect=2)
            self.assertEqual(len(p.stderr.splitlines()), 1, p.stderr)
            self.assertTrue(p.stderr.startswith("ordex-propagate: error: "), p.stderr)
            self.assertIn(needle, p.stderr)
        with open(model, "rb") as f:
            self.assertEqual(f.read(), before)
        # A numerical failure half-way (A(t) = 1/(t - 1) at t = 1) leaves no file, complete or not.
        blowup = self.path("blowup.h5")
        p = run(["ordex-propagate", "--model", os.path.join(DATA, "cli_blowup.toml"), "--hdf5", blowup], expect=3)
        self.assertEqual(len(p.stderr.splitlines()), 1, p.stderr)
        self.assertFalse(os.path.exists(blowup))
        self.assertEqual([x for x in os.listdir(self.dir) if x.startswith(".ordex-")], [])


if __name__ == "__main__":
    unittest.main()
