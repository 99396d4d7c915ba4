#include "riccati/periodic_riccati.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <memory>
#include <sstream>

#include "io/errors.hpp"
#include "model/time_grid.hpp"
#include "propagation/propagator.hpp"
#include "riccati/periodic_subspace.hpp"
#include "riccati/riccati_routes.hpp"

namespace ordex {

void PeriodicOptions::validate() const {
  if (!(unit_margin > 0 && unit_margin <= 0.1))
    throw InputError("PeriodicOptions::unit_margin = " + format_number(unit_margin) + " is outside (0, 0.1]");
  if (!(periodicity_tolerance >= 1e-13 && periodicity_tolerance <= 0.1))
    throw InputError("PeriodicOptions::periodicity_tolerance = " + format_number(periodicity_tolerance) +
                     " is outside [1e-13, 0.1]");
  if (max_passes < 1 || max_passes > 10000)
    throw InputError("PeriodicOptions::max_passes = " + std::to_string(max_passes) + " is outside [1, 10000]");
}

namespace {

std::string complex_text(std::complex<double> z) {
  std::ostringstream s;
  s << format_number(z.real());
  if (z.imag() != 0) s << (z.imag() < 0 ? " - " : " + ") << format_number(std::abs(z.imag())) << "i";
  s << " (|mu| = " << format_number(std::abs(z)) << ")";
  return s.str();
}

// The open-loop multiplier nearest to Z (the plant's own, as the user knows them).
std::complex<double> nearest(const Eigen::VectorXcd& mus, std::complex<double> z) {
  std::complex<double> best = z;
  double d = INFINITY;
  for (Eigen::Index i = 0; i < mus.size(); ++i)
    if (std::abs(mus(i) - z) < d) {
      d = std::abs(mus(i) - z);
      best = mus(i);
    }
  return best;
}

std::string words_cannot(PeriodicRole role) {
  return role == PeriodicRole::Regulator
             ? "the inputs cannot move it (not stabilizable: the mode is uncontrollable)"
             : "the outputs cannot see it (not detectable: the mode is unobservable)";
}

// X1 singular: the stable subspace holds a vector [0; lambda] (a costate that the inputs never
// reach). Its multiplier nu = z^H M z for the unit null direction z is the inverse of the plant's
// unstable multiplier that cannot be moved.
[[noreturn]] void throw_not_stabilizable(const StableSubspace& s, const Eigen::MatrixXd& M,
                                         const FloquetReport& open_loop, PeriodicRole role) {
  const Eigen::Index n = s.basis.cols();
  Eigen::JacobiSVD<Eigen::MatrixXcd> svd(s.basis.topRows(n), Eigen::ComputeFullV);
  const Eigen::VectorXcd v = svd.matrixV().col(n - 1);
  const Eigen::VectorXcd z = s.basis * v;
  const std::complex<double> nu = z.dot(M.cast<std::complex<double>>() * z) / z.squaredNorm();
  const std::complex<double> mu = nearest(open_loop.multipliers, 1.0 / nu);
  throw NumericalError("no stabilizing periodic solution: the open-loop Floquet multiplier " + complex_text(mu) +
                       " lies outside the unit circle and " + words_cannot(role) + "; X1 of the stable subspace is "
                       "singular (reciprocal condition " + format_number(s.x1_rcond) + ")");
}

[[noreturn]] void throw_on_circle(const StableSubspace& s, const FloquetReport& open_loop, PeriodicRole role, double margin) {
  std::string list;
  int shown = 0;
  for (Eigen::Index i = 0; i < s.eigenvalues.size() && shown < 4; ++i) {
    const double r = std::abs(s.eigenvalues(i));
    if (r >= 1.0 - margin && r <= 1.0 + margin) {
      list += (shown ? ", " : "") + complex_text(nearest(open_loop.multipliers, s.eigenvalues(i)));
      ++shown;
    }
  }
  throw NumericalError("no stabilizing periodic solution: " + std::to_string(s.on_circle) +
                       " multipliers of the Hamiltonian monodromy lie on the unit circle (within " +
                       format_number(margin) + "): the open-loop Floquet multiplier " + list +
                       " is on the unit circle and " +
                       (role == PeriodicRole::Regulator ? "either the inputs cannot move it or Q does not weigh it"
                                                        : "either the outputs cannot see it or the process noise does not excite it"));
}

double relative_gap(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  // Relative to the larger of the two, so that a start from P = 0 gives a gap of at most 1.
  const double scale = std::max({a.cwiseAbs().maxCoeff(), b.cwiseAbs().maxCoeff(), 1e-300});
  return (a - b).cwiseAbs().maxCoeff() / scale;
}

}  // namespace

PeriodicSteadyState periodic_steady_state(const System& sys, const Weights& w, double t0, const RiccatiOptions& riccati,
                                          const PeriodicOptions& options, PeriodicRole role) {
  options.validate();
  riccati.validate();
  const SystemInfo& info = sys.info();
  const int n = sys.states(), m = sys.inputs();
  if (!info.period)
    throw InputError(info.source + ": the model declares no period ([system] period); the periodic steady state needs one");
  if (m < 1)
    throw InputError(info.source + (role == PeriodicRole::Regulator ? ": the model has no inputs; a regulator needs B"
                                                                    : ": the model has no outputs; a filter needs C"));
  if (!std::isfinite(t0)) throw InputError("periodic steady state: t0 = " + format_number(t0) + " is not finite");
  const double T = *info.period, t1 = t0 + T;
  sys.require_defined_on(t0, t1, "the period from t0");
  check_weights(w, n, m, linspace(t0, t1, 101), t1, riccati.weight_check);

  PeriodicSteadyState st;
  st.t0 = t0;
  st.period = T;

  // The plant's own multipliers, to name a mode in messages and for the report.
  // (An open loop that overflows over one period is reported with no multipliers.)
  try {
    Propagator plant(state_generator(sys), riccati.propagation);
    st.open_loop = floquet_analysis(plant.transition(t0, t1), T);
  } catch (const NumericalError&) {
    st.open_loop.period = T;
    st.open_loop.largest_modulus = INFINITY;
    st.open_loop.stable = false;
  }

  // 1. The Hamiltonian's monodromy and its stable subspace.
  PropagationOptions engine = riccati.propagation;
  engine.progress = {};
  engine.use_period = false;  // one period only
  Propagator prop(riccati_detail::hamiltonian_generator(sys, w, t0, t1, "periodic Riccati Hamiltonian"), engine);
  // Over a long period the monodromy can overflow (its entries grow like exp(2 |lambda| T)); the
  // passes from P = 0 below still reach the solution then, and the note says why they were used.
  Eigen::MatrixXd M;
  std::string overflow;
  try {
    M = prop.transition(t0, t1);
    if (!M.allFinite()) overflow = "it is not finite";
  } catch (const NumericalError& e) {
    overflow = e.what();
  }
  st.monodromy_stats = prop.stats();
  std::string fallback;
  if (!overflow.empty()) {
    st.monodromy_norm = INFINITY;
    st.P0_subspace = Eigen::MatrixXd::Zero(n, n);
    fallback = "the Hamiltonian monodromy over one period overflowed (" + overflow + "): P(t0) is the limit of "
               "backward passes over one period from P = 0, and stabilizability is judged by the closed loop it gives";
  } else {
    st.monodromy_norm = M.cwiseAbs().maxCoeff();
    const StableSubspace s = stable_subspace(M, options.unit_margin);
    st.hamiltonian_multipliers = s.eigenvalues;
    if (s.on_circle > 0) throw_on_circle(s, st.open_loop, role, options.unit_margin);
    // No multiplier near the circle but not n inside: the product is too ill-conditioned for double
    // precision to separate the stable multipliers (they are lost below round-off of the largest).
    const bool separated = s.inside == n;
    if (separated) {
      st.x1_rcond = s.x1_rcond;
      if (s.P.size() == 0) throw_not_stabilizable(s, M, st.open_loop, role);
      st.imaginary_part = s.imaginary_part;
      st.asymmetry = s.asymmetry;
      // P must be positive semidefinite; round-off may leave tiny negative eigenvalues, which are
      // set to zero so that the pass's terminal value passes the weights' check.
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(s.P);
      const double top = std::max(es.eigenvalues().cwiseAbs().maxCoeff(), 1e-300);
      st.smallest_eigenvalue = es.eigenvalues().minCoeff() / top;
      if (st.smallest_eigenvalue < -1e-6)
        throw NumericalError("the periodic solution from the stable subspace is not positive semidefinite (smallest "
                             "eigenvalue " + format_number(es.eigenvalues().minCoeff()) + ", largest " +
                             format_number(top) + "): the subspace is ill-determined; try tighter tolerances (--rtol)");
      st.P0_subspace = es.eigenvectors() * es.eigenvalues().cwiseMax(0.0).asDiagonal() * es.eigenvectors().transpose();
      st.P0_subspace = (0.5 * (st.P0_subspace + st.P0_subspace.transpose())).eval();
    } else {
      // The backward Riccati flow from P = 0 (the finite-horizon solution) tends to the stabilizing
      // solution when one exists; over a long period a few passes reach it. The caller checks that
      // the closed loop it gives is stable.
      st.P0_subspace = Eigen::MatrixXd::Zero(n, n);
      fallback = "the stable subspace of the Hamiltonian monodromy could not be separated in double precision (" +
                 std::to_string(s.inside) + " of " + std::to_string(2 * n) + " multipliers found inside the unit "
                 "circle, max |M| = " + format_number(st.monodromy_norm) + "): P(t0) is the limit of backward passes "
                 "over one period from P = 0, and stabilizability is judged by the closed loop it gives";
    }
  }

  // 2. Backward passes over one period until P(t0) comes back to itself.
  Weights pass = w;
  Eigen::MatrixXd P = st.P0_subspace;
  const std::vector<double> ends{t0, t1};
  for (int k = 1; k <= options.max_passes; ++k) {
    pass.Qf = WeightMatrix::constant(P, "periodic P(t0)");
    const RiccatiSolution sol = solve_riccati(sys, pass, ends, riccati);
    Eigen::MatrixXd back = sol.P.front();
    back = (0.5 * (back + back.transpose())).eval();
    const double gap = relative_gap(back, P);
    if (k == 1) st.first_gap = gap;
    st.passes = k;
    st.gap = gap;
    if (gap <= options.periodicity_tolerance) break;
    P = back;
  }
  if (st.gap > options.periodicity_tolerance)
    throw NumericalError("the periodic solution does not return to itself after one period: relative gap " +
                         format_number(st.gap) + " after " + std::to_string(st.passes) +
                         " backward passes (first " + format_number(st.first_gap) +
                         "; tolerance PeriodicOptions::periodicity_tolerance = " +
                         format_number(options.periodicity_tolerance) + ")" +
                         (fallback.empty() ? std::string()
                                           : "; " + fallback + " (a P that keeps growing from pass to pass means a mode "
                                             "that cannot be stabilized: not stabilizable or not detectable)"));
  st.P0 = P;
  if (!fallback.empty())
    st.note = fallback;
  else if (st.passes > 1)
    st.note = "the stable subspace of the Hamiltonian monodromy was ill-determined (periodicity gap " +
              format_number(st.first_gap) + ", max |M| = " + format_number(st.monodromy_norm) +
              "); P(t0) was refined by " + std::to_string(st.passes - 1) + " backward passes over one period";
  return st;
}

}  // namespace ordex
