"""The time-varying test system shared with tests/test_gramian_timevarying.cpp and
tests/test_gramian_transfer.cpp (the C++ side defines the same A(t), B(t), C(t)):

  A(t) = [[0, 1, 0], [-(2 + 0.5 cos 1.3t), -0.2, 0.3 sin t], [0.1, 0, -0.5 + 0.2 cos 0.7t]]
  B(t) = [[0], [1 + 0.3 sin 0.9t], [0.2 cos t]]
  C(t) = [[1, 0, 0.5 sin 0.4t]]
"""
import numpy as np


def A(t):
    return np.array([[0.0, 1.0, 0.0],
                     [-(2.0 + 0.5 * np.cos(1.3 * t)), -0.2, 0.3 * np.sin(t)],
                     [0.1, 0.0, -0.5 + 0.2 * np.cos(0.7 * t)]])


def B(t):
    return np.array([[0.0], [1.0 + 0.3 * np.sin(0.9 * t)], [0.2 * np.cos(t)]])


def C(t):
    return np.array([[1.0, 0.0, 0.5 * np.sin(0.4 * t)]])
