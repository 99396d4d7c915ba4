#include "propagation/generator.hpp"

namespace ordex {

Generator state_generator(const System& sys) {
  Generator g;
  g.dim = sys.states();
  const System* s = &sys;
  g.eval = [s](double t, MatrixRef out) { s->A(t, out); };
  g.breakpoints = sys.info().breakpoints;
  g.period = sys.info().period;
  g.label = "A(t)";
  return g;
}

}  // namespace ordex
