"""Ctrl-C (SIGINT, a notebook's interrupt) stops a long library computation with
KeyboardInterrupt, for a model file (library code, GIL released) and for a callable system, and
the package works normally afterwards. Each computation needs 4 10^7 steps (a minute or more):
only the interrupt ends it early, and as KeyboardInterrupt."""
import os
import signal
import threading

import numpy as np
import pytest

import ordex

MODELS = os.environ.get("ORDEX_MODELS_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "models"))


def interrupt_soon():
    threading.Timer(0.2, lambda: os.kill(os.getpid(), signal.SIGINT)).start()


LONG = dict(max_step=1e-3, max_steps=5 * 10 ** 7, use_period=False)


def test_model_file():
    sys = ordex.load_model(os.path.join(MODELS, "mathieu.toml"))
    with pytest.raises(KeyboardInterrupt):
        interrupt_soon()
        ordex.transition(sys, 0.0, 4e4, **LONG)
    phi = ordex.transition(sys, 0.0, 1.0).phi
    assert abs(np.linalg.det(phi) - 1.0) < 1e-7  # trace A = 0 (Liouville)


def test_callable():
    sys = ordex.System.from_callables(["x", "v"], A=lambda t: np.array([[0.0, 1.0], [-1.0, 0.0]]))
    with pytest.raises(KeyboardInterrupt):
        interrupt_soon()
        ordex.transition(sys, 0.0, 4e4, **LONG)
    phi = ordex.transition(sys, 0.0, 1.0).phi
    np.testing.assert_allclose(phi, [[np.cos(1), np.sin(1)], [-np.sin(1), np.cos(1)]], atol=1e-8)
