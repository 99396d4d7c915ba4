#include "estimation/covariance_routes.hpp"

#include <algorithm>
#include <cmath>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"
#include "propagation/symmetric_matrix_ode.hpp"

namespace ordex {
namespace estimation_detail {

struct CovarianceRoute::Impl {
  const System& sys;
  std::shared_ptr<NoiseTerms> terms;
  RiccatiSolver route;
  int dense_intervals;
  double t0, t1;
  std::unique_ptr<SymmetricMatrixOdeSolver> ode;
  std::string ode_engine;  // the ODE route's scheme (scheme_engine_name)
  std::unique_ptr<Propagator> prop;

  Impl(const System& s, const NoiseModel& noise, bool with_filter, RiccatiSolver r, const PropagationOptions& options,
       int dense, double a, double b)
      : sys(s), terms(std::make_shared<NoiseTerms>(s, noise, with_filter)), route(r), dense_intervals(dense), t0(a),
        t1(b) {
    const int n = s.states(), p = with_filter ? s.outputs() : 0;
    auto T = terms;
    if (route == RiccatiSolver::RiccatiOde) {
      SymmetricMatrixOde eq;
      eq.n = n;
      eq.F = [T](double t, MatrixRef F) { T->at(t); F = T->A; };
      eq.S = [T](double t, MatrixRef S) { T->at(t); S = T->S; };
      if (p > 0) {
        eq.quadratic_rank = p;
        eq.G = [T](double t, MatrixRef G) { T->at(t); G = T->C.transpose(); };
        eq.W = [T](double t, MatrixRef W) { T->at(t); W = T->Rn_inv; };
      }
      eq.breakpoints = s.breakpoints_between(a, b);
      eq.breakpoints.insert(eq.breakpoints.end(), {a, b});  // never step past the ends (riccati_ode.cpp)
      eq.symbol = "P";
      // adams or bdf as PropagationOptions::method says; otherwise the service's probe picks
      // (scheme_probe.hpp), from P0 at the start of the window.
      OdeOptions ode_opts = ode_options(options, OdeScheme::Bdf);
      if (options.method != Method::Adams && options.method != Method::Bdf)
        ode_opts.scheme = probe_symmetric_ode(eq, a, noise.P0, b).scheme;
      ode_engine = scheme_engine_name(ode_opts.scheme);
      eq.label = std::string(with_filter ? "Kalman-Bucy" : "covariance") + " equation (" + ode_engine + ")";
      ode = std::make_unique<SymmetricMatrixOdeSolver>(std::move(eq), ode_opts);
    } else {
      Generator g;
      g.dim = 2 * n;
      const bool filter = p > 0;
      g.eval = [T, n, filter](double t, MatrixRef H) {
        T->at(t);
        H.topLeftCorner(n, n) = -T->A.transpose();
        if (filter) {
          H.topRightCorner(n, n) = T->CtWC;
        } else {
          H.topRightCorner(n, n).setZero();
        }
        H.bottomLeftCorner(n, n) = T->S;
        H.bottomRightCorner(n, n) = T->A;
      };
      g.breakpoints = s.breakpoints_between(a, b);
      g.label = with_filter ? "Kalman-Bucy Hamiltonian" : "covariance Hamiltonian";
      PropagationOptions engine = options;
      engine.progress = {};
      prop = std::make_unique<Propagator>(g, engine);
    }
  }

  void carry_ode(const std::vector<double>& times, const Eigen::MatrixXd& P0,
                 const std::function<void(std::size_t, const Eigen::MatrixXd&)>& visit) {
    ode->start(times.front(), P0);
    Eigen::MatrixXd P;
    for (std::size_t k = 1; k < times.size(); ++k) {
      ode->advance(times[k], P);
      visit(k, P);
    }
  }

  void carry_hamiltonian(const std::vector<double>& times, const Eigen::MatrixXd& P0,
                         const std::function<void(std::size_t, const Eigen::MatrixXd&)>& visit) {
    const int n = sys.states();
    const double a = times.front(), b = times.back();
    const int intervals = std::max(
        1, static_cast<int>(std::ceil(dense_intervals * (b - a) / std::max(t1 - t0, 1e-300))));
    std::vector<std::size_t> index;
    const std::vector<double> grid = dense_grid(times, intervals, sys.breakpoints_between(a, b), index);
    std::size_t next = 1;  // the next output time to hand out; INDEX is its node, ascending
    while (next < index.size() && index[next] == 0) visit(next++, P0);
    Eigen::MatrixXd P = 0.5 * (P0 + P0.transpose()), X(n, n), Y(n, n);
    Eigen::PartialPivLU<Eigen::MatrixXd> lu(n);
    prop->for_each_interval(grid, [&](std::size_t i, const Eigen::MatrixXd& S) {
      const double t = grid[i + 1];
      X.noalias() = S.topLeftCorner(n, n) + S.topRightCorner(n, n) * P;
      Y.noalias() = S.bottomLeftCorner(n, n) + S.bottomRightCorner(n, n) * P;
      // P = Y X^-1, i.e. X' P' = Y'.
      lu.compute(X.transpose());
      const double rc = lu.rcond();
      if (!(rc > 1e-13))
        throw NumericalError("Hamiltonian step: S11 + S12 P is singular at t = " + format_number(t) +
                             " (reciprocal condition " + format_number(rc) + "); try the ode solver or a finer grid");
      P = lu.solve(Y.transpose()).transpose();
      P = (0.5 * (P + P.transpose())).eval();  // eval: in place it would alias
      if (!P.allFinite()) throw NumericalError("P (Hamiltonian route) is not finite at t = " + format_number(t));
      // Every output time on this node (two only when closer than the grid's merge distance).
      while (next < index.size() && index[next] == i + 1) visit(next++, P);
    });
  }
};

CovarianceRoute::CovarianceRoute(const System& sys, const NoiseModel& noise, bool with_filter, RiccatiSolver route,
                                 const PropagationOptions& options, int dense_intervals, double t0, double t1)
    : impl_(std::make_unique<Impl>(sys, noise, with_filter, route, options, dense_intervals, t0, t1)) {}

CovarianceRoute::~CovarianceRoute() = default;

void CovarianceRoute::carry(const std::vector<double>& times, const Eigen::MatrixXd& P,
                            const std::function<void(std::size_t, const Eigen::MatrixXd&)>& visit) {
  if (times.size() < 2) return;
  if (impl_->ode)
    impl_->carry_ode(times, P, visit);
  else
    impl_->carry_hamiltonian(times, P, visit);
}

RouteStats CovarianceRoute::stats() const {
  RouteStats st;
  if (impl_->ode) {
    const SymmetricOdeStats s = impl_->ode->stats();
    st.engine = impl_->ode_engine;
    st.steps = s.steps;
    st.evaluations = s.rhs_evaluations;
  } else {
    const PropagationStats& s = impl_->prop->stats();
    st.engine = method_name(s.method);
    st.steps = s.steps;
    st.evaluations = s.evaluations;
  }
  return st;
}

}  // namespace estimation_detail
}  // namespace ordex
