#include "propagation/propagate_report.hpp"

#include <cmath>
#include <complex>
#include <iomanip>

#include "io/errors.hpp"
#include "propagation/propagator.hpp"

namespace ordex {

PropagateReport propagate_model(const System& sys, double t0, double t1,
                                const std::vector<double>& samples, const PropagationOptions& options,
                                const PropagateRequest& request) {
  PropagateReport r;
  r.t0 = t0;
  r.t1 = t1;
  Propagator prop(state_generator(sys), options);
  r.sample_times = samples;
  if (r.sample_times.empty() || r.sample_times.back() != t1) r.sample_times.push_back(t1);
  r.sample_phi = prop.transition_on_grid(t0, r.sample_times);
  r.phi = r.sample_phi.back();
  r.stats = prop.stats();
  r.liouville = liouville_check(prop.generator(), t0, t1, r.phi);
  if (request.floquet) r.floquet = floquet_analysis(r.phi, t1 - t0);
  return r;
}

Json propagate_report_json(const System& sys, const PropagateReport& r) {
  Json j;
  j["app"] = "ordex-propagate";
  j["model"] = sys.info().source;
  j["t0"] = r.t0;
  j["t1"] = r.t1;
  j["states"] = sys.info().state_names;
  j["method"] = method_name(r.stats.method);
  j["steps"] = r.stats.steps;
  j["rejected_steps"] = r.stats.rejected_steps;
  j["matrix_evaluations"] = r.stats.evaluations;
  j["phi"] = to_json(r.phi);
  j["error_estimate"] = number_to_json(r.stats.error_estimate);
  j["liouville"] = {{"det_phi", number_to_json(r.liouville.det_phi)},
                    {"exp_integral_trace", number_to_json(r.liouville.exp_integral_trace)},
                    {"relative_difference", number_to_json(r.liouville.relative_difference)}};
  if (r.floquet) {
    Json mult = Json::array(), expo = Json::array();
    for (Eigen::Index k = 0; k < r.floquet->multipliers.size(); ++k) {
      auto mu = r.floquet->multipliers(k);
      auto ex = r.floquet->exponents(k);
      mult.push_back({{"re", mu.real()}, {"im", mu.imag()}, {"abs", std::abs(mu)}});
      expo.push_back({{"re", ex.real()}, {"im", ex.imag()}});
    }
    j["floquet"] = {{"period", r.floquet->period}, {"multipliers", mult}, {"exponents", expo},
                    {"stable", r.floquet->stable}};
  }
  return j;
}

void print_propagate_report(std::ostream& out, const System& sys, const PropagateReport& r) {
  const SystemInfo& info = sys.info();
  out << "Model: " << (info.title.empty() ? info.source : info.title) << "\n";
  out << "Window: t0 = " << format_number(r.t0) << ", t1 = " << format_number(r.t1) << "\n";
  out << "Method: " << method_name(r.stats.method) << ", " << r.stats.steps << " steps ("
      << r.stats.rejected_steps << " rejected), " << r.stats.evaluations << " evaluations of A(t)\n";
  out << "Transition matrix Phi(t1, t0), rows and columns in state order ";
  for (std::size_t k = 0; k < info.state_names.size(); ++k) out << (k ? "," : "") << info.state_names[k];
  out << ":\n";
  std::ios old(nullptr);
  old.copyfmt(out);
  out << std::scientific << std::setprecision(6);
  for (Eigen::Index i = 0; i < r.phi.rows(); ++i) {
    out << "  ";
    for (Eigen::Index j = 0; j < r.phi.cols(); ++j) out << std::setw(15) << r.phi(i, j);
    out << "\n";
  }
  out << std::setprecision(2);
  out << "Estimated largest error in Phi: " << r.stats.error_estimate << "\n";
  out << "Liouville check: det Phi = " << std::setprecision(10) << r.liouville.det_phi
      << ", exp(int trace A) = " << r.liouville.exp_integral_trace << std::setprecision(2)
      << ", relative difference " << r.liouville.relative_difference << "\n";
  if (r.floquet) {
    out << "Floquet analysis over one period T = " << std::setprecision(10) << r.floquet->period << ":\n";
    out << std::setprecision(8);
    for (Eigen::Index k = 0; k < r.floquet->multipliers.size(); ++k) {
      auto mu = r.floquet->multipliers(k);
      auto ex = r.floquet->exponents(k);
      out << "  multiplier " << std::setw(16) << mu.real() << (mu.imag() < 0 ? " - " : " + ")
          << std::abs(mu.imag()) << "i   |mu| = " << std::abs(mu) << "   exponent " << ex.real()
          << (ex.imag() < 0 ? " - " : " + ") << std::abs(ex.imag()) << "i\n";
    }
    out << "  " << (r.floquet->stable ? "asymptotically stable (every |mu| < 1)"
                                       : "not asymptotically stable (some |mu| >= 1)")
        << "\n";
  }
  out.copyfmt(old);
}

}  // namespace ordex
