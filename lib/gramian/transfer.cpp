#include "gramian/transfer.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <Eigen/SVD>
#include <memory>

#include "io/errors.hpp"
#include "propagation/state_simulator.hpp"

namespace ordex {

void TransferOptions::validate(int n) const {
  if (x0.size() != n)
    throw InputError("--x0: " + std::to_string(x0.size()) + " entries, the model has " + std::to_string(n) + " states");
  if (xf.size() != n)
    throw InputError("--xf: " + std::to_string(xf.size()) + " entries, the model has " + std::to_string(n) + " states");
  if (!x0.allFinite()) throw InputError("--x0: entries must be finite");
  if (!xf.allFinite()) throw InputError("--xf: entries must be finite");
  if (!(rank_tol > 0 && rank_tol < 1)) throw InputError("--rank-tol: " + format_number(rank_tol) + " is not in (0, 1)");
  if (!(warn_condition > 1)) throw InputError("TransferOptions::warn_condition: " + format_number(warn_condition) + " must be > 1");
  scaling.validate(n);
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
  const GramianFactor factor = sweep.reachability_factor(0, N);
  r.reachability = analyze_factor(factor, options.rank_tol, options.scaling);
  const GramianSpectrum& sp = r.reachability;
  if (sp.verdict.status != RankStatus::FullRank) {
    const bool unsure = sp.verdict.status == RankStatus::Undetermined;
    throw NumericalError(
        "the reachability Gramian over [" + format_number(t0) + ", " + format_number(t1) + "] " +
        (unsure ? "may be rank deficient (rank between " + std::to_string(sp.verdict.rank_low) + " and " +
                      std::to_string(sp.verdict.rank_high)
                : "is too ill-conditioned to invert (rank " + std::to_string(sp.rank)) +
        " of " + std::to_string(n) + " at rank tolerance " + format_number(sp.rank_tol) + ", " +
        sp.verdict.scaling + " scaling): weakest direction (" +
        describe_direction(sp.weakest_direction, sys.info().state_names) + ") has eigenvalue " +
        format_number(sp.eigenvalues[0]) + " against the largest " + format_number(sp.eigenvalues[n - 1]) +
        (unsure ? "; " + sp.verdict.reason + " (" + sp.verdict.remedy + ")" : ""));
  }
  const Eigen::VectorXd& mu = sp.verdict.scaled_eigenvalues;
  const double scaled_condition = mu[0] > 0 ? mu[n - 1] / mu[0] : std::numeric_limits<double>::infinity();
  if (scaled_condition > options.warn_condition)
    r.warnings.push_back("the reachability Gramian is ill-conditioned (condition " + format_number(scaled_condition) +
                         " with " + sp.verdict.scaling + " scaling): the energy and the input carry its errors "
                         "magnified by up to that factor");
  r.free_final = sweep.phi_from_start.back() * options.x0;
  const Eigen::VectorXd d = options.xf - r.free_final;
  // With the factor's SVD L = U S V': v = L^+ d = V S^-1 U' d (least squares on L), energy = |v|^2,
  // lambda = (L')^+ v = U S^-1 V' v. The small singular values are the factor's own, accurate
  // to about u sigma_max, where an explicit W_r^-1 would lose them at u lambda_max.
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(factor.L, Eigen::ComputeThinU | Eigen::ComputeThinV);
  const Eigen::VectorXd v = svd.solve(d);
  r.costate = svd.matrixU() * (svd.matrixV().transpose() * v).cwiseQuotient(svd.singularValues());
  r.energy = v.squaredNorm();

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
    // The engine's state simulator on the plant and costate together, z = [x/sx; p/sp0]:
    // z' = [[A, (sp0/sx) B B'], [0, -A']] z, with the energy as its running cost.
    auto w = std::make_shared<ReplayWork>(sys);
    StateSimulation sim;
    sim.plant.states = 2 * n;
    sim.plant.A = [w, n, sx, sp0](double t, MatrixRef z) {
      w->sys->A(t, w->a);
      w->sys->B(t, w->b);
      z.setZero();
      z.topLeftCorner(n, n) = w->a;
      z.topRightCorner(n, n).noalias() = (sp0 / sx) * (w->b * w->b.transpose());
      z.bottomRightCorner(n, n) = -w->a.transpose();
    };
    sim.plant.breakpoints = sys.breakpoints_between(t0, t1);
    sim.plant.label = "transfer replay";
    sim.running_cost = [w, n, sp0, se](double t, const Eigen::VectorXd& z, const Eigen::VectorXd&) {
      w->sys->B(t, w->b);
      w->u.noalias() = w->b.transpose() * z.tail(n);  // scaled by sp0
      return sp0 * sp0 * w->u.squaredNorm() / se;
    };
    Eigen::VectorXd z0(2 * n);
    z0 << options.x0 / sx, p[0] / sp0;
    const SimulationResult run = simulate_states(sim, t0, z0, {t1}, oo);
    r.replay_steps += run.stats.steps;
    r.x_final = run.states.row(0).head(n).transpose() * sx;
    r.energy_replayed = run.cost(0) * se;
    r.final_error = (r.x_final - options.xf).norm();
  }
  // Replay 2: the sampled history, linearly interpolated between the sample times (the
  // simulator restarts at each sample, where the interpolant kinks).
  {
    StateSimulation sim;
    sim.plant = linear_plant(sys, t0, t1);
    sim.plant.label = "sampled-input replay";
    sim.input.samples.times = sweep.times;
    sim.input.samples.values = r.inputs / sx;
    sim.input.samples.interpolation = SampleInterpolation::Linear;
    const SimulationResult run = simulate_states(sim, t0, options.x0 / sx, {t1}, oo);
    r.replay_steps += run.stats.steps;
    r.final_error_sampled = (run.states.row(0).transpose() * sx - options.xf).norm();
  }
  return r;
}

}  // namespace ordex
