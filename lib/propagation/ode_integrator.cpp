// CVODE (SUNDIALS; Hindmarsh et al., ACM TOMS 31 (2005) 363-396) behind a small C++ interface.
// Adams runs with fixed-point iteration; BDF with Newton and GMRES, preconditioned by the
// problem's own exact solve of (I - gamma J) when it gives one.
#include "propagation/ode_integrator.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_spgmr.h>
#include <sunnonlinsol/sunnonlinsol_fixedpoint.h>

#include "io/errors.hpp"

namespace ordex {

void OdeOptions::validate() const {
  if (!(rtol >= 1e-14 && rtol <= 1e-1))
    throw InputError("OdeOptions::rtol = " + format_number(rtol) + " is outside [1e-14, 0.1]");
  if (!(atol > 0 && std::isfinite(atol)))
    throw InputError("OdeOptions::atol = " + format_number(atol) + " must be a positive number");
  if (max_steps < 1) throw InputError("OdeOptions::max_steps = " + std::to_string(max_steps) + " must be at least 1");
  if (!(max_step >= 0 && std::isfinite(max_step)))
    throw InputError("OdeOptions::max_step = " + format_number(max_step) + " must be >= 0");
  if (!(initial_step >= 0 && std::isfinite(initial_step)))
    throw InputError("OdeOptions::initial_step = " + format_number(initial_step) + " must be >= 0");
}

OdeOptions ode_options(const PropagationOptions& o, OdeScheme fallback) {
  OdeOptions r;
  r.scheme = o.method == Method::Adams ? OdeScheme::Adams : o.method == Method::Bdf ? OdeScheme::Bdf : fallback;
  r.rtol = o.rtol;
  r.atol = o.atol;
  r.max_steps = o.max_steps;
  r.max_step = o.max_step;
  r.initial_step = o.initial_step;
  return r;
}

Method method_of(OdeScheme scheme) { return scheme == OdeScheme::Adams ? Method::Adams : Method::Bdf; }

OdeStats& OdeStats::operator+=(const OdeStats& o) {
  steps += o.steps;
  rhs_evaluations += o.rhs_evaluations;
  error_test_failures += o.error_test_failures;
  linear_iterations += o.linear_iterations;
  return *this;
}

namespace {

// CVODE's return for a callback failure it must not retry: it stops the integration at once
// (a positive value would make it cut the step and call again, a million times over on a
// solution that has left the range of doubles).
constexpr int kUnrecoverable = -1;

}  // namespace

struct OdeIntegrator::Impl {
  OdeProblem problem;
  OdeOptions options;
  SUNContext ctx = nullptr;
  void* mem = nullptr;
  N_Vector y = nullptr, ele = nullptr;
  SUNLinearSolver ls = nullptr;
  SUNNonlinearSolver nls = nullptr;
  double t = 0;
  bool started = false;
  std::exception_ptr pending;  // exception thrown by a callback, rethrown after CVODE returns
  std::string cvode_message;
  OdeStats base;               // counts of earlier CVODE runs (before re-inits)
  // The current leg [leg_from, leg_to]: callbacks asked at an end that is a breakpoint get a
  // time just inside (see OdeProblem::breakpoints).
  double leg_from = 0, leg_to = 0, nudge = 0;
  bool from_breakpoint = false, to_breakpoint = false;

  ~Impl() {
    if (mem) CVodeFree(&mem);
    if (ls) SUNLinSolFree(ls);
    if (nls) SUNNonlinSolFree(nls);
    if (y) N_VDestroy(y);
    if (ele) N_VDestroy(ele);
    if (ctx) SUNContext_Free(&ctx);
  }

  bool is_breakpoint(double s) const {
    return std::binary_search(problem.breakpoints.begin(), problem.breakpoints.end(), s);
  }

  void set_leg(double from, double to) {
    leg_from = from;
    leg_to = to;
    nudge = 1e-10 * std::abs(to - from);
    from_breakpoint = is_breakpoint(from);
    to_breakpoint = is_breakpoint(to);
  }

  double inside(double s) const {
    const double dir = leg_to >= leg_from ? 1.0 : -1.0;
    if (from_breakpoint && std::abs(s - leg_from) <= nudge) return leg_from + dir * nudge;
    if (to_breakpoint && std::abs(s - leg_to) <= nudge) return leg_to - dir * nudge;
    return s;
  }

  std::string name_of(int i) const {
    return problem.name_of ? problem.name_of(i) : "y[" + std::to_string(i) + "]";
  }

  static int rhs(realtype t, N_Vector y, N_Vector ydot, void* data) {
    auto* self = static_cast<Impl*>(data);
    if (self->pending) return kUnrecoverable;  // a callback failed: never call the problem again
    try {
      self->problem.rhs(self->inside(t), N_VGetArrayPointer(y), N_VGetArrayPointer(ydot));
      const double* d = N_VGetArrayPointer(ydot);
      for (int i = 0; i < self->problem.size; ++i)
        if (!std::isfinite(d[i])) {
          const double v = N_VGetArrayPointer(y)[i];
          throw NumericalError(self->problem.label + ": the derivative of " + self->name_of(i) +
                               " is not finite at t = " + format_number(t) + " (" + self->name_of(i) +
                               " = " + format_number(v) + ")");
        }
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return kUnrecoverable;
    }
  }
  static int jtimes(N_Vector v, N_Vector Jv, realtype t, N_Vector y, N_Vector, void* data, N_Vector) {
    auto* self = static_cast<Impl*>(data);
    if (self->pending) return kUnrecoverable;  // a callback failed: never call the problem again
    try {
      self->problem.jac_times(self->inside(t), N_VGetArrayPointer(y), N_VGetArrayPointer(v), N_VGetArrayPointer(Jv));
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return kUnrecoverable;
    }
  }
  static int psetup(realtype t, N_Vector y, N_Vector, booleantype, booleantype* jcur, realtype gamma,
                    void* data) {
    auto* self = static_cast<Impl*>(data);
    if (self->pending) return kUnrecoverable;  // a callback failed: never call the problem again
    try {
      self->problem.precond_setup(self->inside(t), N_VGetArrayPointer(y), gamma);
      *jcur = SUNTRUE;
      return 0;
    } catch (const SingularNewtonMatrix&) {
      return 1;  // recoverable: a singular block at this gamma, CVODE cuts the step
    } catch (...) {
      self->pending = std::current_exception();
      return kUnrecoverable;
    }
  }
  static int psolve(realtype, N_Vector, N_Vector, N_Vector r, N_Vector z, realtype, realtype, int,
                    void* data) {
    auto* self = static_cast<Impl*>(data);
    if (self->pending) return kUnrecoverable;  // a callback failed: never call the problem again
    try {
      self->problem.precond_solve(N_VGetArrayPointer(r), N_VGetArrayPointer(z));
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return kUnrecoverable;
    }
  }
  static void on_error(int, const char*, const char* function, char* msg, void* data) {
    auto* self = static_cast<Impl*>(data);
    self->cvode_message = std::string(function ? function : "CVODE") + ": " + (msg ? msg : "");
  }

  /// After a CVode call: rethrows a callback's exception, or reports CVODE's failure at the
  /// time it reached.
  void after_call(int flag, double reached) {
    if (pending) {
      auto e = pending;
      pending = nullptr;
      std::rethrow_exception(e);
    }
    if (flag < 0)
      throw NumericalError(problem.label + ": integration failed at t = " + format_number(reached) +
                           (cvode_message.empty() ? "" : " (" + cvode_message + ")"));
  }

  void check(int flag, const char* what) {
    if (flag < 0) throw NumericalError(problem.label + ": CVODE " + what + " failed (" + std::to_string(flag) + ")");
  }

  OdeStats current() const {
    OdeStats st;
    if (!mem || !started) return st;
    long v = 0;
    CVodeGetNumSteps(mem, &v); st.steps = v;
    CVodeGetNumRhsEvals(mem, &v); st.rhs_evaluations = v;
    CVodeGetNumErrTestFails(mem, &v); st.error_test_failures = v;
    if (options.scheme == OdeScheme::Bdf) { CVodeGetNumLinIters(mem, &v); st.linear_iterations = v; }
    return st;
  }

  void init(double t0) {
    if (!mem) {
      mem = CVodeCreate(options.scheme == OdeScheme::Adams ? CV_ADAMS : CV_BDF, ctx);
      if (!mem) throw NumericalError(problem.label + ": CVODE could not be created");
      check(CVodeInit(mem, rhs, t0, y), "init");
      check(CVodeSetUserData(mem, this), "user data");
      check(CVodeSetErrHandlerFn(mem, on_error, this), "error handler");
      check(CVodeSStolerances(mem, options.rtol, options.atol), "tolerances");
      check(CVodeSetMaxNumSteps(mem, std::min<long>(options.max_steps, 2000000000L)), "max steps");
      if (options.max_step > 0) check(CVodeSetMaxStep(mem, options.max_step), "max step");
      if (options.scheme == OdeScheme::Adams) {
        nls = SUNNonlinSol_FixedPoint(y, 0, ctx);
        check(CVodeSetNonlinearSolver(mem, nls), "fixed-point solver");
      } else {
        bool prec = problem.precond_setup && problem.precond_solve;
        ls = SUNLinSol_SPGMR(y, prec ? SUN_PREC_LEFT : SUN_PREC_NONE, 0, ctx);
        check(CVodeSetLinearSolver(mem, ls, nullptr), "linear solver");
        if (problem.jac_times) check(CVodeSetJacTimes(mem, nullptr, jtimes), "Jacobian product");
        if (prec) check(CVodeSetPreconditioner(mem, psetup, psolve), "preconditioner");
      }
    } else {
      base += current();  // counters restart at re-init
      check(CVodeReInit(mem, t0, y), "re-init");
    }
    if (options.initial_step > 0) check(CVodeSetInitStep(mem, options.initial_step), "first step");
    t = t0;
    started = true;
  }
};

OdeProblem checked_problem(OdeProblem problem, const OdeOptions& options) {
  options.validate();
  if (problem.size < 1 || !problem.rhs) throw InputError(problem.label + ": empty ODE problem");
  auto& bp = problem.breakpoints;
  std::sort(bp.begin(), bp.end());
  bp.erase(std::unique(bp.begin(), bp.end()), bp.end());
  return problem;
}

OdeIntegrator::OdeIntegrator(OdeProblem problem, OdeOptions options) : impl_(std::make_unique<Impl>()) {
  if (options.scheme == OdeScheme::RungeKutta)
    throw InputError(problem.label + ": OdeIntegrator runs CVODE (Adams or BDF); RungeKutta is ExplicitRk's");
  impl_->problem = checked_problem(std::move(problem), options);
  impl_->options = options;
  if (SUNContext_Create(nullptr, &impl_->ctx) != 0) throw NumericalError("SUNDIALS context failed");
  impl_->y = N_VNew_Serial(impl_->problem.size, impl_->ctx);
  impl_->ele = N_VNew_Serial(impl_->problem.size, impl_->ctx);
}

OdeIntegrator::~OdeIntegrator() = default;

void OdeIntegrator::reset(double t0, const double* y0) {
  std::copy(y0, y0 + impl_->problem.size, N_VGetArrayPointer(impl_->y));
  impl_->init(t0);
}

double OdeIntegrator::time() const { return impl_->t; }

void OdeIntegrator::advance(double target, double* yout) {
  Impl& s = *impl_;
  if (!s.started) throw NumericalError(s.problem.label + ": advance before reset");
  const int n = s.problem.size;
  const std::vector<double>& bps = s.problem.breakpoints;
  while (s.t != target) {
    const bool forward = target > s.t;
    // The first breakpoint strictly beyond t in the direction of travel, if any. A breakpoint
    // equal to the target counts too: the next leg then restarts past the jump.
    const auto next_after = [&](double from) -> const double* {
      if (forward) {
        auto it = std::upper_bound(bps.begin(), bps.end(), from);
        return it == bps.end() ? nullptr : &*it;
      }
      auto it = std::lower_bound(bps.begin(), bps.end(), from);
      return it == bps.begin() ? nullptr : &*(it - 1);
    };
    const double* bp = next_after(s.t);
    const bool at_breakpoint = bp && (forward ? *bp <= target : *bp >= target);
    const double stop = at_breakpoint ? *bp : target;
    if (!at_breakpoint && !s.problem.on_step) {
      // No jump before the target: let CVODE step past it and interpolate (its dense output
      // is of the method's order), stopping only at the next breakpoint beyond, if any. Output
      // times then cost no extra steps.
      // (A stop time far away otherwise: one left from an earlier leg would be behind us.)
      s.check(CVodeSetStopTime(s.mem, bp ? *bp : (forward ? 1.0 : -1.0) * std::numeric_limits<double>::max()),
              "stop time");
      s.set_leg(s.t, bp ? *bp : target);
      realtype tret = s.t;
      s.after_call(CVode(s.mem, target, s.y, &tret, CV_NORMAL), tret);
      s.t = target;
      break;
    }
    s.check(CVodeSetStopTime(s.mem, stop), "stop time");
    s.set_leg(s.t, stop);
    long steps = 0;
    while (true) {
      realtype tret = s.t;
      int flag = CVode(s.mem, stop, s.y, &tret, CV_ONE_STEP);
      s.after_call(flag, tret);
      s.t = tret;
      if (s.problem.on_step) {
        CVodeGetEstLocalErrors(s.mem, s.ele);
        s.problem.on_step(tret, N_VGetArrayPointer(s.y), N_VGetArrayPointer(s.ele));
      }
      if (flag == CV_TSTOP_RETURN || tret == stop) break;
      if (++steps > s.options.max_steps)
        throw NumericalError(s.problem.label + ": more than OdeOptions::max_steps = " +
                             std::to_string(s.options.max_steps) + " steps before t = " + format_number(stop) +
                             " (reached t = " + format_number(tret) + ")");
    }
    s.t = stop;
    // Past a breakpoint the right-hand side may jump: restart the method there.
    if (at_breakpoint) s.init(stop);
  }
  std::copy(N_VGetArrayPointer(s.y), N_VGetArrayPointer(s.y) + n, yout);
}

OdeStats OdeIntegrator::stats() const {
  OdeStats st = impl_->base;
  st += impl_->current();
  return st;
}

}  // namespace ordex
