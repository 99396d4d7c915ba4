#include "gramian/gramian_lyapunov.hpp"

#include <Eigen/Eigenvalues>
#include <memory>

#include "io/errors.hpp"

namespace ordex {

namespace {

/// Scratch shared by the callbacks of one integration.
struct LyapunovWork {
  WeightedPair pair;
  double sign = 1;  // +q forward (reachability), -q backward (controllability)
  Eigen::MatrixXd a, q, w, v, out;
  SchurLyapunovSolver solver;
  explicit LyapunovWork(WeightedPair p, double s) : pair(std::move(p)), sign(s) {
    const int n = pair.n;
    a.resize(n, n);
    q.resize(n, n);
    w.resize(n, n);
    v.resize(n, n);
    out.resize(n, n);
  }
};

}  // namespace

Eigen::MatrixXd lyapunov_gramian(const WeightedPair& pair, double t0, double t1, bool reachability,
                                 const OdeOptions& options, OdeStats* stats) {
  const int n = pair.n;
  auto work = std::make_shared<LyapunovWork>(pair, reachability ? 1.0 : -1.0);
  OdeProblem p;
  p.size = packed_size(n);
  p.breakpoints = pair.breakpoints;
  p.label = "Lyapunov equation of " + pair.label;
  p.rhs = [work](double t, const double* y, double* ydot) {
    LyapunovWork& s = *work;
    s.pair.a(t, s.a);
    s.pair.q(t, s.q);
    unpack_symmetric(y, s.w);
    s.out.noalias() = s.a * s.w;
    s.v = s.out + s.out.transpose() + s.sign * s.q;
    pack_symmetric(s.v, ydot);
  };
  p.jac_times = [work](double t, const double*, const double* v, double* jv) {
    LyapunovWork& s = *work;
    s.pair.a(t, s.a);
    unpack_symmetric(v, s.w);
    s.out.noalias() = s.a * s.w;
    s.v = s.out + s.out.transpose();
    pack_symmetric(s.v, jv);
  };
  p.precond_setup = [work](double t, const double*, double gamma) {
    LyapunovWork& s = *work;
    s.pair.a(t, s.a);
    // (I/2 - gamma a) X + X (I/2 - gamma a)' = F' X + X F with F = I/2 - gamma a'.
    s.solver.factor(s.a.transpose());
    s.solver.set_shift(0.5, -gamma);
  };
  p.precond_solve = [work](const double* r, double* z) {
    LyapunovWork& s = *work;
    unpack_symmetric(r, s.w);
    s.solver.solve(s.w, s.v);
    s.v = symmetrized(s.v);
    pack_symmetric(s.v, z);
  };
  OdeIntegrator ode(p, options);
  std::vector<double> y(static_cast<std::size_t>(p.size), 0.0);
  const double start = reachability ? t0 : t1;
  const double end = reachability ? t1 : t0;
  ode.reset(start, y.data());
  ode.advance(end, y.data());
  if (stats) *stats = ode.stats();
  Eigen::MatrixXd w(n, n);
  unpack_symmetric(y.data(), w);
  if (!w.allFinite()) throw NumericalError(p.label + ": the Gramian is not finite at t = " + format_number(end));
  return w;
}

}  // namespace ordex
