#include "propagation/propagate_report.hpp"

#include <cmath>
#include <complex>
#include <iomanip>
#include <sstream>

#include "io/errors.hpp"
#include "model/report_text.hpp"
#include "model/time_grid.hpp"
#include "propagation/propagator.hpp"

namespace ordex {

void PropagateOptions::validate() const {
  propagation.validate();
  if (samples != 0 && (samples < 2 || samples > kMaxPropagateSamples))
    throw InputError("PropagateOptions::samples = " + std::to_string(samples) + " is neither 0 (no grid) nor in [2, " +
                     std::to_string(kMaxPropagateSamples) + "]");
}

double floquet_window_end(const System& sys, double t0) {
  const SystemInfo& info = sys.info();
  if (!info.period)
    throw InputError(info.source + ": system.period: the model declares no period, so it has no Floquet analysis");
  return t0 + *info.period;
}

PropagateReport propagate(const System& sys, double t0, double t1, const PropagateOptions& options,
                          const PhiSink& sink) {
  options.validate();
  if (!std::isfinite(t0) || !std::isfinite(t1))
    throw InputError("window [" + format_number(t0) + ", " + format_number(t1) + "] is not finite");
  if (options.floquet) {
    const double end = floquet_window_end(sys, t0);
    if (std::abs(t1 - end) > 1e-9 * std::max(1.0, std::abs(end)))
      throw InputError("PropagateOptions::floquet: the window [" + format_number(t0) + ", " + format_number(t1) +
                       "] is not one period from t0 (t1 = " + format_number(end) + ")");
  }
  sys.require_defined_on(t0, t1, "window");

  PropagateReport r;
  r.states = sys.info().state_names;
  Propagator prop(state_generator(sys, t0, t1), options.propagation);  // with the switching times in the window
  if (options.samples == 0) {
    r.phi = prop.transition(t0, t1);
  } else {
    const std::vector<double> times = linspace(t0, t1, options.samples);
    if (sink) {
      prop.transition_on_grid(t0, times, [&](std::size_t k, const Eigen::MatrixXd& phi) {
        sink(k, times[k], phi);
        ++r.samples_streamed;
        if (k + 1 == times.size()) r.phi = phi;
      });
    } else {
      r.sample_times = times;
      r.sample_phi = prop.transition_on_grid(t0, times);
      r.phi = r.sample_phi.back();
    }
  }
  r.stats = prop.stats();
  r.header = report_header(sys, t0, t1, method_name(r.stats.method));
  if (options.liouville)
    r.liouville = liouville_check(prop.generator(), t0, t1, r.phi, 1e-12, r.stats.error_estimate);
  r.notes = prop.generator().notes;
  if (options.floquet) r.floquet = floquet_analysis(r.phi, t1 - t0);
  return r;
}

namespace {

Json liouville_json(const LiouvilleReport& l) {
  return {{"det_phi", number_to_json(l.det_phi)},
          {"exp_integral_trace", number_to_json(l.exp_integral_trace)},
          {"relative_difference", number_to_json(l.relative_difference)},
          {"log_abs_det", number_to_json(l.log_abs_det)},
          {"integral_trace", number_to_json(l.integral_trace)},
          {"log_difference", number_to_json(l.log_difference)},
          {"tolerance", number_to_json(l.tolerance)},
          {"condition", number_to_json(l.condition)},
          {"meaningful", l.meaningful},
          {"passed", l.passed},
          {"note", l.note},
          {"trace_evaluations", l.trace_evaluations}};
}

Json floquet_json(const FloquetReport& f) {
  Json mult = Json::array(), expo = Json::array();
  for (Eigen::Index k = 0; k < f.multipliers.size(); ++k) {
    const auto mu = f.multipliers(k);
    const auto ex = f.exponents(k);
    mult.push_back({{"re", mu.real()}, {"im", mu.imag()}, {"abs", std::abs(mu)}});
    expo.push_back({{"re", ex.real()}, {"im", ex.imag()}});
  }
  return {{"period", f.period}, {"multipliers", mult}, {"exponents", expo}, {"stable", f.stable}};
}

}  // namespace

Json PropagateReport::to_json() const {
  Json j = header.to_json();
  j["states"] = states;
  j["steps"] = stats.steps;
  j["rejected_steps"] = stats.rejected_steps;
  j["matrix_evaluations"] = stats.evaluations;
  j["phi"] = ordex::to_json(phi);
  j["error_estimate"] = number_to_json(stats.error_estimate);
  if (liouville) j["liouville"] = liouville_json(*liouville);
  if (floquet) j["floquet"] = floquet_json(*floquet);
  if (!notes.empty()) j["notes"] = notes;
  return j;
}

std::string PropagateReport::brief() const {
  std::ostringstream out;
  out << "Model: " << (header.title.empty() ? header.source : header.title) << "\n";
  out << "Window: t0 = " << format_number(header.t0) << ", t1 = " << format_number(header.t1) << "\n";
  out << "Method: " << header.method << ", " << stats.steps << " steps (" << stats.rejected_steps << " rejected), "
      << stats.evaluations << " evaluations of A(t)\n";
  if (static_cast<int>(states.size()) <= kBriefMaxStates) {
    out << "Transition matrix Phi(t1, t0), rows and columns in state order ";
    for (std::size_t k = 0; k < states.size(); ++k) out << (k ? "," : "") << states[k];
    out << ":\n";
  } else {
    out << "Transition matrix Phi(t1, t0) of " << states.size() << " states, in brief:\n";
  }
  out << matrix_brief(phi, "phi", states, states);
  out << std::scientific << std::setprecision(2);
  out << "Estimated largest error in Phi: " << stats.error_estimate << "\n";
  if (liouville) {
    const LiouvilleReport& l = *liouville;
    out << std::setprecision(10) << "Liouville check: log|det Phi| = " << l.log_abs_det
        << ", integral of trace = " << l.integral_trace << std::setprecision(2);
    if (l.meaningful)
      out << ", difference " << std::abs(l.log_difference) << " (tolerance " << l.tolerance << ")"
          << (l.passed ? "" : " -- NOT within tolerance");
    out << "\n";
    if (!l.note.empty()) out << "  " << l.note << "\n";
  }
  if (floquet) {
    out << "Floquet analysis over one period T = " << std::setprecision(10) << floquet->period << ":\n";
    out << std::setprecision(8);
    const Eigen::Index n = floquet->multipliers.size();
    const Eigen::Index shown = n <= kBriefMaxStates ? n : 3;
    for (Eigen::Index k = 0; k < shown; ++k) {
      const auto mu = floquet->multipliers(k);
      const auto ex = floquet->exponents(k);
      out << "  multiplier " << std::setw(16) << mu.real() << (mu.imag() < 0 ? " - " : " + ") << std::abs(mu.imag())
          << "i   |mu| = " << std::abs(mu) << "   exponent " << ex.real() << (ex.imag() < 0 ? " - " : " + ")
          << std::abs(ex.imag()) << "i\n";
    }
    if (shown < n)
      out << "  ... " << n - shown << " more multipliers, down to |mu| = " << std::abs(floquet->multipliers(n - 1))
          << " (all in the JSON summary)\n";
    out << "  "
        << (floquet->stable ? "asymptotically stable (every |mu| < 1)" : "not asymptotically stable (some |mu| >= 1)")
        << "\n";
  }
  for (const std::string& note : notes) out << "Note: " << note << "\n";
  return out.str();
}

}  // namespace ordex
