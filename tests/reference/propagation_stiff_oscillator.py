"""Transition matrix Phi(2, 0) of the stiff, parametrically modulated oscillator
    x'' + c0 (1 + 0.8 cos 38 t) x' + k0 (1 + 0.8 sin 38 t) x = 0,  k0 = 2e4, c0 = 400,
computed in pieces: Phi(2, 0) = Phi(t_10, t_9) ... Phi(t_1, t_0) over ten equal sub-windows,
each integrated from the identity by scipy.integrate.solve_ivp with the implicit Radau IIA
method (order 5, exact Jacobian) at rtol 1e-10. Over the whole window Phi decays to about 1e-53,
far below any absolute tolerance; each piece stays within a few decades of one, so the pieces'
relative accuracy carries over to the product. Prints the four entries row by row."""
import sys

import numpy as np
import scipy
from scipy.integrate import solve_ivp

K0, C0 = 2e4, 400.0


def a_of(t):
    return np.array([[0.0, 1.0],
                     [-K0 * (1 + 0.8 * np.sin(38 * t)), -C0 * (1 + 0.8 * np.cos(38 * t))]])


def rhs(t, y):
    return (a_of(t) @ y.reshape(2, 2)).ravel()


def jac(t, y):
    return np.kron(a_of(t), np.eye(2))


def piece(a, b, rtol):
    sol = solve_ivp(rhs, (a, b), np.eye(2).ravel(), method="Radau", rtol=rtol, atol=1e-2 * rtol,
                    jac=jac)
    if not sol.success:
        sys.exit("solve_ivp failed: " + sol.message)
    return sol.y[:, -1].reshape(2, 2)


t1 = float(sys.argv[1]) if len(sys.argv) > 1 else 2.0
pieces = int(sys.argv[2]) if len(sys.argv) > 2 else 10
edges = np.linspace(0.0, t1, pieces + 1)
phi = np.eye(2)
for a, b in zip(edges[:-1], edges[1:]):
    phi = piece(a, b, 1e-10) @ phi
print(" ".join(repr(float(v)) for v in phi.ravel()))
print("# scipy", scipy.__version__)
