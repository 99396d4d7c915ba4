#include "propagation/generator.hpp"

#include <algorithm>
#include <exception>
#include <memory>

namespace ordex {

Generator state_generator(const System& sys) {
  Generator g;
  g.dim = sys.states();
  const System* s = &sys;
  g.eval = [s](double t, MatrixRef out) { s->A(t, out); };
  g.breakpoints = sys.info().breakpoints;
  g.period = sys.info().period;
  g.label = "A(t)";
  g.diagnose = [s](double t, double direction) { return s->diagnose_entries(t, direction); };
  if (sys.clones_may_run_concurrently()) {
    g.fork = [s]() {
      std::shared_ptr<const System> own(s->clone());  // kept alive by the functions below
      Generator h;
      h.dim = own->states();
      h.eval = [own](double t, MatrixRef out) { own->A(t, out); };
      h.diagnose = [own](double t, double direction) { return own->diagnose_entries(t, direction); };
      return h;
    };
  }
  return g;
}

Generator state_generator(const System& sys, double t0, double t1) {
  Generator g = state_generator(sys);
  add_switching_times(g, sys, t0, t1);
  return g;
}

void add_switching_times(Generator& g, const System& sys, double t0, double t1) {
  const std::vector<double> found = sys.switching_times(std::min(t0, t1), std::max(t0, t1), &g.notes);
  if (found.empty()) return;
  g.breakpoints.insert(g.breakpoints.end(), found.begin(), found.end());
  std::sort(g.breakpoints.begin(), g.breakpoints.end());
  g.breakpoints.erase(std::unique(g.breakpoints.begin(), g.breakpoints.end()), g.breakpoints.end());
}

std::string with_diagnosis(const Generator& g, double t, double direction, const std::string& message) {
  if (!g.diagnose) return message;
  std::string d;
  try {
    d = g.diagnose(t, direction);
  } catch (const std::exception&) {
    return message;
  }
  return d.empty() ? message : d + " (" + message + ")";
}

}  // namespace ordex
