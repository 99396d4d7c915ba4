"""ordex.estimate against outside references: the steady Kalman-Bucy covariance of a constant
system is the stabilizing solution of the filter algebraic Riccati equation,
scipy.linalg.solve_continuous_are(A', C', G Qn G', Rn) (scipy 1.10, Debian), reached over a long
window; a random walk read at regular times follows the scalar discrete recursion
P+ = P- R / (P- + R), P- = P+ + q dt (the Kalman filter for a random walk, a textbook
closed form). Plus the noise and schedule given as files, and the error classes."""
import os

import numpy as np
import pytest
from scipy import linalg

import ordex

# A damped two-state plant of our own with a disturbance input and one measured output.
A2 = np.array([[0.0, 1.0], [-2.0, -0.5]])
B2 = np.array([[0.0], [1.0]])
C2 = np.array([[1.0, 0.0]])
QN = np.array([[0.3]])   # enters through the input: G = B2
RN = np.array([[0.05]])
P0 = np.diag([1.0, 0.5])


def plant():
    return ordex.System.from_callables(["pos", "vel"], A=A2, B=B2, C=C2, inputs=["gust"], outputs=["pos_meas"])


def write(folder, name, text):
    path = os.path.join(folder, name)
    with open(path, "w") as f:
        f.write(text)
    return path


# Kalman-Bucy filter.

def test_steady_covariance_matches_the_algebraic_riccati_equation():
    r = ordex.estimate(plant(), 0.0, 30.0, noise={"Qn": QN, "through": ["gust"], "Rn": RN, "P0": P0},
                       samples=31)
    # Filter ARE A P + P A' + G Qn G' - P C' Rn^-1 C P = 0: the control ARE of (A', C').
    p_ref = linalg.solve_continuous_are(A2.T, C2.T, B2 @ QN @ B2.T, RN)
    np.testing.assert_allclose(r.P_final, p_ref, rtol=1e-6, atol=1e-9)
    np.testing.assert_allclose(r.L[-1], p_ref @ C2.T @ np.linalg.inv(RN), rtol=1e-6, atol=1e-9)
    np.testing.assert_allclose(r.sigma_final, np.sqrt(np.diag(p_ref)), rtol=1e-6)
    assert r.kind == "kalman-bucy"
    assert r.L.shape == (31, 2, 1)
    assert r.sigma.shape == (31, 2)
    np.testing.assert_allclose(r.P0, P0)
    np.testing.assert_allclose(r.L0, P0 @ C2.T @ np.linalg.inv(RN))  # L(t0) = P0 C' Rn^-1
    assert r.agreement < 1e-5  # the other route agrees
    assert "P_final" in r.to_dict()
    assert "Caution" in r.brief


def test_noise_file_gives_the_same_filter(tmp_path):
    path = write(str(tmp_path), "noise.toml", 'through = ["gust"]\nQn = [[0.3]]\nRn = [0.05]\nP0 = [1.0, 0.5]\n')
    a = ordex.estimate(plant(), 0.0, 5.0, noise=path, samples=11, cross_check=False)
    b = ordex.estimate(plant(), 0.0, 5.0, noise={"Qn": 0.3, "through": ["gust"], "Rn": 0.05, "P0": [1.0, 0.5]},
                       samples=11, cross_check=False)
    np.testing.assert_allclose(a.P, b.P, rtol=1e-12)
    assert a.agreement is None


# Covariance analysis: a random walk read at regular times.
Q, R, PINIT, DT, T1 = 0.2, 0.5, 3.0, 0.5, 5.0


def random_walk():
    return ordex.System.from_callables(["x"], A=[[0.0]], C=[[1.0]], outputs=["reading"])


def recursion():
    """P after each update at t = 0, dt, ..., T1: the scalar Kalman recursion."""
    p_minus, out = PINIT, []
    for _ in range(int(round(T1 / DT)) + 1):
        p_plus = p_minus * R / (p_minus + R)
        out.append((p_minus, p_plus, p_minus / (p_minus + R)))
        p_minus = p_plus + Q * DT
    return out


def check_against_the_recursion(r):
    ref = recursion()
    assert r.kind == "covariance-analysis"
    assert r.updates == len(ref)
    assert round(abs(r.P_final[0, 0] - ref[-1][1]), 9) == 0
    np.testing.assert_allclose(r.L[:, 0, 0], [k for _, _, k in ref], rtol=1e-9)
    # Before and after each update: two history rows at the same t.
    t = r.history_times
    for k, (p_minus, p_plus, _) in enumerate(ref):
        rows = np.flatnonzero(np.isclose(t, k * DT, rtol=0, atol=1e-12))
        assert len(rows) >= 2
        assert round(abs(r.P[rows[0], 0, 0] - p_minus), 9) == 0
        assert round(abs(r.P[rows[-1], 0, 0] - p_plus), 9) == 0


def test_regular_readings_follow_the_scalar_recursion():
    r = ordex.estimate(random_walk(), 0.0, T1, noise={"Qn": Q, "P0": PINIT},
                       measurements=[{"outputs": ["reading"], "every": DT, "Rn": R}], samples=11)
    check_against_the_recursion(r)


def test_schedule_file_gives_the_same_analysis(tmp_path):
    times = [k * DT for k in range(int(round(T1 / DT)) + 1)]
    path = write(str(tmp_path), "plan.toml", '[[measurement]]\noutputs = ["reading"]\ntimes = %s\nRn = [%r]\n'
                 % (times, R))
    r = ordex.estimate(random_walk(), 0.0, T1, noise={"Qn": Q, "P0": PINIT}, measurements=path, samples=11)
    check_against_the_recursion(r)


# Errors.

def test_bad_noise_schedule_and_options_are_input_errors():
    sys = plant()
    good = {"Qn": 0.3, "through": ["gust"], "Rn": 0.05, "P0": [1.0, 0.5]}
    with pytest.raises(ordex.InputError, match="Qn"):
        ordex.estimate(sys, 0.0, 1.0, noise={"Rn": 0.05, "P0": [1.0, 0.5]})
    with pytest.raises(ordex.InputError, match="unknown key 'Q'"):
        ordex.estimate(sys, 0.0, 1.0, noise=dict(good, Q=1.0))
    with pytest.raises(ordex.InputError, match="P0"):
        ordex.estimate(sys, 0.0, 1.0, noise=dict(good, P0=[1.0, 0.5, 2.0]))
    with pytest.raises(ordex.InputError, match="EstimationOptions::samples"):
        ordex.estimate(sys, 0.0, 1.0, noise=good, samples=1)
    with pytest.raises(ordex.InputError, match="no_such_output"):
        ordex.estimate(sys, 0.0, 1.0, noise=good,
                       measurements=[{"outputs": ["no_such_output"], "times": [0.5], "Rn": 0.1}])
    with pytest.raises(ordex.InputError):
        ordex.estimate(sys, 0.0, 1.0, noise="/nonexistent/noise.toml")
    with pytest.raises(ValueError):  # InputError is a ValueError
        ordex.estimate(sys, 0.0, 1.0, noise=dict(good, Rn=-1.0))  # Rn not positive definite
