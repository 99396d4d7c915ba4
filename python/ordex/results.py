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


class EstimationResult(Result):
    """ordex.estimate: kind ("kalman-bucy" or "covariance-analysis"), P0, P_final, sigma_final,
    L0 (the first gain, None when none), gain_times and L (k x n x p: the filter gain
    P C' Rn^-1 at each sample time, or the update gain of each scheduled update),
    history_times with P (T x n x n) and sigma (T x n) (two rows at each update time: before
    and after), updates, solver, engine, steps, agreement (the cross-check, None when not run),
    check_failure, and caution (gains can drive hardware)."""

    def __init__(self, fields, json_text, brief):
        super().__init__(fields, json_text, brief)
        self.caution = CAUTION
        self._brief = self._brief.rstrip("\n") + "\n" + CAUTION + "\n"

    def to_dict(self):
        d = super().to_dict()
        d["caution"] = CAUTION
        return d


class LinearizationResult(Result):
    """ordex.linearize: times (T,), x (T x n) and u (T x m), the nominal; A (T x n x n),
    B (T x n x m), C (T x p x n), D (T x p x m), the Jacobians at each time; states, inputs,
    outputs."""


class SimulationResult(Result):
    """ordex.simulate: closed_loop, runs (the number of runs), completed, failed; per run
    (leading axis over the runs) ok, failure, dx0, x_final, dx_final, peak_deviation,
    peak_deviation_time, peak_input, cost, linear_gap; with histories=True times (T,),
    x (runs x T x n) and u (runs x T x m); nominal_final, linear_transition (Phi_cl(t1, t0) of
    the linearization); statistics (Record: dx_final_mean, dx_final_std, peak_deviation_mean,
    peak_deviation_max, peak_input_max, cost_mean, linear_gap_mean, linear_gap_max). With
    gains, caution holds the hardware caution (None otherwise)."""

    def __init__(self, fields, json_text, brief):
        super().__init__(fields, json_text, brief)
        self.caution = CAUTION if self.closed_loop else None
        if self.caution:
            self._brief = self._brief.rstrip("\n") + "\n" + CAUTION + "\n"
