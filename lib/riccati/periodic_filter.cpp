#include "riccati/periodic_filter.hpp"

#include <algorithm>
#include <cmath>
#include <memory>

#include "io/errors.hpp"
#include "riccati/regulator.hpp"

namespace ordex {

void PeriodicFilterOptions::validate() const {
  riccati.validate();
  periodic.validate();
  if (samples < 2 || samples > 10000000)
    throw InputError("PeriodicFilterOptions::samples = " + std::to_string(samples) + " is outside [2, 10000000]");
}

namespace {

// The time-reversed dual plant: A_d(s) = A(-s)', B_d(s) = C(-s)' (the outputs become its inputs).
class DualSystem : public System {
 public:
  explicit DualSystem(const System& plant) : plant_(plant) { init(); }
  explicit DualSystem(std::unique_ptr<System> owned) : plant_(*owned), owned_(std::move(owned)) { init(); }

  void A(double s, MatrixRef out) const override {
    plant_.A(-s, a_);
    out = a_.transpose();
  }
  void B(double s, MatrixRef out) const override {
    plant_.C(-s, c_);
    out = c_.transpose();
  }
  void C(double, MatrixRef) const override {}
  void D(double, MatrixRef) const override {}
  std::unique_ptr<System> clone() const override { return std::make_unique<DualSystem>(plant_.clone()); }
  bool clones_may_run_concurrently() const override { return plant_.clones_may_run_concurrently(); }
  bool time_invariant() const override { return plant_.time_invariant(); }
  void check_finite_at(double s) const override { plant_.check_finite_at(-s); }
  std::string diagnose_entries(double s, double direction) const override {
    return plant_.diagnose_entries(-s, -direction);
  }

 private:
  void init() {
    const SystemInfo& p = plant_.info();
    info_.title = p.title.empty() ? "dual of the plant" : "dual of " + p.title;
    info_.source = p.source;
    info_.state_names = p.state_names;
    info_.input_names = p.output_names;
    info_.period = p.period;
    for (double t : p.breakpoints) info_.breakpoints.push_back(-t);
    std::sort(info_.breakpoints.begin(), info_.breakpoints.end());
    if (p.defined_span) info_.defined_span = std::make_pair(-p.defined_span->second, -p.defined_span->first);
    info_.defined_by = p.defined_by;
    info_.parameters = p.parameters;
    a_.resize(plant_.states(), plant_.states());
    c_.resize(plant_.outputs(), plant_.states());
  }

  const System& plant_;
  std::unique_ptr<System> owned_;
  mutable Eigen::MatrixXd a_, c_;
};

// W evaluated at -s.
WeightMatrix reversed(const WeightMatrix& w) {
  if (w.is_constant()) return WeightMatrix::constant(w.at(0.0), w.name());
  const WeightMatrix* src = &w;
  return WeightMatrix::function(w.rows(), w.cols(), [src](double s, MatrixRef out) { src->eval(-s, out); }, w.name());
}

}  // namespace

PeriodicFilterSolution periodic_filter(const System& sys, double t0, const WeightMatrix& process,
                                       const WeightMatrix& measurement, const PeriodicFilterOptions& options) {
  options.validate();
  const int n = sys.states(), p = sys.outputs();
  if (p < 1) throw InputError(sys.info().source + ": the model has no outputs; a filter needs C");
  if (process.rows() != n || process.cols() != n)
    throw InputError(process.name() + ": the process noise intensity is " + std::to_string(process.rows()) + " x " +
                     std::to_string(process.cols()) + ", expected " + std::to_string(n) + " x " + std::to_string(n));
  if (measurement.rows() != p || measurement.cols() != p)
    throw InputError(measurement.name() + ": the measurement noise intensity is " + std::to_string(measurement.rows()) +
                     " x " + std::to_string(measurement.cols()) + ", expected " + std::to_string(p) + " x " +
                     std::to_string(p));
  if (!sys.info().period)
    throw InputError(sys.info().source + ": the model declares no period ([system] period); the periodic filter needs one");
  const double T = *sys.info().period;
  const DualSystem dual(sys);
  Weights w = default_weights(n, p);
  w.source = "filter noise";
  w.Q = reversed(process);
  w.R = reversed(measurement);
  // The dual's period in s is [-(t0 + T), -t0].
  const double s0 = -(t0 + T);
  PeriodicFilterSolution f;
  f.t0 = t0;
  f.period = T;
  f.steady = periodic_steady_state(dual, w, s0, options.riccati, options.periodic, PeriodicRole::Filter);
  RegulatorOptions ro;
  ro.riccati = options.riccati;
  ro.samples = options.samples;
  w.Qf = WeightMatrix::constant(f.steady.P0, "periodic P");
  ro.weights = w;
  const RegulatorReport r = regulate(dual, s0, s0 + T, ro);
  // Back to t = -s, ascending.
  const std::size_t count = r.times.size();
  for (std::size_t k = count; k-- > 0;) {
    f.times.push_back(-r.times[k]);
    f.P.push_back(r.P[k]);
    f.L.push_back(r.gains[k].transpose());
  }
  f.times.front() = t0;  // exactly (-(-t0) may differ in the last bit from t0 after s0 + T)
  f.times.back() = t0 + T;
  f.P0 = f.P.front();
  f.L0 = f.L.front();
  if (!r.closed_loop.floquet)
    throw NumericalError("the closed loop of the periodic filter could not be checked: " + r.closed_loop.reason);
  f.closed_loop = r.closed_loop.floquet->floquet;
  if (!f.closed_loop.stable)
    throw NumericalError("no stabilizing periodic solution of the filter: A - L C keeps the Floquet multiplier of "
                         "modulus " + format_number(f.closed_loop.largest_modulus) +
                         " outside the unit circle (not detectable or not stabilizable from the noise)" +
                         (f.steady.note.empty() ? "" : "; " + f.steady.note));
  f.open_loop = f.steady.open_loop;
  return f;
}

}  // namespace ordex
