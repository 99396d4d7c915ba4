"""Systems in the Python package: model files, Python callables, constant and sampled arrays;
the exceptions of the library and of callables; callable systems from Python threads.
Outside references: numpy.interp and scipy.interpolate.PchipInterpolator (scipy 1.10, Debian) for
the interpolation of sampled matrices; scipy.linalg.expm for constant systems."""
import os
import threading
import types

import numpy as np
import pytest
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


def test_load_with_overrides():
    sys = ordex.load_model(PUMPED, set={"a": 1.5, "zeta": "0.05"})
    assert sys.states == ["x", "v"]
    assert sys.inputs == ["f"]
    assert sys.outputs == ["position"]
    assert round(abs(sys.period - np.pi), 7) == 0
    assert sys.parameters == ({"a": 1.5, "q": 0.4, "zeta": 0.05})
    np.testing.assert_allclose(sys.A(0.3), [[0, 1], [-(1.5 - 0.8 * np.cos(0.6)), -0.1]], atol=1e-15)
    np.testing.assert_array_equal(sys.B(0.0), [[0], [1]])
    np.testing.assert_array_equal(sys.D(0.0), [[0]])


def test_errors_carry_the_library_message():
    with pytest.raises(ordex.InputError) as c:
        ordex.load_model(PUMPED, set={"omega": 1.0})
    assert isinstance(c.value, ValueError)
    assert "omega" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.load_model(os.path.join(MODELS, "no_such_model.toml"))
    assert "no_such_model.toml" in str(c.value)
    sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"))
    with pytest.raises(ordex.InputError) as c:
        sys.B(0.0)
    assert "no inputs" in str(c.value)


def test_same_phi_as_the_model_file():
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
    assert not py_sys.time_invariant


def test_constant_arrays():
    A = np.array([[-1.0, 2.0], [0.0, -3.0]])
    sys = ordex.System.from_callables(["a", "b"], A=A, B=np.eye(2), C=[[1, 1]])
    assert sys.time_invariant
    assert sys.inputs == ["u1", "u2"]
    assert sys.outputs == ["y1"]
    np.testing.assert_allclose(ordex.transition(sys, 0, 1.7).phi, linalg.expm(1.7 * A), atol=1e-9)


def test_python_exception_propagates_as_itself():
    class SensorFault(Exception):
        pass

    def a(t):
        if t > 0.5:
            raise SensorFault("no data after t = 0.5")
        return np.zeros((2, 2))

    sys = ordex.System.from_callables(["x", "v"], A=a)
    with pytest.raises(SensorFault) as c:
        ordex.transition(sys, 0.0, 1.0)
    assert "no data" in str(c.value)
    # The system stays usable afterwards.
    np.testing.assert_allclose(ordex.transition(sys, 0.0, 0.4).phi, np.eye(2), atol=1e-14)
    # Also when the library absorbs the failure (the regulator's closed-loop check).
    sysb = ordex.System.from_callables(["x", "v"], A=a, B=[[0], [1]])
    with pytest.raises(SensorFault):
        ordex.regulate(sysb, 0.0, 1.0)


def test_wrong_shape_names_matrix_and_t():
    sys = ordex.System.from_callables(["x", "v"], A=lambda t: np.zeros(3))
    with pytest.raises(ordex.InputError) as c:
        ordex.transition(sys, 0.0, 1.0)
    msg = str(c.value)
    assert "A(t = " in msg
    assert "(3,)" in msg
    assert "(2, 2)" in msg
    sys = ordex.System.from_callables(["x"], A=lambda t: "fast")
    with pytest.raises(ordex.InputError) as c:
        sys.A(0.0)
    assert "str" in str(c.value)
    sys = ordex.System.from_callables(["x"], A=lambda t: None)
    with pytest.raises(ordex.InputError) as c:
        ordex.transition(sys, 0.0, 1.0)
    assert "NoneType" in str(c.value)
    with pytest.raises(TypeError):  # not a crash
        ordex.transition(None, 0.0, 1.0)


def test_construction_errors():
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_callables(["x", "v"], A=np.eye(3))
    assert "(2, 2)" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_callables(["x"], A=[[0.0]], B=lambda t: np.ones((1, 1)))
    assert "inputs" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_callables(["x"], A=[[0.0]], D=[[1.0]])
    assert "D needs B and C" in str(c.value)


def test_callbacks_never_overlap():
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
    assert state["calls"] > 0
    assert state["overlap"] == 1


def test_from_python_threads():
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
        assert not th.is_alive()
    assert errors == []
    for k in range(2):
        np.testing.assert_array_equal(results[k], expected)
    np.testing.assert_allclose(main, expected, atol=1e-12)


def test_one_system_two_threads():
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
        assert errors == []
        assert len(out) == 15
        for phi in out:
            np.testing.assert_array_equal(phi, expected)


@pytest.fixture
def sampled():
    """The pumped oscillator's A(t) (41 x 2 x 2) and an input gain B(t) (41 x 2 x 1) sampled at 41
    times on [0, 4]."""
    times = np.linspace(0.0, 4.0, 41)
    k = 1.2 - 0.8 * np.cos(2 * times)
    A = np.zeros((41, 2, 2))
    A[:, 0, 1] = 1.0
    A[:, 1, 0] = -k
    B = np.zeros((41, 2, 1))
    B[:, 1, 0] = 1.0 + 0.1 * times
    return types.SimpleNamespace(times=times, A=A, B=B)


def test_pchip_matches_scipy(sampled):
    sys = ordex.System.from_samples(["x", "v"], sampled.times, sampled.A, B=sampled.B)
    ref = interpolate.PchipInterpolator(sampled.times, sampled.A[:, 1, 0])
    for t in (0.05, 0.33, 1.77, 3.999):
        assert round(abs(sys.A(t)[1, 0] - float(ref(t))), 13) == 0
        assert round(abs(sys.B(t)[1, 0] - (1.0 + 0.1 * t)), 13) == 0
    assert sys.inputs == ["u1"]


def test_linear_matches_numpy_interp(sampled):
    sys = ordex.System.from_samples(["x", "v"], sampled.times, sampled.A, interpolation="linear")
    for t in (0.05, 0.33, 1.77):
        assert round(abs(sys.A(t)[1, 0] - (np.interp(t, sampled.times, sampled.A[:, 1, 0]))), 14) == 0
    assert all(0 < b < 4 for b in sys.breakpoints)


def test_phi_close_to_the_model():
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


def test_errors(sampled):
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_samples(["x", "v"], sampled.times[::-1], sampled.A)
    assert "strictly increasing" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_samples(["x", "v"], sampled.times, sampled.A[:, :1, :])
    assert "shape" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_samples(["x", "v"], sampled.times, sampled.A, interpolation="spline")
    assert "interpolation" in str(c.value)
    bad = sampled.A.copy()
    bad[3, 1, 0] = np.nan
    with pytest.raises(ordex.InputError) as c:
        ordex.System.from_samples(["x", "v"], sampled.times, bad)
    assert "A[2][1]" in str(c.value)
    sys = ordex.System.from_samples(["x", "v"], sampled.times, sampled.A)
    with pytest.raises(ordex.InputError) as c:
        ordex.transition(sys, 0.0, 5.0)
    assert "from_samples" in str(c.value)
    held = ordex.System.from_samples(["x", "v"], sampled.times, sampled.A, outside="hold")
    np.testing.assert_allclose(held.A(6.0), sampled.A[-1])


def test_every_public_name_has_a_docstring():
    for name in ordex.__all__:
        obj = getattr(ordex, name)
        if callable(obj):
            assert obj.__doc__ and len(obj.__doc__) > 40, name
    for name in ("from_callables", "from_samples", "A", "states", "period"):
        assert getattr(ordex.System, name).__doc__, name


def test_import_needs_no_matplotlib():
    import subprocess
    import sys
    code = "import sys, ordex; sys.exit('matplotlib' in sys.modules)"
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0
