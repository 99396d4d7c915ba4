// The Hamiltonian route: the engine propagates H(t) = [[A~, -B R^-1 B'], [-Q~, -A~']] over each
// interval of the dense grid, backwards from t1, each from the identity, and the stepwise
// Davison-Maki recursion carries P: with S = Phi_H(t_k, t_{k+1}) in n x n blocks,
//   P_k = (S21 + S22 P_{k+1}) (S11 + S12 P_{k+1})^-1.
// Working one interval at a time keeps S well scaled, which the one-shot form over the whole
// horizon is not (its blocks grow like exp(2 |lambda| (t1 - t0))).
#include <memory>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"
#include "riccati/lqr_coefficients.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {
namespace riccati_detail {

Generator hamiltonian_generator(const System& sys, const Weights& w, double t0, double t1, const std::string& label) {
  auto coeff = std::make_shared<LqrCoefficients>(sys, w);
  Generator g;
  g.dim = 2 * sys.states();
  g.eval = [coeff](double t, MatrixRef out) {
    coeff->at(t);
    coeff->hamiltonian(out);
  };
  g.breakpoints = sys.breakpoints_between(t0, t1);
  g.label = label;
  return g;
}

void solve_by_hamiltonian(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol) {
  const int n = sys.states();
  const double t0 = sol.nodes.front(), t1 = sol.nodes.back();
  PropagationOptions engine = options.propagation;
  engine.progress = {};  // progress is reported per interval below
  Propagator prop(hamiltonian_generator(sys, w, t0, t1, "Riccati Hamiltonian"), engine);

  const std::size_t count = sol.nodes.size();
  std::vector<double> backward(sol.nodes.rbegin(), sol.nodes.rend());
  Eigen::MatrixXd P = w.Qf.at(t1);
  P = (0.5 * (P + P.transpose())).eval();  // eval: in place it would alias
  sol.P.back() = P;
  Eigen::MatrixXd X(n, n), Y(n, n);
  Eigen::PartialPivLU<Eigen::MatrixXd> lu(n);
  prop.for_each_interval(backward, [&](std::size_t k, const Eigen::MatrixXd& S) {
    // S maps [x; lambda] at backward[k] to backward[k + 1] (the earlier time).
    const std::size_t node = count - 2 - k;
    const double t = sol.nodes[node];
    X.noalias() = S.topLeftCorner(n, n) + S.topRightCorner(n, n) * P;
    Y.noalias() = S.bottomLeftCorner(n, n) + S.bottomRightCorner(n, n) * P;
    // P = Y X^-1, i.e. X' P' = Y'.
    lu.compute(X.transpose());
    const double rc = lu.rcond();
    if (!(rc > 1e-13))
      throw NumericalError("Hamiltonian step: S11 + S12 P is singular at t = " + format_number(t) +
                           " (reciprocal condition " + format_number(rc) +
                           "); a stiff plant needs a finer grid (RiccatiOptions::dense_intervals) or RiccatiOptions::solver = ode");
    P = lu.solve(Y.transpose()).transpose();
    P = (0.5 * (P + P.transpose())).eval();  // eval: in place it would alias
    require_finite_matrix(P, "P (Hamiltonian route)", t);
    sol.P[node] = P;
    if (options.propagation.progress) options.propagation.progress(double(k + 1) / double(count - 1));
  });
  const PropagationStats& st = prop.stats();
  sol.stats.engine = method_name(st.method);
  sol.stats.steps = st.steps;
  sol.stats.evaluations = st.evaluations;
  sol.stats.error_estimate = st.error_estimate;
}

}  // namespace riccati_detail
}  // namespace ordex
