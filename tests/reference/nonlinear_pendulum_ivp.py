"""Reference for tests/test_nonlinear_simulate.cpp: a damped, driven pendulum flown closed loop
with a constant gain about its nominal, by scipy.integrate.solve_ivp (DOP853, rtol 1e-12).

The nominal: theta_n' = omega_n, omega_n' = -w2 sin(theta_n) - c omega_n + u_n(t), u_n = 0.5 sin(2 t),
from (0.4, 0). The run: u = u_n - K (x - x_n), K = [2, 1], from x_n(0) + dx0. Prints the final
state of the run and of the nominal on one line."""
import sys

import numpy as np
from scipy.integrate import solve_ivp

w2, c = 14.0, 0.3
K = np.array([2.0, 1.0])
dx0 = np.array([float(v) for v in sys.argv[1].split(",")])
T = float(sys.argv[2])


def rhs(t, z):
    th, om, thn, omn = z
    un = 0.5 * np.sin(2 * t)
    u = un - K @ np.array([th - thn, om - omn])
    return [om, -w2 * np.sin(th) - c * om + u, omn, -w2 * np.sin(thn) - c * omn + un]


z0 = [0.4 + dx0[0], dx0[1], 0.4, 0.0]
sol = solve_ivp(rhs, (0, T), z0, method="DOP853", rtol=1e-12, atol=1e-14)
print(" ".join(repr(v) for v in sol.y[:, -1]))
