#include "gramian/gramian.hpp"

#include <cmath>
#include <memory>

#include "gramian/gramian_lyapunov.hpp"
#include "gramian/gramian_sweep.hpp"
#include "io/errors.hpp"

namespace ordex {

std::string kind_name(GramianKind k) {
  switch (k) {
    case GramianKind::Controllability: return "controllability";
    case GramianKind::Reachability: return "reachability";
    case GramianKind::Observability: return "observability";
  }
  return "controllability";
}

GramianKind parse_kind(const std::string& text) {
  if (text == "controllability") return GramianKind::Controllability;
  if (text == "reachability") return GramianKind::Reachability;
  if (text == "observability") return GramianKind::Observability;
  throw InputError("--kind: unknown kind '" + text +
                   "' (choose controllability, reachability or observability)");
}

std::string route_name(GramianRoute r) { return r == GramianRoute::Block ? "block" : "lyapunov"; }

GramianRoute parse_route(const std::string& text) {
  if (text == "block") return GramianRoute::Block;
  if (text == "lyapunov") return GramianRoute::Lyapunov;
  throw InputError("--route: unknown route '" + text + "' (choose block or lyapunov)");
}

Eigen::MatrixXd symmetrized(const Eigen::MatrixXd& w) { return 0.5 * (w + w.transpose()); }

namespace {

std::string model_name(const System& sys) {
  return sys.info().source.empty() ? std::string("model") : sys.info().source;
}

}  // namespace

WeightedPair input_pair(const System& sys) {
  if (sys.inputs() == 0)
    throw InputError(model_name(sys) + ": system.inputs: the model declares no inputs (no B), "
                     "so it has no controllability or reachability Gramian");
  const int n = sys.states(), m = sys.inputs();
  auto b = std::make_shared<Eigen::MatrixXd>(n, m);
  WeightedPair p;
  p.n = n;
  p.a = [&sys](double t, MatrixRef out) { sys.A(t, out); };
  p.q = [&sys, b](double t, MatrixRef out) {
    sys.B(t, *b);
    out.noalias() = (*b) * b->transpose();
  };
  p.breakpoints = sys.info().breakpoints;
  p.label = "(A, B B')";
  return p;
}

WeightedPair dual_output_pair(const System& sys) {
  if (sys.outputs() == 0)
    throw InputError(model_name(sys) + ": system.outputs: the model declares no outputs (no C), "
                     "so it has no observability Gramian");
  const int n = sys.states(), p_out = sys.outputs();
  auto a = std::make_shared<Eigen::MatrixXd>(n, n);
  auto c = std::make_shared<Eigen::MatrixXd>(p_out, n);
  WeightedPair p;
  p.n = n;
  p.a = [&sys, a](double t, MatrixRef out) {
    sys.A(t, *a);
    out = -a->transpose();
  };
  p.q = [&sys, c](double t, MatrixRef out) {
    sys.C(t, *c);
    out.noalias() = c->transpose() * (*c);
  };
  p.breakpoints = sys.info().breakpoints;
  p.label = "(-A', C' C)";
  return p;
}

WeightedPair pair_for_kind(const System& sys, GramianKind kind) {
  return kind == GramianKind::Observability ? dual_output_pair(sys) : input_pair(sys);
}

void GramianOptions::validate() const {
  propagation.validate();
  if (threads < 1 || threads > 64)
    throw InputError("--threads: " + std::to_string(threads) + " is outside [1, 64]");
}

GramianResult compute_gramian(const System& sys, double t0, double t1, const GramianOptions& options,
                              const std::vector<double>& grid) {
  options.validate();
  if (!std::isfinite(t0) || !std::isfinite(t1))
    throw InputError("Gramian window: --from and --to must be finite");
  if (!(t1 > t0))
    throw InputError("Gramian window: --to (" + format_number(t1) + ") must be after --from (" +
                     format_number(t0) + ")");
  GramianResult r;
  r.kind = options.kind;
  r.t0 = t0;
  r.t1 = t1;
  r.route = route_name(options.route);
  if (options.route == GramianRoute::Block) {
    std::vector<double> times = grid.empty() ? std::vector<double>{t0, t1} : grid;
    if (times.front() != t0 || times.back() != t1)
      throw InputError("Gramian grid: must run from --from to --to");
    GramianSweep sw = sweep_gramians(sys, options.kind, times, options.propagation, options.threads);
    r.gramian = options.kind == GramianKind::Reachability ? sw.compose_reachability(0, sw.intervals())
                : sw.running_valid_to == 0                  ? sw.cum_ctrl.back()
                                                            : sw.compose_controllability(0, sw.intervals());
    r.stats = sw.stats;
  } else {
    WeightedPair pair = pair_for_kind(sys, options.kind);
    OdeOptions o;
    o.scheme = options.propagation.method == Method::Bdf ? OdeScheme::Bdf : OdeScheme::Adams;
    o.rtol = options.propagation.rtol;
    o.atol = options.propagation.atol;
    o.max_steps = options.propagation.max_steps;
    OdeStats st;
    r.gramian = symmetrized(
        lyapunov_gramian(pair, t0, t1, options.kind == GramianKind::Reachability, o, &st));
    r.stats.method = options.propagation.method == Method::Bdf ? Method::Bdf : Method::Adams;
    r.stats.steps = st.steps;
    r.stats.rejected_steps = st.error_test_failures;
    r.stats.evaluations = st.rhs_evaluations;
  }
  if (!r.gramian.allFinite())
    throw NumericalError("Gramian over [" + format_number(t0) + ", " + format_number(t1) + "] is not finite");
  return r;
}

}  // namespace ordex
