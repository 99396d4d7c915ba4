#include "gramian/gramian_lyapunov.hpp"

#include <Eigen/Eigenvalues>
#include <memory>

#include "io/errors.hpp"

namespace ordex {

void LyapunovSolver::factor(const Eigen::MatrixXd& m) {
  Eigen::ComplexSchur<Eigen::MatrixXcd> schur(m.cast<std::complex<double>>());
  if (schur.info() != Eigen::Success) throw NumericalError("Lyapunov preconditioner: Schur form failed");
  u_ = schur.matrixU();
  t_ = schur.matrixT();
}

void LyapunovSolver::solve(const Eigen::MatrixXd& r, Eigen::MatrixXd& x) const {
  // M = U T U^H with T upper triangular, and M' = M^H = U T^H U^H, so with Y = U^H X U:
  // T Y + Y T^H = U^H R U. Column j of Y T^H is sum_{k >= j} conj(T(j, k)) Y(:, k), so the
  // columns are found from the last to the first, each by one triangular solve.
  const Eigen::Index n = t_.rows();
  Eigen::MatrixXcd rt = u_.adjoint() * r.cast<std::complex<double>>() * u_;
  Eigen::MatrixXcd y(n, n);
  Eigen::MatrixXcd shifted = t_;
  for (Eigen::Index j = n - 1; j >= 0; --j) {
    Eigen::VectorXcd rhs = rt.col(j);
    for (Eigen::Index k = j + 1; k < n; ++k) rhs -= std::conj(t_(j, k)) * y.col(k);
    const std::complex<double> shift = std::conj(t_(j, j));
    for (Eigen::Index i = 0; i < n; ++i) shifted(i, i) = t_(i, i) + shift;
    y.col(j) = shifted.triangularView<Eigen::Upper>().solve(rhs);
  }
  x = (u_ * y * u_.adjoint()).real();
}

int packed_size(int n) { return n * (n + 1) / 2; }

void pack_symmetric(const Eigen::MatrixXd& w, double* out) {
  const Eigen::Index n = w.rows();
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = 0; i <= j; ++i) *out++ = w(i, j);
}

void unpack_symmetric(const double* in, Eigen::MatrixXd& w) {
  const Eigen::Index n = w.rows();
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = 0; i <= j; ++i) {
      w(i, j) = *in;
      w(j, i) = *in++;
    }
}

namespace {

/// Scratch shared by the callbacks of one integration.
struct LyapunovWork {
  WeightedPair pair;
  double sign = 1;  // +q forward (reachability), -q backward (controllability)
  Eigen::MatrixXd a, q, w, v, out;
  LyapunovSolver solver;
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
    const Eigen::MatrixXd m = 0.5 * Eigen::MatrixXd::Identity(s.a.rows(), s.a.cols()) - gamma * s.a;
    s.solver.factor(m);
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
