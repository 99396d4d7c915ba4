"""ordex: transition matrices, Gramians, LQR, responses and discrete models of linear
time-varying systems x' = A(t) x + B(t) u, y = C(t) x + D(t) u.

Systems: load_model(path, set={...}) (a nonlinear model file gives its linearization),
System.from_callables(...), System.from_samples(...); load_nonlinear(path) keeps the plant.
Jobs, one function each (options as keyword arguments with the library's defaults):
transition, floquet, gramian, regulate, respond, discretize, estimate; on a NonlinearModel
linearize and simulate. Results carry numpy arrays,
to_dict() and brief. Errors: InputError (a ValueError), NumericalError (an ArithmeticError).
docs/python.md is the guide; help() on each name is the reference.
"""
from ._ordex import (InputError, NonlinearModel, NumericalError, System, __version__, discretize,
                     estimate, floquet, gramian, linearize, load_model, load_nonlinear, regulate,
                     respond, simulate, transition)
from .results import (CAUTION, DiscreteModelResult, EstimationResult, FloquetResult,
                      GramianResult, LinearizationResult, Record, RegulatorResult, ResponseResult,
                      Result, SimulationResult, TransitionResult)

__all__ = [
    "InputError", "NumericalError", "System", "load_model", "NonlinearModel", "load_nonlinear",
    "transition", "floquet", "gramian", "regulate", "respond", "discretize", "estimate",
    "linearize", "simulate",
    "Result", "Record", "TransitionResult", "FloquetResult", "GramianResult", "RegulatorResult",
    "ResponseResult", "DiscreteModelResult", "EstimationResult", "LinearizationResult",
    "SimulationResult", "CAUTION", "__version__",
]
