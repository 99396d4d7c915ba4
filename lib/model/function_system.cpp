#include "model/function_system.hpp"

#include <algorithm>

#include "io/errors.hpp"

namespace ordex {

FunctionSystem::FunctionSystem(std::vector<std::string> state_names, std::string title) {
  if (state_names.empty()) throw InputError("FunctionSystem: at least one state is needed");
  info_.state_names = std::move(state_names);
  info_.title = std::move(title);
  info_.source = "code";
}

FunctionSystem& FunctionSystem::set_A(Fill a) { a_ = std::move(a); return *this; }
FunctionSystem& FunctionSystem::set_B(std::vector<std::string> names, Fill b) {
  info_.input_names = std::move(names);
  b_ = std::move(b);
  return *this;
}
FunctionSystem& FunctionSystem::set_C(std::vector<std::string> names, Fill c) {
  info_.output_names = std::move(names);
  c_ = std::move(c);
  return *this;
}
FunctionSystem& FunctionSystem::set_D(Fill d) { d_ = std::move(d); return *this; }
FunctionSystem& FunctionSystem::set_period(double p) {
  if (!(p > 0)) throw InputError("FunctionSystem: the period must be positive");
  info_.period = p;
  return *this;
}
FunctionSystem& FunctionSystem::set_breakpoints(std::vector<double> bp) {
  std::sort(bp.begin(), bp.end());
  info_.breakpoints = std::move(bp);
  return *this;
}
FunctionSystem& FunctionSystem::set_window(double from, double to) {
  info_.window = std::make_pair(from, to);
  return *this;
}

void FunctionSystem::A(double t, MatrixRef out) const {
  if (!a_) throw InputError("FunctionSystem: A(t) was not set");
  a_(t, out);
}
void FunctionSystem::B(double t, MatrixRef out) const {
  if (!b_) throw InputError("FunctionSystem: B(t) was not set");
  b_(t, out);
}
void FunctionSystem::C(double t, MatrixRef out) const {
  if (!c_) throw InputError("FunctionSystem: C(t) was not set");
  c_(t, out);
}
void FunctionSystem::D(double t, MatrixRef out) const {
  if (d_) d_(t, out);
  else out.setZero();
}

FunctionSystem& FunctionSystem::set_concurrent_callbacks(bool allowed) {
  concurrent_ = allowed;
  return *this;
}

FunctionSystem& FunctionSystem::set_time_invariant(bool invariant) {
  time_invariant_ = invariant;
  return *this;
}

std::unique_ptr<System> FunctionSystem::clone() const {
  return std::make_unique<FunctionSystem>(*this);
}

}  // namespace ordex
