#include "riccati/periodic_regulator.hpp"

#include <iomanip>
#include <sstream>

#include "io/errors.hpp"

namespace ordex {

Json multipliers_json(const Eigen::VectorXcd& mu) {
  Json a = Json::array();
  for (Eigen::Index i = 0; i < mu.size(); ++i)
    a.push_back({{"re", mu(i).real()}, {"im", mu(i).imag()}, {"abs", std::abs(mu(i))}});
  return a;
}

PeriodicRegulatorReport regulate_periodic(const System& sys, double t0, const RegulatorOptions& options,
                                          const PeriodicOptions& periodic) {
  options.validate();
  const int n = sys.states(), m = sys.inputs();
  if (m < 1) throw InputError(sys.info().source + ": the model has no inputs; a regulator needs B");
  Weights w = options.weights ? *options.weights : default_weights(n, m);
  PeriodicRegulatorReport r;
  r.steady = periodic_steady_state(sys, w, t0, options.riccati, periodic, PeriodicRole::Regulator);
  // The schedule over one period from the periodic terminal value: the regulator job itself.
  RegulatorOptions one = options;
  w.Qf = WeightMatrix::constant(r.steady.P0, "periodic P(t0)");
  one.weights = w;
  one.check_closed_loop = true;  // the multipliers are part of the answer, and its proof
  r.regulator = regulate(sys, t0, t0 + r.steady.period, one);
  const auto& f = r.regulator.closed_loop.floquet;
  if (f && !f->floquet.stable)
    throw NumericalError("no stabilizing periodic solution: the periodic solution found leaves the closed-loop "
                         "Floquet multiplier " + format_number(std::abs(f->floquet.multipliers(0))) +
                         " (modulus) outside the unit circle (not stabilizable or not detectable)" +
                         (r.steady.note.empty() ? "" : "; " + r.steady.note));
  return r;
}

Json PeriodicRegulatorReport::to_json() const {
  Json j = regulator.to_json();
  j["mode"] = "periodic";
  Json p;
  p["period"] = steady.period;
  p["passes"] = steady.passes;
  p["periodicity_gap"] = steady.gap;
  p["first_periodicity_gap"] = steady.first_gap;
  p["x1_rcond"] = steady.x1_rcond;
  p["imaginary_part"] = steady.imaginary_part;
  p["asymmetry"] = steady.asymmetry;
  p["monodromy_norm"] = number_to_json(steady.monodromy_norm);
  p["hamiltonian_multipliers"] = multipliers_json(steady.hamiltonian_multipliers);
  if (!steady.note.empty()) p["note"] = steady.note;
  j["periodic"] = p;
  j["open_loop_floquet"] = {{"period", steady.open_loop.period},
                            {"multipliers", multipliers_json(steady.open_loop.multipliers)},
                            {"stable", steady.open_loop.stable}};
  return j;
}

std::string PeriodicRegulatorReport::brief() const {
  std::ostringstream out;
  out << std::setprecision(8);
  out << "periodic steady-state regulator, period " << steady.period << " from t0 = " << steady.t0 << "\n";
  out << "P(t0) from the stable subspace of the Hamiltonian monodromy (X1 reciprocal condition "
      << std::setprecision(3) << steady.x1_rcond << "); after one period back it returns within "
      << steady.gap << " (relative; " << steady.passes << " pass" << (steady.passes > 1 ? "es" : "") << ")\n"
      << std::setprecision(8);
  if (!steady.note.empty()) out << "note: " << steady.note << "\n";
  out << "open-loop Floquet multipliers: |mu| max " << steady.open_loop.largest_modulus << " ("
      << (steady.open_loop.stable ? "stable" : "not stable") << ")\n";
  std::string rest = regulator.brief();
  const std::string finite = "finite-horizon regulator";
  if (rest.compare(0, finite.size(), finite) == 0) rest.replace(0, finite.size(), "gain schedule over one period");
  out << rest;
  return out.str();
}

}  // namespace ordex
