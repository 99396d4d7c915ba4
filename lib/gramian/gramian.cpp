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
  throw InputError("GramianOptions::kind: unknown kind '" + text +
                   "' (choose controllability, reachability or observability)");
}

std::string route_name(GramianRoute r) { return r == GramianRoute::Block ? "block" : "lyapunov"; }

GramianRoute parse_route(const std::string& text) {
  if (text == "block") return GramianRoute::Block;
  if (text == "lyapunov") return GramianRoute::Lyapunov;
  throw InputError("GramianOptions::route: unknown route '" + text + "' (choose block or lyapunov)");
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
  if (scaling.mode == ScalingMode::Units && scaling.units.size() == 0)
    throw InputError("GramianOptions::scaling.units: empty (give one scale per state)");
  if (threads < 1 || threads > 64)
    throw InputError("GramianOptions::threads = " + std::to_string(threads) + " is outside [1, 64]");
}

GramianResult gramian_from_sweep(const GramianSweep& sw, GramianKind kind) {
  GramianResult r;
  r.kind = kind;
  r.t0 = sw.times.front();
  r.t1 = sw.times.back();
  r.route = route_name(GramianRoute::Block);
  // Square-root form (spectrum.hpp): positive semidefinite by construction.
  r.factor = kind == GramianKind::Reachability ? sw.reachability_factor(0, sw.intervals())
                                               : sw.controllability_factor(0, sw.intervals());
  r.gramian = r.factor.product();
  r.stats = sw.stats;
  return r;
}

GramianResult compute_gramian(const System& sys, double t0, double t1, const GramianOptions& options,
                              const std::vector<double>& grid) {
  options.validate();
  if (!std::isfinite(t0) || !std::isfinite(t1))
    throw InputError("Gramian window [" + format_number(t0) + ", " + format_number(t1) + "] is not finite");
  if (!(t1 > t0))
    throw InputError("Gramian window [" + format_number(t0) + ", " + format_number(t1) +
                     "]: t1 must be after t0");
  options.scaling.validate(sys.states());
  GramianResult r;
  r.kind = options.kind;
  r.t0 = t0;
  r.t1 = t1;
  r.route = route_name(options.route);
  if (options.route == GramianRoute::Block) {
    std::vector<double> times = grid.empty() ? std::vector<double>{t0, t1} : grid;
    if (times.front() != t0 || times.back() != t1)
      throw InputError("Gramian grid: must run from t0 to t1");
    r = gramian_from_sweep(sweep_gramians(sys, options.kind, times, options.propagation, options.threads),
                           options.kind);
  } else {
    WeightedPair pair = pair_for_kind(sys, options.kind);
    pair.breakpoints = sys.breakpoints_between(t0, t1);  // with the switching times in the window
    pair.breakpoints.insert(pair.breakpoints.end(), {t0, t1});  // never step past the ends (riccati_ode.cpp)
    const OdeOptions o = ode_options(options.propagation, OdeScheme::Adams);
    OdeStats st;
    // The ODE's solution need not be semidefinite: its graded factor drops the negative part
    // and records its size as the route's error (GramianFactor::graded_error).
    r.factor = psd_factor(lyapunov_gramian(pair, t0, t1, options.kind == GramianKind::Reachability, o, &st));
    r.gramian = r.factor.product();
    r.stats.method = method_of(o.scheme);
    r.stats.steps = st.steps;
    r.stats.rejected_steps = st.error_test_failures;
    r.stats.evaluations = st.rhs_evaluations;
  }
  if (!r.gramian.allFinite())
    throw NumericalError("Gramian over [" + format_number(t0) + ", " + format_number(t1) + "] is not finite");
  return r;
}

}  // namespace ordex
