// CVODE (SUNDIALS; Hindmarsh et al., ACM TOMS 31 (2005) 363-396) behind a small C++ interface.
// Adams runs with fixed-point iteration; BDF with Newton and GMRES, preconditioned by the
// problem's own exact solve of (I - gamma J) when it gives one.
#include "propagation/ode_integrator.hpp"

#include <algorithm>
#include <cmath>
#include <exception>

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_spgmr.h>
#include <sunnonlinsol/sunnonlinsol_fixedpoint.h>

#include "io/errors.hpp"

namespace ordex {

void OdeOptions::validate() const {
  if (!(rtol >= 1e-14 && rtol <= 1e-1))
    throw InputError("rtol: " + format_number(rtol) + " is outside [1e-14, 0.1]");
  if (!(atol > 0 && std::isfinite(atol))) throw InputError("atol: must be a positive number");
  if (max_steps < 1) throw InputError("max steps: must be at least 1");
  if (!(max_step >= 0)) throw InputError("max step: must be >= 0");
}

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

  ~Impl() {
    if (mem) CVodeFree(&mem);
    if (ls) SUNLinSolFree(ls);
    if (nls) SUNNonlinSolFree(nls);
    if (y) N_VDestroy(y);
    if (ele) N_VDestroy(ele);
    if (ctx) SUNContext_Free(&ctx);
  }

  static int rhs(realtype t, N_Vector y, N_Vector ydot, void* data) {
    auto* self = static_cast<Impl*>(data);
    try {
      self->problem.rhs(t, N_VGetArrayPointer(y), N_VGetArrayPointer(ydot));
      const double* d = N_VGetArrayPointer(ydot);
      for (int i = 0; i < self->problem.size; ++i)
        if (!std::isfinite(d[i]))
          throw NumericalError(self->problem.label + ": the right-hand side is not finite at t = " +
                               format_number(t));
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return -1;
    }
  }
  static int jtimes(N_Vector v, N_Vector Jv, realtype t, N_Vector y, N_Vector, void* data, N_Vector) {
    auto* self = static_cast<Impl*>(data);
    try {
      self->problem.jac_times(t, N_VGetArrayPointer(y), N_VGetArrayPointer(v), N_VGetArrayPointer(Jv));
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return -1;
    }
  }
  static int psetup(realtype t, N_Vector y, N_Vector, booleantype, booleantype* jcur, realtype gamma,
                    void* data) {
    auto* self = static_cast<Impl*>(data);
    try {
      self->problem.precond_setup(t, N_VGetArrayPointer(y), gamma);
      *jcur = SUNTRUE;
      return 0;
    } catch (const NumericalError&) {
      return 1;  // recoverable: a singular block at this gamma, CVODE cuts the step
    } catch (...) {
      self->pending = std::current_exception();
      return -1;
    }
  }
  static int psolve(realtype, N_Vector, N_Vector, N_Vector r, N_Vector z, realtype, realtype, int,
                    void* data) {
    auto* self = static_cast<Impl*>(data);
    try {
      self->problem.precond_solve(N_VGetArrayPointer(r), N_VGetArrayPointer(z));
      return 0;
    } catch (...) {
      self->pending = std::current_exception();
      return -1;
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

  void accumulate_and_free() {
    if (!mem) return;
    long v = 0;
    CVodeGetNumSteps(mem, &v); base.steps += v;
    CVodeGetNumRhsEvals(mem, &v); base.rhs_evaluations += v;
    CVodeGetNumErrTestFails(mem, &v); base.error_test_failures += v;
    if (options.scheme == OdeScheme::Bdf) { CVodeGetNumLinIters(mem, &v); base.linear_iterations += v; }
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
      accumulate_and_free();  // counters restart at re-init
      check(CVodeReInit(mem, t0, y), "re-init");
    }
    t = t0;
    started = true;
  }
};

OdeIntegrator::OdeIntegrator(OdeProblem problem, OdeOptions options) : impl_(std::make_unique<Impl>()) {
  options.validate();
  if (problem.size < 1 || !problem.rhs) throw InputError(problem.label + ": empty ODE problem");
  impl_->problem = std::move(problem);
  impl_->options = options;
  std::sort(impl_->problem.breakpoints.begin(), impl_->problem.breakpoints.end());
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
  while (s.t != target) {
    const double dir = target > s.t ? 1.0 : -1.0;
    // The next stop: the first breakpoint strictly between t and target, else target.
    double stop = target;
    bool at_breakpoint = false;
    // A breakpoint equal to the target counts too: the next leg then restarts past the jump.
    for (double bp : s.problem.breakpoints)
      if (dir * (bp - s.t) > 0 && dir * (target - bp) >= 0 && dir * (stop - bp) >= 0) {
        stop = bp;
        at_breakpoint = true;
      }
    if (!at_breakpoint && !s.problem.on_step) {
      // No jump before the target: let CVODE step past it and interpolate (its dense output
      // is of the method's order), stopping only at the next breakpoint beyond, if any. Output
      // times then cost no extra steps.
      double beyond = 0;
      bool has_beyond = false;
      for (double bp : s.problem.breakpoints)
        if (dir * (bp - target) > 0 && (!has_beyond || dir * (beyond - bp) > 0)) {
          beyond = bp;
          has_beyond = true;
        }
      if (has_beyond) s.check(CVodeSetStopTime(s.mem, beyond), "stop time");
      realtype tret = s.t;
      s.after_call(CVode(s.mem, target, s.y, &tret, CV_NORMAL), tret);
      s.t = target;
      break;
    }
    s.check(CVodeSetStopTime(s.mem, stop), "stop time");
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
        throw NumericalError(s.problem.label + ": more than " + std::to_string(s.options.max_steps) +
                             " steps before t = " + format_number(stop) + " (reached t = " +
                             format_number(tret) + ")");
    }
    s.t = stop;
    // Past a breakpoint the right-hand side may jump: restart the method there.
    if (at_breakpoint) s.init(stop);
  }
  std::copy(N_VGetArrayPointer(s.y), N_VGetArrayPointer(s.y) + n, yout);
}

OdeStats OdeIntegrator::stats() const {
  OdeStats st = impl_->base;
  if (impl_->mem && impl_->started) {
    long v = 0;
    CVodeGetNumSteps(impl_->mem, &v); st.steps += v;
    CVodeGetNumRhsEvals(impl_->mem, &v); st.rhs_evaluations += v;
    CVodeGetNumErrTestFails(impl_->mem, &v); st.error_test_failures += v;
    if (impl_->options.scheme == OdeScheme::Bdf) { CVodeGetNumLinIters(impl_->mem, &v); st.linear_iterations += v; }
  }
  return st;
}

}  // namespace ordex
