"""The job functions of the Python package against outside references (scipy 1.10, Debian):
scipy.linalg.expm, scipy.integrate.solve_ivp, scipy.linalg.solve_continuous_lyapunov,
scipy.linalg.solve_continuous_are, scipy.signal.lsim and scipy.signal.cont2discrete; plus
closed forms where the literature gives them, option validation and the JSON summaries."""
import json
import os

import numpy as np
import pytest
from scipy import integrate, linalg, signal

import ordex

MODELS = os.environ.get("ORDEX_MODELS_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "models"))

# A stable, lightly coupled constant plant of our own (3 states, 2 inputs, 1 output).
A3 = np.array([[-0.4, 1.0, 0.0], [-1.5, -0.3, 0.5], [0.2, 0.0, -0.8]])
B3 = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 0.7]])
C3 = np.array([[1.0, 0.0, 0.5]])
D3 = np.array([[0.1, 0.0]])


def constant_plant():
    return ordex.System.from_callables(["p", "q", "r"], A=A3, B=B3, C=C3, D=D3)


def mathieu_rhs(a, q):
    return lambda t, x: np.array([x[1], -(a - 2 * q * np.cos(2 * t)) * x[0]])


def solve_ivp_phi(rhs, n, t0, t1):
    """Phi(t1, t0) column by column with solve_ivp (DOP853) at tight tolerance."""
    cols = []
    for j in range(n):
        e = np.zeros(n)
        e[j] = 1
        sol = integrate.solve_ivp(rhs, (t0, t1), e, method="DOP853", rtol=1e-12, atol=1e-14)
        cols.append(sol.y[:, -1])
    return np.column_stack(cols)


def test_constant_matches_expm():
    r = ordex.transition(constant_plant(), 0.0, 2.5)
    ref = linalg.expm(A3 * 2.5)  # Phi(t1, t0) = exp(A (t1 - t0)) for constant A
    np.testing.assert_allclose(r.phi, ref, rtol=0, atol=1e-8)
    assert r.error_estimate < 1e-6
    assert r.phi.shape == (3, 3)


def test_backward_is_inverse():
    r = ordex.transition(constant_plant(), 2.0, 0.5)
    np.testing.assert_allclose(r.phi, linalg.expm(-1.5 * A3), atol=1e-8)


def test_mathieu_matches_solve_ivp():
    sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"), set={"a": 2.3, "q": 0.9})
    for method in ("auto", "magnus4", "adams", "bdf"):
        r = ordex.transition(sys, 0.0, 4.0, method=method, rtol=1e-10, atol=1e-12)
        ref = solve_ivp_phi(mathieu_rhs(2.3, 0.9), 2, 0.0, 4.0)
        np.testing.assert_allclose(r.phi, ref, atol=5e-7, err_msg=method)


def test_grid_streams_into_array():
    sys = constant_plant()
    r = ordex.transition(sys, 0.0, 2.0, samples=5)
    assert r.phis.shape == (5, 3, 3)
    np.testing.assert_allclose(r.times, np.linspace(0, 2, 5), atol=1e-15)
    for t, phi in zip(r.times, r.phis):
        np.testing.assert_allclose(phi, linalg.expm(A3 * t), atol=1e-8)


def test_options_validated_by_the_library():
    sys = constant_plant()
    with pytest.raises(ordex.InputError) as c:
        ordex.transition(sys, 0, 1, rtol=1.0)
    assert "PropagationOptions::rtol" in str(c.value)
    with pytest.raises(ValueError) as c:
        ordex.transition(sys, 0, 1, method="rk4")
    assert "PropagationOptions::method" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.transition(sys, 0, 1, samples=1)
    assert "PropagateOptions::samples" in str(c.value)


def test_to_dict_is_the_summary():
    r = ordex.transition(constant_plant(), 0.0, 1.0)
    d = r.to_dict()
    for key in ("ordex_version", "model", "t0", "t1", "method", "phi", "error_estimate", "liouville"):
        assert key in d
    np.testing.assert_array_equal(np.array(d["phi"]), r.phi)  # full precision in the JSON
    assert "Transition matrix" in str(r)
    json.dumps(d)


def test_numerical_error_class():
    # A(t) = 1 / (1 - t)^3 blows up at t = 1: the integration must fail, as NumericalError.
    def a(t):
        with np.errstate(divide="ignore"):
            return np.array([[np.float64(1.0) / (1.0 - t) ** 3]])
    sys = ordex.System.from_callables(["x"], A=a)
    with pytest.raises(ordex.NumericalError) as c:
        ordex.transition(sys, 0.0, 2.0)
    assert isinstance(c.value, ArithmeticError)


def test_mathieu_monodromy_against_solve_ivp():
    a, q = 1.0, 0.5
    sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"), set={"a": a, "q": q})
    f = ordex.floquet(sys, rtol=1e-10, atol=1e-12)
    M = solve_ivp_phi(mathieu_rhs(a, q), 2, 0.0, np.pi)
    np.testing.assert_allclose(f.monodromy, M, atol=1e-7)
    ref = np.sort(np.abs(np.linalg.eigvals(M)))[::-1]
    np.testing.assert_allclose(np.abs(f.multipliers), ref, rtol=1e-6)
    # a = 1, q = 0.5 lies inside the first instability tongue (a_0(q) < 1 < b_1(q) fails:
    # 1 lies between b_1(0.5) and a_1(0.5), Abramowitz & Stegun ch. 20, scipy.special).
    from scipy.special import mathieu_a, mathieu_b
    assert mathieu_b(1, q) < a < mathieu_a(1, q)
    assert not f.stable
    assert round(abs(f.period - np.pi), 7) == 0
    # Liouville: trace A = 0, so det M = 1 = product of the multipliers.
    assert round(abs(abs(np.prod(f.multipliers)) - 1.0), 7) == 0


def test_needs_a_period():
    with pytest.raises(ordex.InputError) as c:
        ordex.floquet(constant_plant())
    assert "period" in str(c.value)


def test_long_window_matches_lyapunov():
    # Controllability Gramian int_0^T exp(-A s) B B' exp(-A' s) ds of the reversed-time plant
    # -A (stable when A is anti-stable): use the reachability Gramian of the stable A3, which
    # tends to the solution of A W + W A' + B B' = 0 as T grows.
    sys = constant_plant()
    r = ordex.gramian(sys, 0.0, 60.0, kind="reachability", rtol=1e-10, atol=1e-12)
    ref = linalg.solve_continuous_lyapunov(A3, -B3 @ B3.T)
    np.testing.assert_allclose(r.gramian, ref, rtol=1e-6, atol=1e-9)
    assert r.full_rank
    assert r.rank == 3
    np.testing.assert_allclose(r.eigenvalues, np.linalg.eigvalsh(ref), rtol=1e-6)


def test_observability_and_lyapunov_route():
    sys = constant_plant()
    # Observability Gramian over [0, T] = int exp(A' s) C'C exp(A s) ds -> A'M + MA + C'C = 0.
    ref = linalg.solve_continuous_lyapunov(A3.T, -C3.T @ C3)
    for route in ("block", "lyapunov"):
        r = ordex.gramian(sys, 0.0, 60.0, kind="observability", route=route, rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(r.gramian, ref, rtol=1e-6, atol=1e-9, err_msg=route)


def test_double_integrator_closed_form_transfer_and_profile():
    # Double integrator: W_r(0, T) = [[T^3/3, T^2/2], [T^2/2, T]] (standard result); the
    # minimum energy from 0 to xf is xf' W_r^-1 xf.
    sys = ordex.System.from_callables(["pos", "vel"], A=[[0, 1], [0, 0]], B=[[0], [1]])
    T = 3.0
    xf = np.array([1.0, 0.0])
    r = ordex.gramian(sys, 0.0, T, kind="reachability", x0=[0, 0], xf=xf, window_length=1.0,
                      running=True)
    W = np.array([[T ** 3 / 3, T ** 2 / 2], [T ** 2 / 2, T]])
    np.testing.assert_allclose(r.gramian, W, rtol=1e-8)
    assert round(abs(r.transfer.energy - (xf @ np.linalg.solve(W, xf))), 6) == 0
    assert r.transfer.final_error < 1e-6
    assert r.transfer.inputs.shape == (101, 1)
    assert r.caution is not None
    # Every window of length 1 has the same Gramian (time-invariant plant): lambda_min of
    # [[1/3, 1/2], [1/2, 1]].
    lmin = np.linalg.eigvalsh(np.array([[1 / 3, 1 / 2], [1 / 2, 1.0]]))[0]
    np.testing.assert_allclose(r.profile.lambda_min, lmin, rtol=1e-5)
    assert len(r.profile.t_start) == len(r.profile.t_end)
    # The running Gramian at t_k is W_r(0, t_k).
    tk = r.running_times[50]
    np.testing.assert_allclose(r.running[50], [[tk ** 3 / 3, tk ** 2 / 2], [tk ** 2 / 2, tk]], rtol=1e-7)


def test_bad_kind_names_the_field():
    with pytest.raises(ordex.InputError) as c:
        ordex.gramian(constant_plant(), 0, 1, kind="energy")
    assert "GramianOptions::kind" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.gramian(constant_plant(), 0, 1, threads=0)
    assert "GramianOptions::threads" in str(c.value)


def test_long_horizon_matches_care():
    sys = constant_plant()
    Q = np.diag([2.0, 1.0, 0.5])
    R = np.diag([1.0, 4.0])
    r = ordex.regulate(sys, 0.0, 40.0, weights={"Q": Q, "R": [1.0, 4.0]}, x0=[1, 0, -1])
    P = linalg.solve_continuous_are(A3, B3, Q, R)
    np.testing.assert_allclose(r.P0, P, rtol=1e-6, atol=1e-8)
    np.testing.assert_allclose(r.K0, np.linalg.solve(R, B3.T @ P), rtol=1e-6, atol=1e-8)
    assert r.gains.shape == (101, 2, 3)
    x0 = np.array([1.0, 0.0, -1.0])
    assert round(abs(r.cost_predicted - (x0 @ P @ x0)), 5) == 0
    assert round(abs(r.cost_simulated - r.cost_predicted), 5) == 0
    assert r.closed_loop_status == "ok"
    assert "Caution" in str(r)
    assert "caution" in r.to_dict()


def test_weights_errors():
    with pytest.raises(ordex.InputError) as c:
        ordex.regulate(constant_plant(), 0, 1, weights={"Q": np.eye(2)})
    assert "weights['Q']" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.regulate(constant_plant(), 0, 1, weights={"S": 1.0})
    assert "unknown key 'S'" in str(c.value)
    with pytest.raises(ordex.InputError) as c:
        ordex.regulate(constant_plant(), 0, 1, samples=1)
    assert "RegulatorOptions::samples" in str(c.value)


def test_matches_lsim():
    sys = constant_plant()
    t = np.linspace(0.0, 6.0, 61)
    u = np.column_stack([np.sin(1.3 * t), 0.5 * np.cos(0.7 * t) + 0.2])
    x0 = np.array([0.3, -0.2, 0.1])
    for hold, interp in (("linear", True), ("zoh", False)):
        r = ordex.respond(sys, t, u, x0=x0, hold=hold, rtol=1e-10, atol=1e-12)
        tout, yout, xout = signal.lsim((A3, B3, C3, D3), u, t, X0=x0, interp=interp)
        np.testing.assert_allclose(r.x, xout, atol=1e-7, err_msg=hold)
        np.testing.assert_allclose(r.y[:, 0], yout, atol=1e-7, err_msg=hold)
        np.testing.assert_allclose(r.times, t)
    assert r.to_dict()["hold"] == "zoh"


def test_several_runs_match_lsim():
    sys = constant_plant()
    t = np.linspace(0.0, 4.0, 41)
    U = np.stack([np.column_stack([np.sin(w * t), np.cos(w * t)]) for w in (0.5, 1.0, 2.0)])
    r = ordex.respond(sys, t, U, rtol=1e-10, atol=1e-12)
    assert r.runs == 3
    assert r.x.shape == (3, 41, 3)
    assert r.y_final.shape == (3, 1)
    for k in range(3):
        _, yout, xout = signal.lsim((A3, B3, C3, D3), U[k], t, interp=True)
        np.testing.assert_allclose(r.x[k], xout, atol=1e-7)
        np.testing.assert_allclose(r.y[k][:, 0], yout, atol=1e-7)
        np.testing.assert_allclose(r.x_final[k], xout[-1], atol=1e-7)
    assert len(r.to_dict()["runs"]) == 3


def test_window_is_the_span_of_times():
    # The pumped oscillator's file declares [window] 0 .. 2 pi; given times rule here.
    sys = ordex.load_model(os.path.join(MODELS, "pumped_oscillator.toml"))
    t = np.linspace(0.0, 10.0, 21)
    r = ordex.respond(sys, t, np.ones(21))
    assert r.x.shape == (21, 2)
    assert r.t1 == 10.0


def test_free_response_and_input_shape():
    sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"))
    t = np.linspace(0, 2, 11)
    r = ordex.respond(sys, t, x0=[1.0, 0.0])
    phi = ordex.transition(sys, 0.0, 2.0).phi
    np.testing.assert_allclose(r.x_final, phi[:, 0], atol=1e-7)
    assert r.x.shape == (11, 2)
    with pytest.raises(ordex.InputError) as c:
        ordex.respond(constant_plant(), t, np.zeros((11, 3)))
    assert "inputs" in str(c.value)


def test_zoh_matches_cont2discrete():
    sys = constant_plant()
    h = 0.25
    times = np.arange(0, 11) * h
    d = ordex.discretize(sys, times)
    Ad, Bd, _, _, _ = signal.cont2discrete((A3, B3, C3, D3), h, method="zoh")
    assert d.phi.shape == (10, 3, 3)
    for k in range(10):
        np.testing.assert_allclose(d.phi[k], Ad, atol=1e-9)
        np.testing.assert_allclose(d.gamma[k], Bd, atol=1e-9)


def test_linear_hold_matches_foh():
    # cont2discrete's "foh" gives x_{k+1} = Ad x_k + Bd' ... in a state-shifted form; compare
    # responses instead: the discrete model under a ramp equals lsim with interp=True.
    sys = constant_plant()
    times = np.linspace(0, 3, 13)
    u = np.column_stack([times, 1 - times ** 2 / 9])
    d = ordex.discretize(sys, times, hold="linear")
    x = d.simulate(np.zeros(3), u)
    _, _, xout = signal.lsim((A3, B3, C3, D3), u, times, interp=True)
    np.testing.assert_allclose(x, xout, atol=1e-8)


def test_step_grid():
    # t0 = 0, t1 = 1, step 0.3: intervals 0.3, 0.3, 0.3 and 0.1, each the zoh discretization
    # of its own length (cont2discrete).
    d = ordex.discretize(constant_plant(), t0=0.0, t1=1.0, step=0.3)
    np.testing.assert_allclose(d.times, [0, 0.3, 0.6, 0.9, 1.0], atol=1e-15)
    for k, h in enumerate(np.diff(d.times)):
        Ad, Bd, _, _, _ = signal.cont2discrete((A3, B3, C3, D3), h, method="zoh")
        np.testing.assert_allclose(d.phi[k], Ad, atol=1e-9)
        np.testing.assert_allclose(d.gamma[k], Bd, atol=1e-9)
    assert len(ordex.discretize(constant_plant(), t0=0.0, t1=1.0).times) == 101
    with pytest.raises(ordex.InputError):
        ordex.discretize(constant_plant(), t0=0.0)


def test_bad_hold():
    with pytest.raises(ordex.InputError) as c:
        ordex.discretize(constant_plant(), [0, 1], hold="cubic")
    assert "DiscretizeOptions::hold" in str(c.value)


def test_long_results_are_not_copied_out():
    # A response's x and y are the library's own matrices handed to numpy (moved, not copied):
    # the array does not own its memory, a capsule holding the C++ matrix does. A copy would
    # own its data. Column-major like Eigen, so x[:, j] (one state over time) is contiguous.
    sys = constant_plant()
    t = np.linspace(0.0, 2.0, 2001)
    r = ordex.respond(sys, t, np.column_stack([np.sin(t), np.cos(t)]))
    for a in (r.x, r.y):
        assert not a.flags.owndata
        assert type(a.base).__name__ == "PyCapsule"
        assert a.flags.f_contiguous and a.flags.writeable
    _, yout, xout = signal.lsim((A3, B3, C3, D3), np.column_stack([np.sin(t), np.cos(t)]), t, interp=True)
    np.testing.assert_allclose(r.x, xout, atol=1e-7)  # scipy.signal.lsim, the same linear hold
    np.testing.assert_allclose(r.y, yout.reshape(r.y.shape), atol=1e-7)


def test_arrays_in_of_any_layout_and_left_alone():
    # Inputs are read through numpy's buffer (any dtype that casts to float64, any strides): a
    # Fortran-ordered float32 input and a strided view give the same response as the plain
    # array, and the caller's arrays are not modified.
    sys = constant_plant()
    t = np.linspace(0.0, 1.0, 41)
    u = np.column_stack([np.sin(3 * t), t * t])
    plain = ordex.respond(sys, t, u).x
    wide = np.zeros((41, 4))
    wide[:, ::2] = u
    before = wide.copy()
    np.testing.assert_array_equal(ordex.respond(sys, t, wide[:, ::2]).x, plain)
    np.testing.assert_array_equal(wide, before)
    u32 = np.asfortranarray(u.astype(np.float32))
    np.testing.assert_allclose(ordex.respond(sys, t, u32).x, plain, atol=1e-6)  # float32 rounding of u
    # A sampled system keeps its own copy: changing the caller's array afterwards changes nothing.
    times = np.linspace(0.0, 1.0, 5)
    As = np.repeat(A3[None], 5, axis=0)
    sampled = ordex.System.from_samples(["p", "q", "r"], times, As)
    As[:] = 0.0
    np.testing.assert_allclose(ordex.transition(sampled, 0.0, 1.0).phi, linalg.expm(A3), atol=1e-7)
