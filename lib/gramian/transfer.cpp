#include "gramian/transfer.hpp"

#include <algorithm>
#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "propagation/ode_integrator.hpp"

namespace ordex {

void TransferOptions::validate(int n) const {
  if (x0.size() != n)
    throw InputError("--x0: " + std::to_string(x0.size()) + " entries, the model has " + std::to_string(n) + " states");
  if (xf.size() != n)
    throw InputError("--xf: " + std::to_string(xf.size()) + " entries, the model has " + std::to_string(n) + " states");
  if (!x0.allFinite()) throw InputError("--x0: entries must be finite");
  if (!xf.allFinite()) throw InputError("--xf: entries must be finite");
  if (!(rank_tol > 0 && rank_tol < 1)) throw InputError("--rank-tol: " + format_number(rank_tol) + " is not in (0, 1)");
  if (!(replay_rtol >= 1e-14 && replay_rtol <= 1e-3))
    throw InputError("transfer replay tolerance: " + format_number(replay_rtol) + " is not in [1e-14, 1e-3]");
}

namespace {

struct ReplayWork {
  const System* sys;
  Eigen::MatrixXd a, b;
  Eigen::VectorXd u;
  ReplayWork(const System& s) : sys(&s), a(s.states(), s.states()), b(s.states(), s.inputs()), u(s.inputs()) {}
};

double inf_norm_or(double fallback, const Eigen::VectorXd& v) {
  return std::max(fallback, v.size() ? v.cwiseAbs().maxCoeff() : 0.0);
}

}  // namespace

TransferReport design_transfer(const System& sys, const GramianSweep& sweep, const TransferOptions& options) {
  const int n = sys.states(), m = sys.inputs();
  options.validate(n);
  if (m == 0) throw InputError(sys.info().source + ": system.inputs: the model declares no inputs (no B), so no transfer can be designed");
  if (sweep.intervals() == 0 || sweep.n() != n) throw InputError("transfer: the Gramian sweep does not match the model");
  const std::size_t N = sweep.intervals();
  const double t0 = sweep.times.front(), t1 = sweep.times.back();

  TransferReport r;
  r.times = sweep.times;
  const Eigen::MatrixXd wr = sweep.compose_reachability(0, N);
  r.reachability = analyze_gramian(wr, options.rank_tol);
  const GramianSpectrum& sp = r.reachability;
  if (!sp.full_rank) {
    throw NumericalError(
        "the reachability Gramian over [" + format_number(t0) + ", " + format_number(t1) +
        "] is too ill-conditioned to invert (rank " + std::to_string(sp.rank) + " of " + std::to_string(n) +
        " at rank tolerance " + format_number(sp.rank_tol) + "): weakest direction (" +
        describe_direction(sp.weakest_direction, sys.info().state_names) + ") has eigenvalue " +
        format_number(sp.eigenvalues[0]) + " against the largest " + format_number(sp.eigenvalues[n - 1]));
  }
  r.free_final = sweep.phi_from_start.back() * options.x0;
  const Eigen::VectorXd d = options.xf - r.free_final;
  // W_r^-1 d through the eigen-decomposition already computed: V diag(1/lambda) V' d.
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(symmetrized(wr));
  const Eigen::MatrixXd& V = es.eigenvectors();
  r.costate = V * (V.transpose() * d).cwiseQuotient(es.eigenvalues());
  r.energy = d.dot(r.costate);

  // Phi(t1, t_k)' lambda backward along the grid: p_k = S_k' p_{k+1}, p_N = lambda.
  std::vector<Eigen::VectorXd> p(N + 1);
  p[N] = r.costate;
  for (std::size_t k = N; k-- > 0;) p[k] = sweep.step_phi[k].transpose() * p[k + 1];
  r.inputs.resize(static_cast<Eigen::Index>(N + 1), m);
  Eigen::MatrixXd b(n, m);
  for (std::size_t k = 0; k <= N; ++k) {
    sys.B(sweep.times[k], b);
    r.inputs.row(static_cast<Eigen::Index>(k)) = (b.transpose() * p[k]).transpose();
  }
  r.peak_input = r.inputs.cwiseAbs().maxCoeff();
  if (!r.inputs.allFinite() || !std::isfinite(r.energy))
    throw NumericalError("transfer: the designed input is not finite");

  // Replay 1: the input law itself, x' = A x + B B' p, p' = -A' p, e' = |B' p|^2, on scaled
  // unknowns so that one absolute tolerance fits states, costates and energy alike.
  const double sx = inf_norm_or(inf_norm_or(inf_norm_or(1e-300, options.x0), options.xf), d);
  const double sp0 = inf_norm_or(1e-300, p[0]);
  const double se = std::max(r.energy, 1e-300);
  OdeOptions oo;
  oo.scheme = OdeScheme::Adams;
  oo.rtol = options.replay_rtol;
  oo.atol = options.replay_rtol * 1e-2;
  {
    auto w = std::make_shared<ReplayWork>(sys);
    OdeProblem prob;
    prob.size = 2 * n + 1;
    prob.breakpoints = sys.info().breakpoints;
    prob.label = "transfer replay";
    prob.rhs = [w, n, sx, sp0, se](double t, const double* y, double* ydot) {
      w->sys->A(t, w->a);
      w->sys->B(t, w->b);
      Eigen::Map<const Eigen::VectorXd> x(y, n), pp(y + n, n);
      Eigen::Map<Eigen::VectorXd> dx(ydot, n), dp(ydot + n, n);
      w->u.noalias() = w->b.transpose() * pp;  // scaled by sp0
      dx.noalias() = w->a * x;
      dx.noalias() += (sp0 / sx) * (w->b * w->u);
      dp.noalias() = -w->a.transpose() * pp;
      ydot[2 * n] = sp0 * sp0 * w->u.squaredNorm() / se;
    };
    OdeIntegrator ode(prob, oo);
    std::vector<double> y(static_cast<std::size_t>(2 * n + 1), 0.0);
    for (int i = 0; i < n; ++i) {
      y[i] = options.x0[i] / sx;
      y[n + i] = p[0][i] / sp0;
    }
    ode.reset(t0, y.data());
    ode.advance(t1, y.data());
    r.replay_steps += ode.stats().steps;
    r.x_final = Eigen::Map<Eigen::VectorXd>(y.data(), n) * sx;
    r.energy_replayed = y[2 * n] * se;
    r.final_error = (r.x_final - options.xf).norm();
  }
  // Replay 2: the sampled history, linearly interpolated between the sample times.
  {
    auto w = std::make_shared<ReplayWork>(sys);
    const std::vector<double>& ts = sweep.times;
    const Eigen::MatrixXd& us = r.inputs;
    OdeProblem prob;
    prob.size = n;
    prob.breakpoints = sys.info().breakpoints;
    // The interpolant has kinks at the samples; stopping there keeps the replay accurate.
    if (ts.size() <= 20001) prob.breakpoints.insert(prob.breakpoints.end(), ts.begin() + 1, ts.end() - 1);
    std::sort(prob.breakpoints.begin(), prob.breakpoints.end());
    prob.label = "sampled-input replay";
    prob.rhs = [w, n, sx, &ts, &us](double t, const double* y, double* ydot) {
      std::size_t k = static_cast<std::size_t>(std::upper_bound(ts.begin(), ts.end(), t) - ts.begin());
      k = std::min(std::max<std::size_t>(k, 1), ts.size() - 1) - 1;
      const double s = std::clamp((t - ts[k]) / (ts[k + 1] - ts[k]), 0.0, 1.0);
      w->u = (1 - s) * us.row(static_cast<Eigen::Index>(k)).transpose() +
             s * us.row(static_cast<Eigen::Index>(k + 1)).transpose();
      w->sys->A(t, w->a);
      w->sys->B(t, w->b);
      Eigen::Map<const Eigen::VectorXd> x(y, n);
      Eigen::Map<Eigen::VectorXd> dx(ydot, n);
      dx.noalias() = w->a * x;
      dx.noalias() += (1.0 / sx) * (w->b * w->u);
    };
    OdeIntegrator ode(prob, oo);
    std::vector<double> y(static_cast<std::size_t>(n));
    for (int i = 0; i < n; ++i) y[i] = options.x0[i] / sx;
    ode.reset(t0, y.data());
    ode.advance(t1, y.data());
    r.replay_steps += ode.stats().steps;
    r.final_error_sampled = (Eigen::Map<Eigen::VectorXd>(y.data(), n) * sx - options.xf).norm();
  }
  return r;
}

}  // namespace ordex
