#include "response/direct_path.hpp"

#include <memory>

#include "io/errors.hpp"

namespace ordex {

Eigen::MatrixXd direct_states(const System& sys, const InputHistory& h, Hold hold,
                              const std::vector<double>& knots, const Eigen::VectorXd& x0,
                              const OdeOptions& options, OdeStats& stats) {
  const int n = sys.states(), m = sys.inputs();
  // What the right-hand side needs, kept outside the closures so that the loop below can
  // switch the active sample interval without allocating.
  struct Work {
    Eigen::MatrixXd A, B, M;
    Eigen::VectorXd ua, ub, u;
    double a = 0, b = 1;
    Eigen::PartialPivLU<Eigen::MatrixXd> lu;
  };
  auto w = std::make_shared<Work>();
  w->A.resize(n, n);
  w->B.resize(n, m);
  w->M.resize(n, n);
  w->ua.setZero(m);
  w->ub.setZero(m);
  w->u.setZero(m);
  const System* s = &sys;

  OdeProblem prob;
  prob.size = n;
  prob.label = "x' = A x + B u (direct path of " + h.source + ")";
  prob.rhs = [w, s, n, m](double t, const double* y, double* ydot) {
    Eigen::Map<const Eigen::VectorXd> x(y, n);
    Eigen::Map<Eigen::VectorXd> dx(ydot, n);
    s->A(t, w->A);
    dx.noalias() = w->A * x;
    if (m > 0) {
      // Linear in t over the active interval [a, b] between u(a) and u(b) (equal for zoh).
      const double f = (t - w->a) / (w->b - w->a);
      w->u = (1.0 - f) * w->ua + f * w->ub;
      s->B(t, w->B);
      dx.noalias() += w->B * w->u;
    }
  };
  prob.jac_times = [w, s, n](double t, const double*, const double* v, double* Jv) {
    s->A(t, w->A);
    Eigen::Map<Eigen::VectorXd>(Jv, n).noalias() = w->A * Eigen::Map<const Eigen::VectorXd>(v, n);
  };
  prob.precond_setup = [w, s, n](double t, const double*, double gamma) {
    s->A(t, w->A);
    w->M = Eigen::MatrixXd::Identity(n, n) - gamma * w->A;
    w->lu.compute(w->M);
  };
  prob.precond_solve = [w, n](const double* r, double* z) {
    Eigen::Map<Eigen::VectorXd>(z, n) = w->lu.solve(Eigen::Map<const Eigen::VectorXd>(r, n));
  };
  // The knots need no breakpoints here (each interval is a fresh start below); A and B may
  // still jump at the model's own breakpoints inside an interval.
  prob.breakpoints = sys.info().breakpoints;

  OdeIntegrator ode(std::move(prob), options);
  Eigen::MatrixXd X(static_cast<Eigen::Index>(knots.size()), n);
  Eigen::VectorXd x = x0;
  X.row(0) = x.transpose();
  ode.reset(knots[0], x.data());
  std::size_t j = 0;  // the history's sample interval of the current knot interval
  for (std::size_t k = 0; k + 1 < knots.size(); ++k) {
    const double a = knots[k], b = knots[k + 1];
    while (j + 2 < h.times.size() && h.times[j + 1] <= a) ++j;
    if (m > 0) {
      input_on_interval(h, hold, j, a, w->ua);
      input_on_interval(h, hold, j, b, w->ub);
    }
    w->a = a;
    w->b = b;
    // A restart at each knot: the new interval's input takes effect from a clean start.
    ode.reset(a, x.data());
    ode.advance(b, x.data());
    if (!x.allFinite()) throw NumericalError(h.source + ": direct path: state is not finite at t = " + format_number(b));
    X.row(static_cast<Eigen::Index>(k + 1)) = x.transpose();
  }
  OdeStats st = ode.stats();
  stats.steps += st.steps;
  stats.rhs_evaluations += st.rhs_evaluations;
  stats.error_test_failures += st.error_test_failures;
  stats.linear_iterations += st.linear_iterations;
  return X;
}

}  // namespace ordex
