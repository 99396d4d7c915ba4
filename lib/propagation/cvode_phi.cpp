// CVODE on vec(Phi): dPhi/dt = A(t) Phi as n^2 unknowns. For BDF the Newton matrix is
// I - gamma (I kron A(t)), block diagonal with n copies of I - gamma A(t): the preconditioner
// factors that n x n matrix once per setup and solves column by column, so GMRES converges at
// once and a step costs O(n^3), never the O(n^6) of a dense n^2 x n^2 Jacobian.
#include <cmath>

#include "io/errors.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/stepper.hpp"

namespace ordex {
namespace {

class CvodeStepper : public StepperBase {
 public:
  CvodeStepper(const Generator& g, const PropagationOptions& o, bool stiff)
      : g_(g), n_(g.dim), a_(g.dim, g.dim), pa_(g.dim, g.dim), last_(g.dim, g.dim) {
    OdeProblem p;
    p.size = n_ * n_;
    p.label = g.label;
    p.breakpoints = g.breakpoints;
    p.rhs = [this](double t, const double* y, double* ydot) {
      eval(t, a_);
      Eigen::Map<const Eigen::MatrixXd> Y(y, n_, n_);
      Eigen::Map<Eigen::MatrixXd> Yd(ydot, n_, n_);
      Yd.noalias() = a_ * Y;
    };
    p.on_step = [this](double, const double* y, const double* le) {
      Eigen::Map<const Eigen::MatrixXd> Y(y, n_, n_);
      Eigen::Map<const Eigen::MatrixXd> E(le, n_, n_);
      double now = norm_inf(Y);
      // CVODE does not expose the step's map: scale the carried error by the growth of Phi and
      // add the step's local error in absolute value (no cancellation between steps, since
      // without the map the signs' travel through the dynamics is unknown).
      double growth = prev_norm_ > 0 ? now / prev_norm_ : 1.0;
      error_ *= growth;
      error_ += E.cwiseAbs();
      prev_norm_ = now;
      ++steps_;
    };
    if (stiff) {
      p.jac_times = [this](double t, const double*, const double* v, double* jv) {
        eval(t, a_);
        Eigen::Map<const Eigen::MatrixXd> V(v, n_, n_);
        Eigen::Map<Eigen::MatrixXd> JV(jv, n_, n_);
        JV.noalias() = a_ * V;
      };
      p.precond_setup = [this](double t, const double*, double gamma) {
        eval(t, pa_);
        pa_ *= -gamma;
        pa_.diagonal().array() += 1.0;
        lu_.compute(pa_);
        if (!std::isfinite(lu_.rcond()) || lu_.rcond() < 1e-300)
          throw SingularNewtonMatrix(g_.label + ": singular Newton block at t = " + format_number(t));
      };
      p.precond_solve = [this](const double* r, double* z) {
        Eigen::Map<const Eigen::MatrixXd> R(r, n_, n_);
        Eigen::Map<Eigen::MatrixXd> Z(z, n_, n_);
        Z = lu_.solve(R);
      };
    }
    OdeOptions oo = ode_options(o, stiff ? OdeScheme::Bdf : OdeScheme::Adams);
    oo.scheme = stiff ? OdeScheme::Bdf : OdeScheme::Adams;  // the Propagator chose the method
    ode_ = std::make_unique<OdeIntegrator>(std::move(p), oo);
  }

  void advance(double a, double b, Eigen::MatrixXd& X, Eigen::MatrixXd& error, PropagationStats& stats,
               const std::function<void(double)>& progress) override {
    if (a == b) return;
    // Continue the running integration when this leg starts where the last one ended with the
    // matrix it produced (grid output); restart otherwise.
    bool cont = started_ && a == last_t_ && X.rows() == n_ && X == last_;
    if (!cont) {
      ode_->reset(a, X.data());
      started_ = true;
      prev_norm_ = norm_inf(X);
    }
    error_ = error;
    long evals_before = evaluations_;
    OdeStats before = ode_->stats();
    if (progress) {
      // Report during a long leg too: CVODE steps past each intermediate time and interpolates
      // there (ode_integrator.cpp), so these stops cost no steps and change no result.
      constexpr int kReports = 50;
      for (int k = 1; k < kReports; ++k) {
        const double tk = a + (b - a) * k / kReports;
        ode_->advance(tk, X.data());
        progress(tk);
      }
    }
    ode_->advance(b, X.data());
    OdeStats after = ode_->stats();
    if (!X.allFinite())
      throw NumericalError(with_diagnosis(g_, a, b >= a ? 1.0 : -1.0,
                                          g_.label + ": transition matrix is not finite at t = " + format_number(b)));
    stats.steps += after.steps - before.steps;
    stats.rejected_steps += after.error_test_failures - before.error_test_failures;
    stats.evaluations += evaluations_ - evals_before;
    error = error_;
    last_t_ = b;
    last_ = X;
    if (progress) progress(b);
  }

 private:
  void eval(double t, Eigen::MatrixXd& out) {
    g_.eval(t, out);
    ++evaluations_;
  }

  Generator g_;
  int n_;
  Eigen::MatrixXd a_, pa_, last_;
  Eigen::PartialPivLU<Eigen::MatrixXd> lu_;
  std::unique_ptr<OdeIntegrator> ode_;
  bool started_ = false;
  double last_t_ = 0, prev_norm_ = 0;
  Eigen::MatrixXd error_;
  long evaluations_ = 0, steps_ = 0;
};

}  // namespace

std::unique_ptr<StepperBase> make_cvode_stepper(const Generator& g, const PropagationOptions& o,
                                                bool stiff) {
  return std::make_unique<CvodeStepper>(g, o, stiff);
}

}  // namespace ordex
