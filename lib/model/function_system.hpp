#pragma once
// The C++ API: a user supplies A(t), B(t), C(t), D(t) as code and links the library.
//
//   ordex::FunctionSystem sys({"x", "v"});
//   sys.set_A([](double t, ordex::MatrixRef a) { a << 0, 1, -1 - 0.1 * std::cos(t), 0; });
//   sys.set_B({"f"}, [](double, ordex::MatrixRef b) { b << 0, 1; });
//
// Threads: the library calls these callbacks from one thread at a time unless
// set_concurrent_callbacks(true) allows more (modules that run threads on clones, such as the
// Gramian sweep and profile, then use one thread).
#include <functional>

#include "model/system.hpp"

namespace ordex {

class FunctionSystem : public System {
 public:
  using Fill = std::function<void(double t, MatrixRef out)>;

  explicit FunctionSystem(std::vector<std::string> state_names, std::string title = "");

  FunctionSystem& set_A(Fill a);
  FunctionSystem& set_B(std::vector<std::string> input_names, Fill b);
  FunctionSystem& set_C(std::vector<std::string> output_names, Fill c);
  FunctionSystem& set_D(Fill d);  ///< needs set_B and set_C first
  FunctionSystem& set_period(double period);
  FunctionSystem& set_breakpoints(std::vector<double> breakpoints);
  FunctionSystem& set_window(double from, double to);
  /// Declares that A, B, C, D do not depend on t (default: not declared).
  FunctionSystem& set_time_invariant(bool invariant);
  bool time_invariant() const override { return time_invariant_; }
  /// Allows modules to call the callbacks of this system's clones from several threads at
  /// once (default false: every callback is called from one thread at a time, so callbacks
  /// that share captured state need no locking). Set it only when the callbacks are safe to
  /// run concurrently (each clone holds copies of the std::function objects, which still
  /// share whatever they capture by reference or pointer).
  FunctionSystem& set_concurrent_callbacks(bool allowed);
  bool clones_may_run_concurrently() const override { return concurrent_; }

  void A(double t, MatrixRef out) const override;
  void B(double t, MatrixRef out) const override;
  void C(double t, MatrixRef out) const override;
  void D(double t, MatrixRef out) const override;
  std::unique_ptr<System> clone() const override;

  using System::A;
  using System::B;
  using System::C;
  using System::D;

 private:
  Fill a_, b_, c_, d_;
  bool time_invariant_ = false;
  bool concurrent_ = false;
};

}  // namespace ordex
