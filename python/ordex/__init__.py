"""ordex: transition matrices, Gramians, LQR, responses and discrete models of linear
time-varying systems x' = A(t) x + B(t) u, y = C(t) x + D(t) u.

Systems: load_model(path, set={...}), System.from_callables(...), System.from_samples(...).
Jobs, one function each (options as keyword arguments with the library's defaults):
transition, floquet, gramian, regulate, respond, discretize. Results carry numpy arrays,
to_dict() and brief. Errors: InputError (a ValueError), NumericalError (an ArithmeticError).
docs/python.md is the guide; help() on each name is the reference.
"""
from ._ordex import (InputError, NumericalError, System, __version__, discretize, floquet,
                     gramian, load_model, regulate, respond, transition)
from .results import (CAUTION, DiscreteModelResult, FloquetResult, GramianResult, Record,
                      RegulatorResult, ResponseResult, Result, TransitionResult)

__all__ = [
    "InputError", "NumericalError", "System", "load_model",
    "transition", "floquet", "gramian", "regulate", "respond", "discretize",
    "Result", "Record", "TransitionResult", "FloquetResult", "GramianResult", "RegulatorResult",
    "ResponseResult", "DiscreteModelResult", "CAUTION", "__version__",
]
