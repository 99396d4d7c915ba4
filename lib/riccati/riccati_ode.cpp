// The Riccati equation itself, integrated backwards from t1 by CVODE BDF on the n(n+1)/2
// entries of the upper triangle of P (symmetric by construction). Newton's linear systems are
// (I - gamma J) z = r with J X = -(Acl' X + X Acl), Acl = A - B K: GMRES with the exact
// preconditioner that solves (I/2 + gamma Acl)' X + X (I/2 + gamma Acl) = R by Bartels-Stewart
// in O(n^3), so GMRES converges in about one iteration and no n(n+1)/2-square Jacobian is formed.
#include <algorithm>
#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "propagation/lyapunov_solver.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/symmetric_packing.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {
namespace riccati_detail {

namespace {

// Bound on |gamma| ||Acl||_1 below which the identity preconditions the Newton systems.
constexpr double kIdentityPreconditionerBelow = 0.1;

struct OdeWorkspace {
  OdeWorkspace(const System& sys, const Weights& w)
      : coeff(sys, w), n(sys.states()), P(n, n), dP(n, n), K(sys.inputs(), n), Acl(n, n), X(n, n), JX(n, n),
        F(n, n) {}
  LqrCoefficients coeff;
  int n;
  // The plant may jump at a breakpoint: there the coefficients are taken from the side of the
  // interval being integrated (toward MID), so that the value at the jump belongs to it.
  std::vector<double> breakpoints;
  double mid = 0, nudge = 0;
  double coefficient_time(double t) const {
    for (double b : breakpoints)
      if (std::abs(t - b) <= nudge) return b + (mid > b ? nudge : -nudge);
    return t;
  }
  Eigen::MatrixXd P, dP, K, Acl, X, JX, F;
  SchurLyapunovSolver lyapunov;
  Eigen::MatrixXd factored;      // the Acl whose Schur form the preconditioner holds
  long factorizations = 0;
  bool use_identity = false;     // the preconditioner is the identity at this gamma
  std::vector<double> last_y;    // (t, y) of the Acl in hand: GMRES asks J v many times per y
  double last_t = NAN;

  // Acl = A - B K at (t, y).
  void closed_loop(double t, const double* y) {
    const std::size_t size = static_cast<std::size_t>(n) * (n + 1) / 2;
    if (t == last_t && last_y.size() == size && std::equal(y, y + size, last_y.begin())) return;
    last_t = t;
    last_y.assign(y, y + size);
    unpack_symmetric(y, P);
    coeff.at(coefficient_time(t));
    coeff.gain(P, K);
    Acl = coeff.A;
    Acl.noalias() -= coeff.B * K;
  }
};

}  // namespace

void solve_by_riccati_ode(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol) {
  const int n = sys.states();
  const int size = n * (n + 1) / 2;
  auto ws = std::make_shared<OdeWorkspace>(sys, w);

  OdeProblem problem;
  problem.size = size;
  problem.label = "Riccati equation (CVODE BDF)";
  problem.rhs = [ws](double t, const double* y, double* ydot) {
    unpack_symmetric(y, ws->P);
    ws->coeff.at(ws->coefficient_time(t));
    ws->coeff.riccati_rhs(ws->P, ws->dP, ws->K);
    pack_symmetric(ws->dP, ydot);
  };
  problem.jac_times = [ws](double t, const double* y, const double* v, double* Jv) {
    ws->closed_loop(t, y);
    unpack_symmetric(v, ws->X);
    ws->JX.noalias() = -ws->Acl.transpose() * ws->X;
    ws->JX.noalias() -= ws->X * ws->Acl;
    pack_symmetric(ws->JX, Jv);
  };
  problem.precond_setup = [ws](double t, const double* y, double gamma) {
    ws->closed_loop(t, y);
    // When |gamma| ||Acl|| is small, I - gamma J is within that distance of I and GMRES
    // converges in one or two unpreconditioned iterations (a product J v costs two n x n
    // products; the Schur solve about eight complex ones): the identity is used then.
    ws->use_identity = std::abs(gamma) * ws->Acl.lpNorm<1>() < kIdentityPreconditionerBelow;
    if (ws->use_identity) return;
    // The Schur form of Acl serves every gamma; it is renewed when Acl has moved by more than
    // 5 % (a slightly stale preconditioner costs GMRES an iteration, never accuracy).
    const double drift = ws->factorizations == 0 ? INFINITY
                                                 : (ws->Acl - ws->factored).cwiseAbs().maxCoeff() /
                                                       std::max(1e-300, ws->factored.cwiseAbs().maxCoeff());
    if (drift > 0.05) {
      ws->lyapunov.factor(ws->Acl);
      ws->factored = ws->Acl;
      ++ws->factorizations;
    }
    ws->lyapunov.set_shift(0.5, gamma);
  };
  problem.precond_solve = [ws](const double* r, double* z) {
    if (ws->use_identity) {
      std::copy(r, r + ws->n * (ws->n + 1) / 2, z);
      return;
    }
    unpack_symmetric(r, ws->X);
    ws->lyapunov.solve(ws->X, ws->JX);
    pack_symmetric(ws->JX, z);
  };
  const double t0 = sol.nodes.front(), t1 = sol.nodes.back();
  // Every breakpoint is a node of the dense grid (dense_grid), so no advance() below crosses one;
  // the integrator is restarted at each instead.
  ws->breakpoints = sys.breakpoints_between(t0, t1);
  ws->nudge = 1e-9 * std::max(1.0, std::max(std::abs(t0), std::abs(t1)));

  OdeOptions ode;
  ode.scheme = OdeScheme::Bdf;
  ode.rtol = options.propagation.rtol;
  ode.atol = options.propagation.atol;
  ode.max_steps = options.propagation.max_steps;
  ode.max_step = options.propagation.max_step;
  OdeIntegrator integrator(problem, ode);

  std::vector<double> y(static_cast<std::size_t>(size));
  Eigen::MatrixXd P = w.Qf.at(t1);
  P = (0.5 * (P + P.transpose())).eval();  // eval: in place it would alias
  sol.P.back() = P;
  pack_symmetric(P, y.data());
  integrator.reset(t1, y.data());
  const std::size_t count = sol.nodes.size();
  for (std::size_t i = count - 1; i-- > 0;) {
    const double t = sol.nodes[i], from = sol.nodes[i + 1];
    for (double b : ws->breakpoints)
      if (std::abs(b - from) <= ws->nudge) integrator.reset(from, y.data());
    ws->mid = 0.5 * (t + from);
    integrator.advance(t, y.data());
    unpack_symmetric(y.data(), sol.P[i]);
    require_finite_matrix(sol.P[i], "P (Riccati equation)", t);
    if (options.propagation.progress) options.propagation.progress(double(count - 1 - i) / double(count - 1));
  }
  const OdeStats st = integrator.stats();
  sol.stats.engine = "cvode-bdf";
  sol.stats.steps = st.steps;
  sol.stats.evaluations = st.rhs_evaluations;
  sol.stats.linear_iterations = st.linear_iterations;
}

}  // namespace riccati_detail
}  // namespace ordex
