"""The nonlinear module in Python against outside references: a pendulum's linearization against
the hand-derived Jacobian [[0, 1], [-g/l cos(theta_n), 0]] on the nominal integrated by
scipy.integrate.solve_ivp (scipy 1.10, Debian, DOP853 at tight tolerance); x' = -x^2 flown
against its closed-form solution x(t) = x0 / (1 + x0 t), also run by run in a dispersed batch;
x' = x^2 from 1, which leaves every bound at t = 1, as a numerical failure; the error classes."""
import os
from types import SimpleNamespace

import numpy as np
import pytest
from scipy import integrate

import ordex

G, L, THETA0 = 9.81, 0.8, 1.2   # an invented swinging arm, started at 1.2 rad

PENDULUM = """[system]
states = ["theta", "omega"]
inputs = ["torque"]
outputs = ["height"]

[window]
from = 0
to = 3

[parameters]
g = %r
l = %r

[dynamics]
f = ["omega", "-g/l*sin(theta) + torque"]
h = ["l*(1 - cos(theta))"]

[nominal]
x0 = [%r, 0]
u = ["0"]
""" % (G, L, THETA0)

DECAY = """[system]
states = ["x"]

[window]
from = 0
to = 4

[dynamics]
f = ["-x^2"]

[nominal]
x0 = [1]
"""

# Linear in x, so the closed loop u = -K dx gives dx' = (a - K) dx exactly.
GROWTH = """[system]
states = ["x"]
inputs = ["u"]

[window]
from = 0
to = 2

[parameters]
a = 0.3

[dynamics]
f = ["a*x + u"]

[nominal]
x0 = [1]
u = ["0"]
"""

BLOWUP = DECAY.replace('"-x^2"', '"x^2"').replace("to = 4", "to = 2")


@pytest.fixture(scope="module")
def models(tmp_path_factory):
    """The pendulum and decay files in a folder of the module's own; write(name, text) adds one."""
    folder = tmp_path_factory.mktemp("nonlinear")

    def write(name, text):
        path = os.path.join(str(folder), name)
        with open(path, "w") as f:
            f.write(text)
        return path

    return SimpleNamespace(write=write, pendulum=write("pendulum.toml", PENDULUM), decay=write("decay.toml", DECAY))


def pendulum_nominal(times):
    sol = integrate.solve_ivp(lambda t, x: [x[1], -G / L * np.sin(x[0])], (0.0, 3.0), [THETA0, 0.0],
                              method="DOP853", rtol=1e-12, atol=1e-13, t_eval=times)
    return sol.y.T


def test_linearize_matches_the_hand_jacobian_on_the_nominal(models):
    # The nominal is integrated a hundred times tighter than rtol, atol: here 1e-12, 1e-14.
    model = ordex.load_nonlinear(models.pendulum, rtol=1e-10, atol=1e-12)
    assert model.states == ["theta", "omega"]
    r = ordex.linearize(model, samples=31)
    xn = pendulum_nominal(r.times)
    np.testing.assert_allclose(r.x, xn, atol=1e-8)
    assert r.A.shape == (31, 2, 2)
    np.testing.assert_allclose(r.A[:, 0, 1], 1.0)
    np.testing.assert_allclose(r.A[:, 1, 0], -G / L * np.cos(xn[:, 0]), atol=1e-7)
    np.testing.assert_allclose(r.A[:, [0, 1], [0, 1]], 0.0)
    np.testing.assert_allclose(r.B[:, :, 0], np.tile([0.0, 1.0], (31, 1)))
    np.testing.assert_allclose(r.C[:, 0, 0], L * np.sin(xn[:, 0]), atol=1e-7)  # dh/dtheta
    np.testing.assert_allclose(r.u, 0.0)
    assert "times" in r.to_dict()
    # At times of one's own (uneven), the same Jacobian.
    t = np.array([0.05, 0.4, 1.7, 2.9])
    at = ordex.linearize(model, t)
    np.testing.assert_array_equal(at.times, t)
    np.testing.assert_allclose(at.A[:, 1, 0], -G / L * np.cos(pendulum_nominal(t)[:, 0]), atol=1e-7)


def test_load_model_of_a_nonlinear_file_is_its_linearization(models):
    sys = ordex.load_model(models.pendulum)
    assert isinstance(sys, ordex.System)
    theta = pendulum_nominal([1.3])[0, 0]
    np.testing.assert_allclose(sys.A(1.3), [[0.0, 1.0], [-G / L * np.cos(theta), 0.0]], atol=1e-6)
    # ... which every job takes: Phi of the linearization has det 1 (trace A = 0; Liouville).
    assert round(abs(np.linalg.det(ordex.transition(sys, 0.0, 3.0).phi) - 1.0), 6) == 0


def test_simulate_follows_the_closed_form(models):
    model = ordex.load_nonlinear(models.decay)
    assert round(abs(model.nominal_state(2.0)[0] - 1.0 / 3.0), 9) == 0
    r = ordex.simulate(model, dx0=[0.5], histories=True, samples=41)
    x0 = 1.5
    np.testing.assert_allclose(r.x[0, :, 0], x0 / (1 + x0 * r.times), rtol=1e-6)
    np.testing.assert_allclose(r.x_final[0], [x0 / (1 + 4 * x0)], rtol=1e-6)
    np.testing.assert_allclose(r.dx_final[0], [x0 / (1 + 4 * x0) - 1 / 5], atol=1e-7)
    # Linearization about x_n = 1/(1+t): dx' = -2 x_n dx, so Phi(4, 0) = 1/(1+4)^2.
    assert round(abs(r.linear_transition[0, 0] - 1 / 25), 6) == 0
    assert not r.closed_loop
    assert r.caution is None


def test_dispersed_batch_runs_each_follow_the_closed_form(models):
    model = ordex.load_nonlinear(models.decay)
    disp = {"initial_state": {"x": {"sigma": 0.1}}}
    r = ordex.simulate(model, runs=12, seed=7, dispersions=disp, threads=2)
    assert r.completed == 12
    x0 = 1.0 + r.dx0[:, 0]
    assert np.std(x0) > 0.02  # the draws differ
    np.testing.assert_allclose(r.x_final[:, 0], x0 / (1 + 4 * x0), rtol=1e-6)
    again = ordex.simulate(model, runs=12, seed=7, dispersions=disp, threads=1)
    np.testing.assert_array_equal(again.dx0, r.dx0)  # seeded: threads do not matter


def test_closed_loop_with_a_gain_schedule_follows_the_closed_form(models):
    model = ordex.load_nonlinear(models.write("growth.toml", GROWTH))
    a, k, dx0 = 0.3, 1.5, 0.2
    times = np.linspace(0.0, 2.0, 5)
    r = ordex.simulate(model, dx0=[dx0], gains=(times, np.full((5, 1, 1), k)))
    # x_n(2) = e^(2a); dx(2) = dx0 e^((a - k) 2) (linear ODE, closed form).
    np.testing.assert_allclose(r.nominal_final, [np.exp(2 * a)], rtol=1e-7)
    np.testing.assert_allclose(r.dx_final[0], [dx0 * np.exp((a - k) * 2)], rtol=1e-6)
    assert r.closed_loop
    assert "Caution" in r.brief
    # Open loop with a constant disturbance c: dx' = a dx + c from 0, dx(2) = c (e^(2a) - 1) / a.
    c = 0.4
    w = ordex.simulate(model, disturbance=(np.array([0.0, 2.0]), np.array([c, c])))
    np.testing.assert_allclose(w.dx_final[0], [c * (np.exp(2 * a) - 1) / a], rtol=1e-6)
    with pytest.raises(ordex.InputError, match="gains"):
        ordex.simulate(model, gains=(times, np.ones((5, 2, 1))))


def test_errors(models):
    with pytest.raises(ordex.InputError, match="not a nonlinear model"):
        ordex.load_nonlinear(os.path.join(os.environ.get("ORDEX_MODELS_DIR", "models"), "pumped_oscillator.toml"))
    with pytest.raises(ordex.InputError):
        ordex.load_nonlinear(models.pendulum, set={"no_such_parameter": 1.0})
    model = ordex.load_nonlinear(models.decay)
    with pytest.raises(ordex.InputError, match="dx0"):
        ordex.simulate(model, dx0=[0.1, 0.2])
    with pytest.raises(ordex.InputError, match="runs"):
        ordex.simulate(model, runs=0)
    with pytest.raises(ordex.InputError, match="no_such_state"):
        ordex.simulate(model, dispersions={"initial_state": {"no_such_state": {"sigma": 1.0}}})
    with pytest.raises(ordex.InputError):
        ordex.linearize(model, t0=0.0, t1=10.0)  # beyond the nominal's span
    with pytest.raises(ordex.InputError, match="strictly increasing"):
        ordex.linearize(model, [1.0, 0.5])
    # x' = x^2 from x(0) = 1 is 1/(1 - t): the nominal cannot be carried past t = 1.
    with pytest.raises(ordex.NumericalError):
        ordex.load_nonlinear(models.write("blowup.toml", BLOWUP))
