// The Riccati equation itself, integrated backwards from t1 by the engine's symmetric matrix
// equation service (propagation/symmetric_matrix_ode.hpp): CVODE BDF with the exact Schur-based
// Lyapunov preconditioner, or an explicit Runge-Kutta pair for a lightly damped, oscillating plant, as the
// service's probe picks (scheme_probe.hpp) unless PropagationOptions::method names one. In the service's form dP/dt = F P + P F' + S - P G W G' P:
//   -dP/dt = A~'P + P A~ + Q~ - P B R^-1 B' P,  A~ = A - B R^-1 N',  Q~ = Q - N R^-1 N'
// (the cross weight N folded in), so F = -A~', S = -Q~, G = B, W = -R^-1, and the service's
// closed-loop matrix F - P G W G' is -(A - B K)'.
#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "propagation/symmetric_matrix_ode.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {
namespace riccati_detail {

namespace {

/// F, S, W of the service at one time, from the plant and the weights.
struct RiccatiTerms {
  RiccatiTerms(const System& sys, const Weights& w)
      : coeff(sys, w), F(sys.states(), sys.states()), S(sys.states(), sys.states()),
        W(sys.inputs(), sys.inputs()), RinvNt(sys.inputs(), sys.states()) {}
  LqrCoefficients coeff;
  Eigen::MatrixXd F, S, W, RinvNt;
  Eigen::LLT<Eigen::MatrixXd> llt;
  double t = NAN;

  void at(double time) {
    if (time == t) return;
    t = NAN;
    coeff.at(time);  // throws NumericalError when R is not positive definite at TIME
    llt.compute(coeff.R);
    RinvNt = llt.solve(coeff.N.transpose());
    F = -coeff.A.transpose();
    F.noalias() += RinvNt.transpose() * coeff.B.transpose();  // -(A - B R^-1 N')'
    S = -coeff.Q;
    S.noalias() += coeff.N * RinvNt;                           // -(Q - N R^-1 N')
    W = -llt.solve(Eigen::MatrixXd::Identity(coeff.m(), coeff.m()));
    t = time;
  }
};

}  // namespace

void solve_by_riccati_ode(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol) {
  const int n = sys.states(), m = sys.inputs();
  auto terms = std::make_shared<RiccatiTerms>(sys, w);
  const double t0 = sol.nodes.front(), t1 = sol.nodes.back();

  SymmetricMatrixOde eq;
  eq.n = n;
  eq.quadratic_rank = m;
  eq.F = [terms](double t, MatrixRef F) { terms->at(t); F = terms->F; };
  eq.S = [terms](double t, MatrixRef S) { terms->at(t); S = terms->S; };
  eq.G = [terms](double t, MatrixRef G) { terms->at(t); G = terms->coeff.B; };
  eq.W = [terms](double t, MatrixRef W) { terms->at(t); W = terms->W; };
  // The integrator lands on every breakpoint and takes the coefficients there from the side
  // being integrated, so a plant that jumps is followed exactly.
  eq.breakpoints = sys.breakpoints_between(t0, t1);
  // The window's ends too: CVODE then stops on them instead of stepping past and interpolating
  // back, so a model defined only on the window (a table with outside = "error") is never
  // evaluated beyond it.
  eq.breakpoints.insert(eq.breakpoints.end(), {t0, t1});
  eq.symbol = "P";
  Eigen::MatrixXd P = w.Qf.at(t1);
  P = (0.5 * (P + P.transpose())).eval();  // eval: in place it would alias
  // adams or bdf as PropagationOptions::method says; any other method (auto, the Magnus ones,
  // which have no meaning here) leaves the choice to the probe.
  OdeOptions ode = ode_options(options.propagation, OdeScheme::Bdf);
  const Method asked = options.propagation.method;
  if (asked != Method::Adams && asked != Method::Bdf) ode.scheme = probe_symmetric_ode(eq, t1, P, t0).scheme;
  const std::string engine = scheme_engine_name(ode.scheme);
  eq.label = "Riccati equation (" + engine + ")";
  SymmetricMatrixOdeSolver solver(std::move(eq), ode);

  sol.P.back() = P;
  solver.start(t1, P);
  const std::size_t count = sol.nodes.size();
  for (std::size_t i = count - 1; i-- > 0;) {
    const double t = sol.nodes[i];
    solver.advance(t, sol.P[i]);
    if (options.propagation.progress) options.propagation.progress(double(count - 1 - i) / double(count - 1));
  }
  const SymmetricOdeStats st = solver.stats();
  sol.stats.engine = engine;
  sol.stats.steps = st.steps;
  sol.stats.evaluations = st.rhs_evaluations;
  sol.stats.linear_iterations = st.linear_iterations;
}

}  // namespace riccati_detail
}  // namespace ordex
