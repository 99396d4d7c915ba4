"""models/ascent_pitch.toml (a pitch-plane ascent with tabulated aerodynamics and a wind input):
its exact Jacobians along the nominal against the partial derivatives of the same equations
derived by hand here (closed forms in numpy, the chain rule written out), evaluated at the nominal
states and inputs the library returns, with the aerodynamic table interpolated by numpy.interp
(straight lines between rows, as the model's linear table is); and the nominal itself against
the same equations integrated by scipy.integrate.solve_ivp (scipy, Debian; DOP853, row to row of
the table, whose kinks it must not step across)."""
import os
from types import SimpleNamespace

import numpy as np
import pytest
from scipy import integrate

import ordex

MODELS = os.environ.get("ORDEX_MODELS_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "models"))

# The model's parameters (models/ascent_pitch.toml), read back from the loaded model below.
NAMES = ["thrust", "m0", "mdot", "I0", "S", "d", "l_g", "g", "rho0", "Hs"]
# Variables of the gradients: the five states, then the two inputs.
H, V, GAM, TH, Q, DELTA, WIND = range(7)


def unit(k, shape):
    e = np.zeros(shape + (7,))
    e[..., k] = 1.0
    return e


class HandJacobian:
    """f(x, u, t) of the model and its gradient over (x, u), each quantity a value of shape (T,)
    and a gradient of shape (T, 7) from closed-form partial derivatives."""

    def __init__(self, p, table, times, x, u):
        T = len(times)
        h, v, gam, th, q = x.T
        delta, w = u.T
        cna, ca, cma, cmq = (np.interp(times, table["t"], table[c]) for c in ("CN_alpha", "C_A", "Cm_alpha", "Cm_q"))
        S, d, thrust = p["S"], p["d"], p["thrust"]
        m = p["m0"] - p["mdot"] * times
        inertia = p["I0"] * m / p["m0"]
        z = np.zeros((T, 7))

        def grad(**parts):  # a gradient from its nonzero partials
            g = z.copy()
            for k, val in parts.items():
                g[:, {"h": H, "v": V, "gam": GAM, "th": TH, "q": Q, "delta": DELTA, "w": WIND}[k]] = val
            return g

        sg, cg = np.sin(gam), np.cos(gam)
        rho, d_rho = p["rho0"] * np.exp(-h / p["Hs"]), grad(h=-p["rho0"] * np.exp(-h / p["Hs"]) / p["Hs"])
        ua, va = v * cg - w, v * sg
        va2 = ua**2 + va**2                      # V^2 - 2 V w cos(gamma) + w^2
        d_va2 = grad(v=2 * v - 2 * w * cg, gam=2 * v * w * sg, w=2 * w - 2 * v * cg)
        vair = np.sqrt(va2)
        d_vair = d_va2 / (2 * vair)[:, None]
        # alpha = theta - atan2(va, ua); d atan2 = (ua dva - va dua) / (ua^2 + va^2)
        alpha = th - np.arctan2(va, ua)
        d_alpha = grad(th=1.0, v=w * sg / va2, gam=-v * (v - w * cg) / va2, w=-v * sg / va2)
        qbar = rho * va2 / 2
        d_qbar = (d_rho * va2[:, None] + rho[:, None] * d_va2) / 2
        normal = qbar * S * cna * alpha
        d_normal = S * cna[:, None] * (d_qbar * alpha[:, None] + qbar[:, None] * d_alpha)
        d_axial = S * ca[:, None] * d_qbar
        fx = thrust * np.cos(delta) - qbar * S * ca
        d_fx = grad(delta=-thrust * np.sin(delta)) - d_axial
        fn = normal + thrust * np.sin(delta)
        d_fn = d_normal + grad(delta=thrust * np.cos(delta))
        beta = th - gam
        sb, cb = np.sin(beta), np.cos(beta)
        d_beta = grad(th=1.0, gam=-1.0)
        col = lambda a: a[:, None]

        self.f = np.zeros((T, 5))
        self.grad = np.zeros((T, 5, 7))
        self.f[:, 0] = v * sg
        self.grad[:, 0] = grad(v=sg, gam=v * cg)
        self.f[:, 1] = (fx * cb - fn * sb) / m - p["g"] * sg
        self.grad[:, 1] = (d_fx * col(cb) - col(fx * sb) * d_beta - d_fn * col(sb) - col(fn * cb) * d_beta) / col(m) \
            - grad(gam=p["g"] * cg)
        side = fx * sb + fn * cb
        d_side = d_fx * col(sb) + col(fx * cb) * d_beta + d_fn * col(cb) - col(fn * sb) * d_beta
        self.f[:, 2] = (side / m - p["g"] * cg) / v
        self.grad[:, 2] = (d_side / col(m) + grad(gam=p["g"] * sg)) / col(v) \
            - grad(v=(side / m - p["g"] * cg) / v**2)
        self.f[:, 3] = q
        self.grad[:, 3] = grad(q=1.0)
        # q' = (qbar S d Cm_alpha alpha + S d^2 Cm_q q rho Va / 4 - T l_g sin(gimbal)) / I
        damping = S * d**2 * cmq / 4
        self.f[:, 4] = (qbar * S * d * cma * alpha + damping * q * rho * vair - thrust * p["l_g"] * np.sin(delta)) / inertia
        self.grad[:, 4] = (S * d * col(cma) * (d_qbar * col(alpha) + col(qbar) * d_alpha)
                           + col(damping) * (col(q) * (d_rho * col(vair) + col(rho) * d_vair) + grad(q=rho * vair))
                           - grad(delta=thrust * p["l_g"] * np.cos(delta))) / col(inertia)
        # Outputs: pitch = theta, normal_accel = Fn / m.
        self.h_grad = np.stack([grad(th=1.0), d_fn / col(m)], axis=1)
        # The pieces the wind column is checked from on its own.
        self.parts = dict(v=v, gam=gam, w=w, q=q, rho=rho, ua=ua, va2=va2, vair=vair, alpha=alpha, qbar=qbar,
                          beta=beta, m=m, inertia=inertia, cna=cna, ca=ca, cma=cma, cmq=cmq)


@pytest.fixture(scope="module")
def ascent():
    """The loaded model, its parameters and aerodynamic table, its linearization along the nominal
    and the hand derivatives at the same states and inputs."""
    path = os.path.join(MODELS, "ascent_pitch.toml")
    model = ordex.load_nonlinear(path, rtol=1e-10, atol=1e-12)
    p = {k: model.parameters[k] for k in NAMES}
    with open(os.path.join(MODELS, "ascent_pitch_aero.csv")) as f:
        rows = [line.strip().split(",") for line in f if line.strip() and not line.startswith("#")]
    table = dict(zip(rows[0], np.array(rows[1:], dtype=float).T))
    # Off the table's rows (where the linear table has kinks) and on some of them.
    times = np.union1d(np.linspace(0.0, 40.0, 57), [0.3, 12.5, 17.5, 39.9])
    lin = ordex.linearize(model, times)
    hand = HandJacobian(p, table, lin.times, lin.x, lin.u)
    return SimpleNamespace(model=model, p=p, table=table, lin=lin, hand=hand)


def assert_entries(got, want, what):
    # Relative 1e-9, each entry against its own largest size along the nominal (so that an
    # entry passing through zero is held to the same scale).
    scale = np.max(np.abs(want), axis=0, keepdims=True)
    bad = np.abs(got - want) > 1e-9 * scale + 1e-300
    assert not bad.any(), "%s: %d entries differ, first at %s: %r against %r" % (
        what, bad.sum(), np.argwhere(bad)[0] if bad.any() else None,
        got[bad][:1], want[bad][:1])


def test_the_model_is_what_the_test_differentiates(ascent):
    model, lin, hand = ascent.model, ascent.lin, ascent.hand
    assert model.states == ["altitude", "V", "gamma", "theta", "q"]
    assert model.inputs == ["gimbal", "wind"]
    assert model.outputs == ["pitch", "normal_accel"]
    # The nominal flies: altitude and speed grow, the path bends over, the angles stay small.
    x = lin.x
    assert np.all(np.diff(x[:, 0]) > 0) and np.all(np.diff(x[:, 1]) > 0)
    assert x[-1, 2] < x[0, 2]
    assert np.max(np.abs(hand.parts["alpha"])) < 0.05
    # The nominal inputs are the file's schedules.
    t = lin.times
    np.testing.assert_allclose(lin.u[:, 0], 0.0015 * np.exp(-((t - 6.0) / 2) ** 2), rtol=1e-14, atol=1e-18)
    np.testing.assert_allclose(lin.u[:, 1], 8.0 * (1 - np.exp(-t / 15)), rtol=1e-14, atol=1e-18)


def test_the_nominal_follows_the_equations(ascent):
    def f(t, x):
        u = np.array([[0.0015 * np.exp(-((t - 6.0) / 2) ** 2), 8.0 * (1 - np.exp(-t / 15))]])
        return HandJacobian(ascent.p, ascent.table, np.array([t]), x[None, :], u).f[0]
    x, rows = ascent.model.nominal_x0, ascent.table["t"]
    for a, b in zip(rows[:-1], rows[1:]):
        x = integrate.solve_ivp(f, (a, b), x, method="DOP853", rtol=1e-11, atol=1e-12).y[:, -1]
    t = ascent.lin.times
    np.testing.assert_allclose(ascent.lin.x[-1], x, rtol=1e-8)
    np.testing.assert_allclose(ascent.model.nominal_state(t[-1]), x, rtol=1e-8)


def test_A_and_B_match_the_hand_derivatives(ascent):
    lin, hand, p = ascent.lin, ascent.hand, ascent.p
    assert_entries(lin.A, hand.grad[:, :, :5], "A")
    assert_entries(lin.B, hand.grad[:, :, 5:], "B")
    assert_entries(lin.C, hand.h_grad[:, :, :5], "C")
    assert_entries(lin.D, hand.h_grad[:, :, 5:], "D")
    # The aerodynamics matter: the pitch stiffness dq'/dtheta = qbar S d Cm_alpha / I
    # (negative: a stable vehicle) carries the table's transonic rise.
    s = hand.parts
    np.testing.assert_allclose(lin.A[:, 4, 3], s["qbar"] * p["S"] * p["d"] * s["cma"] / s["inertia"],
                               rtol=1e-9)
    assert np.all(lin.A[1:, 4, 3] < 0)


def test_the_wind_column(ascent):
    # d/dw directly: the wind changes only u_air = V cos(gamma) - w, so
    # d alpha/dw = -V sin(gamma)/Va^2, d Va^2/dw = -2 u_air, d qbar/dw = -rho u_air.
    s, p = ascent.hand.parts, ascent.p
    S, d = p["S"], p["d"]
    da = -s["v"] * np.sin(s["gam"]) / s["va2"]
    dq = -s["rho"] * s["ua"]
    dn = S * s["cna"] * (dq * s["alpha"] + s["qbar"] * da)
    dx = -S * s["ca"] * dq
    sb, cb = np.sin(s["beta"]), np.cos(s["beta"])
    want = np.stack([np.zeros_like(da),
                     (dx * cb - dn * sb) / s["m"],
                     (dx * sb + dn * cb) / (s["m"] * s["v"]),
                     np.zeros_like(da),
                     S * d * (s["cma"] * (dq * s["alpha"] + s["qbar"] * da)
                              + d * s["cmq"] * s["q"] * s["rho"] * (-s["ua"] / s["vair"]) / 4) / s["inertia"]], axis=1)
    got = ascent.lin.B[:, :, 1]
    assert_entries(got, want, "B[:, wind]")
    np.testing.assert_array_equal(got[:, [0, 3]], 0.0)
    # A tailwind lowers the angle of attack of the climbing vehicle, so (Cm_alpha < 0) it
    # pitches the nose up: q' grows with w, and the path bends less (gamma' falls).
    assert np.all(got[:, 4] > 0)
    assert np.all(got[:, 2] < 0)
