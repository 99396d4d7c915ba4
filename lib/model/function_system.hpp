#pragma once
// The C++ API: a user supplies A(t), B(t), C(t), D(t) as code and links the library.
//
//   ordex::FunctionSystem sys({"x", "v"});
//   sys.set_A([](double t, ordex::MatrixRef a) { a << 0, 1, -1 - 0.1 * std::cos(t), 0; });
//   sys.set_B({"f"}, [](double, ordex::MatrixRef b) { b << 0, 1; });
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
};

}  // namespace ordex
