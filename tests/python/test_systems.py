"""Systems in the Python package: model files, Python callables, constant and sampled arrays;
the exceptions of the library and of callables; callable systems from Python threads.
Outside references: numpy.interp and scipy.interpolate.PchipInterpolator (scipy 1.10, Debian) for
the interpolation of sampled matrices; scipy.linalg.expm for constant systems."""
import os
import threading
import unittest

import numpy as np
from scipy import interpolate, linalg

import ordex

MODELS = os.environ.get("ORDEX_MODELS_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "models"))
PUMPED = os.path.join(MODELS, "pumped_oscillator.toml")


def pumped_callables(a=1.2, q=0.4, zeta=0.0, **kw):
    """models/pumped_oscillator.toml written as Python callables."""
    return ordex.System.from_callables(
        ["x", "v"], A=lambda t: np.array([[0.0, 1.0], [-(a - 2 * q * np.cos(2 * t)), -2 * zeta]]),
        B=lambda t: np.array([[0.0], [1.0]]), C=[[1.0, 0.0]], inputs=["f"], outputs=["position"],
        period=np.pi, **kw)


class ModelFiles(unittest.TestCase):
    def test_load_with_overrides(self):
        sys = ordex.load_model(PUMPED, set={"a": 1.5, "zeta": "0.05"})
        self.assertEqual(sys.states, ["x", "v"])
        self.assertEqual(sys.inputs, ["f"])
        self.assertEqual(sys.outputs, ["position"])
        self.assertAlmostEqual(sys.period, np.pi)
        self.assertEqual(sys.parameters, {"a": 1.5, "q": 0.4, "zeta": 0.05})
        np.testing.assert_allclose(sys.A(0.3), [[0, 1], [-(1.5 - 0.8 * np.cos(0.6)), -0.1]], atol=1e-15)
        np.testing.assert_array_equal(sys.B(0.0), [[0], [1]])
        np.testing.assert_array_equal(sys.D(0.0), [[0]])

    def test_errors_carry_the_library_message(self):
        with self.assertRaises(ordex.InputError) as c:
            ordex.load_model(PUMPED, set={"omega": 1.0})
        self.assertIsInstance(c.exception, ValueError)
        self.assertIn("omega", str(c.exception))
        with self.assertRaises(ordex.InputError) as c:
            ordex.load_model(os.path.join(MODELS, "no_such_model.toml"))
        self.assertIn("no_such_model.toml", str(c.exception))
        sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"))
        with self.assertRaises(ordex.InputError) as c:
            sys.B(0.0)
        self.assertIn("no inputs", str(c.exception))


class Callables(unittest.TestCase):
    def test_same_phi_as_the_model_file(self):
        file_sys = ordex.load_model(PUMPED)
        py_sys = pumped_callables()
        # The same algorithm on the same plant: only rounding differs (numpy's cos against the
        # expression evaluator's). Magnus agrees to round-off; a rounding difference can flip
        # one of BDF's step-size decisions, so there the agreement is at the tolerance's level.
        for method, tol in (("magnus6", 1e-12), ("bdf", 1e-7)):
            a = ordex.transition(file_sys, 0.0, 5.0, method=method, rtol=1e-11, atol=1e-13).phi
            b = ordex.transition(py_sys, 0.0, 5.0, method=method, rtol=1e-11, atol=1e-13).phi
            np.testing.assert_allclose(b, a, rtol=0, atol=tol, err_msg=method)
        ga = ordex.gramian(file_sys, 0.0, 3.0).gramian
        gb = ordex.gramian(py_sys, 0.0, 3.0).gramian
        np.testing.assert_allclose(gb, ga, rtol=1e-12, atol=1e-14)
        self.assertFalse(py_sys.time_invariant)

    def test_constant_arrays(self):
        A = np.array([[-1.0, 2.0], [0.0, -3.0]])
        sys = ordex.System.from_callables(["a", "b"], A=A, B=np.eye(2), C=[[1, 1]])
        self.assertTrue(sys.time_invariant)
        self.assertEqual(sys.inputs, ["u1", "u2"])
        self.assertEqual(sys.outputs, ["y1"])
        np.testing.assert_allclose(ordex.transition(sys, 0, 1.7).phi, linalg.expm(1.7 * A), atol=1e-9)

    def test_python_exception_propagates_as_itself(self):
        class SensorFault(Exception):
            pass

        def a(t):
            if t > 0.5:
                raise SensorFault("no data after t = 0.5")
            return np.zeros((2, 2))

        sys = ordex.System.from_callables(["x", "v"], A=a)
        with self.assertRaises(SensorFault) as c:
            ordex.transition(sys, 0.0, 1.0)
        self.assertIn("no data", str(c.exception))
        # The system stays usable afterwards.
        np.testing.assert_allclose(ordex.transition(sys, 0.0, 0.4).phi, np.eye(2), atol=1e-14)
        # Also when the library absorbs the failure (the regulator's closed-loop check).
        sysb = ordex.System.from_callables(["x", "v"], A=a, B=[[0], [1]])
        with self.assertRaises(SensorFault):
            ordex.regulate(sysb, 0.0, 1.0)

    def test_wrong_shape_names_matrix_and_t(self):
        sys = ordex.System.from_callables(["x", "v"], A=lambda t: np.zeros(3))
        with self.assertRaises(ordex.InputError) as c:
            ordex.transition(sys, 0.0, 1.0)
        msg = str(c.exception)
        self.assertIn("A(t = ", msg)
        self.assertIn("(3,)", msg)
        self.assertIn("(2, 2)", msg)
        sys = ordex.System.from_callables(["x"], A=lambda t: "fast")
        with self.assertRaises(ordex.InputError) as c:
            sys.A(0.0)
        self.assertIn("str", str(c.exception))
        sys = ordex.System.from_callables(["x"], A=lambda t: None)
        with self.assertRaises(ordex.InputError) as c:
            ordex.transition(sys, 0.0, 1.0)
        self.assertIn("NoneType", str(c.exception))
        with self.assertRaises(TypeError):  # not a crash
            ordex.transition(None, 0.0, 1.0)

    def test_construction_errors(self):
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_callables(["x", "v"], A=np.eye(3))
        self.assertIn("(2, 2)", str(c.exception))
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_callables(["x"], A=[[0.0]], B=lambda t: np.ones((1, 1)))
        self.assertIn("inputs", str(c.exception))
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_callables(["x"], A=[[0.0]], D=[[1.0]])
        self.assertIn("D needs B and C", str(c.exception))

    def test_callbacks_never_overlap(self):
        # The Gramian runs its grid on 2 threads for a model file; a callable system must be
        # evaluated by one thread at a time.
        state = {"active": 0, "overlap": 0, "threads": set(), "calls": 0}
        lock = threading.Lock()

        def a(t):
            with lock:
                state["active"] += 1
                state["overlap"] = max(state["overlap"], state["active"])
                state["threads"].add(threading.get_ident())
                state["calls"] += 1
            m = np.array([[0.0, 1.0], [-(1.2 - 0.8 * np.cos(2 * t)), 0.0]])
            with lock:
                state["active"] -= 1
            return m

        sys = ordex.System.from_callables(["x", "v"], A=a, B=[[0.0], [1.0]])
        g = ordex.gramian(sys, 0.0, 3.0, threads=2)
        ref = ordex.gramian(ordex.load_model(PUMPED), 0.0, 3.0, threads=2)
        np.testing.assert_allclose(g.gramian, ref.gramian, rtol=1e-12, atol=1e-14)
        self.assertGreater(state["calls"], 0)
        self.assertEqual(state["overlap"], 1)

    def test_from_python_threads(self):
        # Two Python threads each run a job on its own callable system, while the main thread
        # runs a model-file job (GIL released there): all finish with the single-thread results.
        expected = ordex.transition(pumped_callables(), 0.0, 4.0).phi
        results, errors = {}, []

        def work(key):
            try:
                results[key] = ordex.transition(pumped_callables(), 0.0, 4.0).phi
            except Exception as e:  # reported below
                errors.append(e)

        threads = [threading.Thread(target=work, args=(k,)) for k in range(2)]
        for th in threads:
            th.start()
        main = ordex.transition(ordex.load_model(PUMPED), 0.0, 4.0).phi
        for th in threads:
            th.join(timeout=300)
            self.assertFalse(th.is_alive())
        self.assertEqual(errors, [])
        for k in range(2):
            np.testing.assert_array_equal(results[k], expected)
        np.testing.assert_allclose(main, expected, atol=1e-12)


class SharedBetweenThreads(unittest.TestCase):
    def test_one_system_two_threads(self):
        # A System is used by one thread at a time (an expression model keeps its variables
        # inside); Python threads sharing one object take turns, so each result equals the
        # single-thread one exactly (without the lock this fails: the threads overwrite each
        # other's t inside the model).
        for sys in (ordex.load_model(PUMPED), pumped_callables()):
            expected = ordex.transition(sys, 0.0, 200.0, use_period=False).phi
            out, errors = [], []

            def work():
                try:
                    for _ in range(5):
                        out.append(ordex.transition(sys, 0.0, 200.0, use_period=False).phi)
                except Exception as e:  # reported below
                    errors.append(e)

            threads = [threading.Thread(target=work) for _ in range(3)]
            for th in threads:
                th.start()
            for th in threads:
                th.join(timeout=300)
            self.assertEqual(errors, [])
            self.assertEqual(len(out), 15)
            for phi in out:
                np.testing.assert_array_equal(phi, expected)


class Samples(unittest.TestCase):
    def setUp(self):
        self.times = np.linspace(0.0, 4.0, 41)
        k = 1.2 - 0.8 * np.cos(2 * self.times)
        self.A = np.zeros((41, 2, 2))
        self.A[:, 0, 1] = 1.0
        self.A[:, 1, 0] = -k
        self.B = np.zeros((41, 2, 1))
        self.B[:, 1, 0] = 1.0 + 0.1 * self.times

    def test_pchip_matches_scipy(self):
        sys = ordex.System.from_samples(["x", "v"], self.times, self.A, B=self.B)
        ref = interpolate.PchipInterpolator(self.times, self.A[:, 1, 0])
        for t in (0.05, 0.33, 1.77, 3.999):
            self.assertAlmostEqual(sys.A(t)[1, 0], float(ref(t)), places=13)
            self.assertAlmostEqual(sys.B(t)[1, 0], 1.0 + 0.1 * t, places=13)
        self.assertEqual(sys.inputs, ["u1"])

    def test_linear_matches_numpy_interp(self):
        sys = ordex.System.from_samples(["x", "v"], self.times, self.A, interpolation="linear")
        for t in (0.05, 0.33, 1.77):
            self.assertAlmostEqual(sys.A(t)[1, 0], np.interp(t, self.times, self.A[:, 1, 0]), places=14)
        self.assertTrue(all(0 < b < 4 for b in sys.breakpoints))

    def test_phi_close_to_the_model(self):
        # Dense samples of the pumped oscillator: the interpolated plant's Phi approaches the
        # model's (pchip error O(h^4)).
        t = np.linspace(0.0, 4.0, 401)
        A = np.zeros((401, 2, 2))
        A[:, 0, 1] = 1.0
        A[:, 1, 0] = -(1.2 - 0.8 * np.cos(2 * t))
        sys = ordex.System.from_samples(["x", "v"], t, A)
        phi = ordex.transition(sys, 0.0, 4.0).phi
        ref = ordex.transition(ordex.load_model(PUMPED), 0.0, 4.0).phi
        np.testing.assert_allclose(phi, ref, atol=1e-6)

    def test_errors(self):
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_samples(["x", "v"], self.times[::-1], self.A)
        self.assertIn("strictly increasing", str(c.exception))
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_samples(["x", "v"], self.times, self.A[:, :1, :])
        self.assertIn("shape", str(c.exception))
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_samples(["x", "v"], self.times, self.A, interpolation="spline")
        self.assertIn("interpolation", str(c.exception))
        bad = self.A.copy()
        bad[3, 1, 0] = np.nan
        with self.assertRaises(ordex.InputError) as c:
            ordex.System.from_samples(["x", "v"], self.times, bad)
        self.assertIn("A[2][1]", str(c.exception))
        sys = ordex.System.from_samples(["x", "v"], self.times, self.A)
        with self.assertRaises(ordex.InputError) as c:
            ordex.transition(sys, 0.0, 5.0)
        self.assertIn("from_samples", str(c.exception))
        held = ordex.System.from_samples(["x", "v"], self.times, self.A, outside="hold")
        np.testing.assert_allclose(held.A(6.0), self.A[-1])


class Docs(unittest.TestCase):
    def test_every_public_name_has_a_docstring(self):
        for name in ordex.__all__:
            obj = getattr(ordex, name)
            if callable(obj):
                self.assertTrue(obj.__doc__ and len(obj.__doc__) > 40, name)
        for name in ("from_callables", "from_samples", "A", "states", "period"):
            self.assertTrue(getattr(ordex.System, name).__doc__, name)

    def test_import_needs_no_matplotlib(self):
        import subprocess
        import sys
        code = "import sys, ordex; sys.exit('matplotlib' in sys.modules)"
        self.assertEqual(subprocess.run([sys.executable, "-c", code]).returncode, 0)


if __name__ == "__main__":
    unittest.main()
