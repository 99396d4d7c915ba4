#include "gramian/gramian_lyapunov.hpp"

#include "io/errors.hpp"
#include "propagation/symmetric_matrix_ode.hpp"

namespace ordex {

Eigen::MatrixXd lyapunov_gramian(const WeightedPair& pair, double t0, double t1, bool reachability,
                                 const OdeOptions& options, OdeStats* stats) {
  SymmetricMatrixOde eq;
  eq.n = pair.n;
  eq.F = pair.a;
  if (reachability) {
    eq.S = pair.q;
  } else {
    const auto q = pair.q;
    eq.S = [q](double t, MatrixRef s) {
      q(t, s);
      s = -s;
    };
  }
  eq.breakpoints = pair.breakpoints;
  eq.label = "Lyapunov equation of " + pair.label;
  eq.symbol = "W";
  SymmetricOdeStats st;
  const Eigen::MatrixXd zero = Eigen::MatrixXd::Zero(pair.n, pair.n);
  Eigen::MatrixXd w = reachability ? solve_symmetric_ode(eq, options, t0, zero, t1, &st)
                                   : solve_symmetric_ode(eq, options, t1, zero, t0, &st);
  if (stats) *stats = st;
  return w;
}

}  // namespace ordex
