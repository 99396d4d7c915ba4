#include "propagation/symmetric_matrix_ode.hpp"

#include <algorithm>
#include <cmath>
#include <utility>

#include "io/errors.hpp"
#include "propagation/explicit_rk.hpp"
#include "propagation/lyapunov_solver.hpp"
#include "propagation/symmetric_packing.hpp"

namespace ordex {

namespace {

// Below this bound on |gamma| ||Fc||_1 the Newton matrix I - gamma J is within that distance of
// the identity, and GMRES converges in one or two unpreconditioned iterations (a product J v
// costs two n x n products, the Schur solve about eight complex ones): the identity is used.
constexpr double kIdentityPreconditionerBelow = 0.1;
// The Schur form of Fc serves every gamma and is renewed when Fc has moved by more than this
// fraction (a slightly stale preconditioner costs GMRES an iteration, never accuracy).
constexpr double kRefactorDrift = 0.05;

/// (row, column) of packed entry I (upper triangle, column by column).
std::pair<int, int> packed_position(int i) {
  int j = 0;
  while ((j + 1) * (j + 2) / 2 <= i) ++j;
  return {i - j * (j + 1) / 2, j};
}

}  // namespace

void SymmetricMatrixOde::validate() const {
  if (n < 1) throw InputError(label + ": SymmetricMatrixOde::n = " + std::to_string(n) + " must be at least 1");
  if (!F) throw InputError(label + ": SymmetricMatrixOde::F is not set");
  if (quadratic_rank < 0)
    throw InputError(label + ": SymmetricMatrixOde::quadratic_rank = " + std::to_string(quadratic_rank) +
                     " must be >= 0");
  if (quadratic_rank > 0 && (!G || !W))
    throw InputError(label + ": SymmetricMatrixOde::G and W are needed when quadratic_rank > 0");
}

struct SymmetricMatrixOdeSolver::Impl {
  SymmetricMatrixOde eq;
  int n, k;
  // Coefficients at coeff_t.
  Eigen::MatrixXd F, S, G, W;
  double coeff_t = NAN;
  // Workspace.
  Eigen::MatrixXd X, V, FX, out, XG, XGW;
  // The closed-loop matrix Fc = F - X G W G' at (fc_t, fc_y): GMRES asks J v many times per y.
  Eigen::MatrixXd Fc;
  double fc_t = NAN;
  std::vector<double> fc_y;
  // Preconditioner.
  SchurLyapunovSolver lyapunov;
  Eigen::MatrixXd factored;  // the Fc whose Schur form the solver holds
  long factorizations = 0;
  bool have_factor = false;  // false until a factorization succeeds (and after one fails)
  bool use_identity = false;
  std::unique_ptr<OdeSolver> solver;  // CVODE (Adams or BDF) or the explicit Runge-Kutta scheme
  std::vector<double> y;

  explicit Impl(SymmetricMatrixOde e) : eq(std::move(e)), n(eq.n), k(eq.quadratic_rank) {
    F.setZero(n, n);
    S.setZero(n, n);
    G.setZero(n, k);
    W.setZero(k, k);
    X.resize(n, n);
    V.resize(n, n);
    FX.resize(n, n);
    out.resize(n, n);
    XG.resize(n, k);
    XGW.resize(n, k);
    Fc.resize(n, n);
    y.resize(static_cast<std::size_t>(packed_size(n)));
  }

  void coefficients(double t) {
    if (t == coeff_t) return;
    coeff_t = NAN;  // stays unset if a callback throws
    eq.F(t, F);
    if (eq.S) eq.S(t, S);
    if (k > 0) {
      eq.G(t, G);
      eq.W(t, W);
    }
    coeff_t = t;
  }

  void rhs(double t, const double* yv, double* ydot) {
    coefficients(t);
    unpack_symmetric(yv, X);
    FX.noalias() = F * X;
    out = FX + FX.transpose();
    if (eq.S) out += S;
    if (k > 0) {
      XG.noalias() = X * G;
      XGW.noalias() = XG * W;
      out.noalias() -= XGW * XG.transpose();
    }
    pack_symmetric(out, ydot);
  }

  void closed_loop(double t, const double* yv) {
    const std::size_t size = y.size();
    if (t == fc_t && (k == 0 || std::equal(yv, yv + size, fc_y.begin()))) return;
    fc_t = NAN;
    coefficients(t);
    Fc = F;
    if (k > 0) {
      unpack_symmetric(yv, X);
      XG.noalias() = X * G;
      XGW.noalias() = XG * W;
      Fc.noalias() -= XGW * G.transpose();
      fc_y.assign(yv, yv + size);
    }
    fc_t = t;
  }

  void jac_times(double t, const double* yv, const double* v, double* jv) {
    closed_loop(t, yv);
    unpack_symmetric(v, V);
    FX.noalias() = Fc * V;
    out = FX + FX.transpose();
    pack_symmetric(out, jv);
  }

  void precond_setup(double t, const double* yv, double gamma) {
    closed_loop(t, yv);
    use_identity = std::abs(gamma) * Fc.lpNorm<1>() < kIdentityPreconditionerBelow;
    if (use_identity) return;
    const double drift = !have_factor ? INFINITY
                                             : (Fc - factored).cwiseAbs().maxCoeff() /
                                                   std::max(1e-300, factored.cwiseAbs().maxCoeff());
    try {
      if (drift > kRefactorDrift) {
        // (I/2 - gamma Fc) V + V (I/2 - gamma Fc)' = M' V + V M with M = I/2 - gamma Fc'.
        have_factor = false;
        lyapunov.factor(Fc.transpose());
        factored = Fc;
        ++factorizations;
        have_factor = true;
      }
      lyapunov.set_shift(0.5, -gamma);
    } catch (const NumericalError& e) {
      // A Schur form that did not converge, or a shift at which the Lyapunov operator is
      // singular: CVODE retries with a smaller step (the coefficients' own failures above are
      // not caught and stop the integration).
      throw SingularNewtonMatrix(e.what());
    }
  }

  void precond_solve(const double* r, double* z) {
    if (use_identity) {
      std::copy(r, r + y.size(), z);
      return;
    }
    unpack_symmetric(r, V);
    lyapunov.solve(V, out);
    pack_symmetric(out, z);
  }

  std::string entry_name(int i) const {
    const auto [r, c] = packed_position(i);
    return eq.symbol + "[" + std::to_string(r) + "][" + std::to_string(c) + "]";
  }
};

SymmetricMatrixOdeSolver::SymmetricMatrixOdeSolver(SymmetricMatrixOde equation, OdeOptions options) {
  equation.validate();
  impl_ = std::make_unique<Impl>(std::move(equation));
  Impl* s = impl_.get();
  OdeProblem p;
  p.size = packed_size(s->n);
  p.label = s->eq.label;
  p.breakpoints = s->eq.breakpoints;
  p.rhs = [s](double t, const double* y, double* ydot) { s->rhs(t, y, ydot); };
  p.name_of = [s](int i) { return s->entry_name(i); };
  if (options.scheme == OdeScheme::Bdf) {
    p.jac_times = [s](double t, const double* y, const double* v, double* jv) { s->jac_times(t, y, v, jv); };
    p.precond_setup = [s](double t, const double* y, double gamma) { s->precond_setup(t, y, gamma); };
    p.precond_solve = [s](const double* r, double* z) { s->precond_solve(r, z); };
  }
  if (s->eq.on_step)
    p.on_step = [s](double t, const double* y, const double*) {
      unpack_symmetric(y, s->X);
      s->eq.on_step(t, s->X);
    };
  s->solver = make_ode_solver(std::move(p), options);
}

SymmetricMatrixOdeSolver::~SymmetricMatrixOdeSolver() = default;

void SymmetricMatrixOdeSolver::start(double t, const Eigen::MatrixXd& x) {
  Impl& s = *impl_;
  if (x.rows() != s.n || x.cols() != s.n)
    throw InputError(s.eq.label + ": the start value is " + std::to_string(x.rows()) + " x " +
                     std::to_string(x.cols()) + ", the equation is " + std::to_string(s.n) + " x " +
                     std::to_string(s.n));
  pack_symmetric(x, s.y.data());
  for (std::size_t i = 0; i < s.y.size(); ++i)
    if (!std::isfinite(s.y[i]))
      throw InputError(s.eq.label + ": the start value " + s.entry_name(static_cast<int>(i)) + " is not finite");
  s.solver->reset(t, s.y.data());
}

void SymmetricMatrixOdeSolver::advance(double t, Eigen::MatrixXd& x) {
  Impl& s = *impl_;
  s.solver->advance(t, s.y.data());
  for (std::size_t i = 0; i < s.y.size(); ++i)
    if (!std::isfinite(s.y[i]))
      throw NumericalError(s.eq.label + ": " + s.entry_name(static_cast<int>(i)) + " is not finite at t = " +
                           format_number(t));
  x.resize(s.n, s.n);
  unpack_symmetric(s.y.data(), x);
}

double SymmetricMatrixOdeSolver::time() const { return impl_->solver->time(); }

SymmetricOdeStats SymmetricMatrixOdeSolver::stats() const {
  SymmetricOdeStats st;
  static_cast<OdeStats&>(st) = impl_->solver->stats();
  st.factorizations = impl_->factorizations;
  return st;
}

SchemeProbe probe_symmetric_ode(const SymmetricMatrixOde& eq, double t_from, const Eigen::MatrixXd& x_from,
                                double t_to) {
  eq.validate();
  const int n = eq.n, k = eq.quadratic_rank;
  std::vector<Eigen::MatrixXd> samples;
  Eigen::MatrixXd F(n, n), G(n, k), W(k, k);
  for (double t : {t_from, 0.5 * (t_from + t_to), t_to}) {
    eq.F(t, F);
    samples.push_back(F);
  }
  SchemeProbe p = probe_scheme(samples, t_to - t_from);
  if (p.scheme == OdeScheme::RungeKutta && k > 0 && x_from.rows() == n && x_from.cols() == n) {
    // The quadratic term at the start may make the equation stiff (a strong measurement damps
    // the modes it sees) but never makes a slow plant oscillate: it can only veto the pair.
    eq.F(t_from, F);
    eq.G(t_from, G);
    eq.W(t_from, W);
    const Eigen::MatrixXd XG = x_from * G;
    const SchemeProbe closed = probe_scheme({F - XG * W * G.transpose()}, t_to - t_from);
    if (!(closed.decay <= kExplicitMaxDecayRatio * p.frequency)) p.scheme = OdeScheme::Bdf;
    p.decay = std::max(p.decay, closed.decay);
  }
  return p;
}

Eigen::MatrixXd solve_symmetric_ode(const SymmetricMatrixOde& equation, const OdeOptions& options, double t_from,
                                    const Eigen::MatrixXd& x_from, double t_to, SymmetricOdeStats* stats) {
  SymmetricMatrixOdeSolver solver(equation, options);
  solver.start(t_from, x_from);
  Eigen::MatrixXd x;
  solver.advance(t_to, x);
  if (stats) *stats = solver.stats();
  return x;
}

}  // namespace ordex
