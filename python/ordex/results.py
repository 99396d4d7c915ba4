"""Result objects of the ordex job functions.

Each result holds numpy arrays and numbers as attributes (listed in its class docstring), the
report's JSON summary as a dict (to_dict(); the keys of the apps' --json output) and a short text
form (brief, also str(result)).
"""
import json

# The caution the apps print with results that can drive hardware (gains, steering inputs); the
# same words as kHardwareCaution in apps/common/front_end.cpp.
CAUTION = ("Caution: these results are analysis aids. Validate them on the full nonlinear plant "
           "with margins, and have them reviewed by qualified engineers under the applicable "
           "codes and standards before they drive real hardware.")


class Record:
    """A group of named values (attributes), e.g. a Gramian's transfer or profile."""

    def __init__(self, fields):
        self.__dict__.update(fields)

    def fields(self):
        """The attribute names."""
        return list(self.__dict__)

    def __repr__(self):
        return "<%s %s>" % (type(self).__name__, ", ".join(self.__dict__))


class Result(Record):
    """Base of the job results: attributes, to_dict(), brief and str()."""

    def __init__(self, fields, json_text, brief):
        super().__init__(fields)
        self._json_text = json_text
        self._brief = brief

    def fields(self):
        return [k for k in self.__dict__ if not k.startswith("_")]

    def to_dict(self):
        """The JSON summary of the report as a dict (a new copy each call)."""
        return json.loads(self._json_text)

    def to_json(self):
        """The JSON summary as compact text."""
        return self._json_text

    @property
    def brief(self):
        """A few lines of text for a terminal."""
        return self._brief

    def __str__(self):
        return self._brief

    def __repr__(self):
        return "<ordex.%s %s>" % (type(self).__name__, ", ".join(self.fields()))


class TransitionResult(Result):
    """ordex.transition: phi = Phi(t1, t0) (n x n), error_estimate, method, steps,
    rejected_steps, evaluations, states, t0, t1, liouville (Record: det_phi, exp_integral_trace,
    relative_difference, passed, note; None when switched off), notes; times (N,) and
    phis (N, n, n) with samples=N, else None."""


class FloquetResult(Result):
    """ordex.floquet: monodromy (n x n), multipliers (complex, by decreasing modulus),
    exponents (complex), stable, largest_modulus, period, t0, method, steps, error_estimate."""


class GramianResult(Result):
    """ordex.gramian: kind, gramian (n x n), factor (n x k, gramian = factor factor'),
    eigenvalues (ascending), condition, rank, full_rank, rank_status, weakest_direction,
    missing_directions (n x (n - rank)), route, method, steps; transfer (Record or None: times,
    inputs, energy, energy_replayed, peak_input, x_final, final_error, final_error_sampled,
    costate, free_final, warnings); profile (Record or None: t_start, t_end, lambda_min,
    lambda_max, condition, rank, rank_status, recomposed, estimated_error, one entry per window);
    running_times and running (W(t0, t_k), samples x n x n) with running=True. With a transfer,
    caution holds the hardware caution (None otherwise)."""

    def __init__(self, fields, json_text, brief):
        super().__init__(fields, json_text, brief)
        self.caution = CAUTION if self.transfer is not None else None
        if self.caution:
            self._brief = self._brief.rstrip("\n") + "\n" + CAUTION + "\n"


class RegulatorResult(Result):
    """ordex.regulate: P0, K0, P0_eigenvalues, times, gains (samples x m x n: K(times[k])),
    P (samples x n x n), cost_predicted (with x0), cost_simulated, x_final, run_times,
    run_states, run_inputs (the closed-loop run from x0), closed_loop_status ("ok", "failed",
    "skipped"), closed_loop_reason, closed_loop_phi, closed_loop_multipliers, method,
    weights_note, and caution (gains can drive hardware)."""

    def __init__(self, fields, json_text, brief):
        super().__init__(fields, json_text, brief)
        self.caution = CAUTION
        self._brief = self._brief.rstrip("\n") + "\n" + CAUTION + "\n"

    def to_dict(self):
        d = super().to_dict()
        d["caution"] = CAUTION
        return d


class ResponseResult(Result):
    """ordex.respond: times (T,), x (T x n), y (T x p), x_final, y_final, t0, t1, states,
    inputs, outputs, hold, path, method, warnings, runs (the number of runs). With inputs of
    shape (runs, T, m), x, y, x_final and y_final have a leading axis over the runs."""


class DiscreteModelResult(Result):
    """ordex.discretize: times (K + 1,), phi (K x n x n), with hold "zoh" gamma (K x n x m,
    also as gamma0), with "linear" gamma0 and gamma1; hold, states, inputs, method, steps,
    computed_steps, reused_steps. simulate(x0, u) runs the discrete model."""

    def simulate(self, x0, u):
        """States at the grid times (K + 1 x n) from x0 under u (K + 1 x m, row k = u(t_k))."""
        import numpy as np
        x = np.empty((len(self.times), len(x0)))
        x[0] = x0
        u = np.asarray(u, dtype=float).reshape(len(self.times), -1)
        for k in range(len(self.times) - 1):
            x[k + 1] = self.phi[k] @ x[k] + self.gamma0[k] @ u[k]
            if self.gamma1 is not None:
                x[k + 1] += self.gamma1[k] @ u[k + 1]
        return x
