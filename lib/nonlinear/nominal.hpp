#pragma once
// The nominal state trajectory x_n(t) a nonlinear plant is linearized about: integrated from
// x_n(t0) with the nominal input by the engine's ODE integrator (CVODE) and kept as dense output
// (cubic Hermite between CVODE's accepted steps, from the states and f at both ends), or read
// from a CSV (the model's table interpolation). Immutable once built: safe to share across
// threads.
#include <Eigen/Dense>
#include <memory>
#include <vector>

#include "model/time_table.hpp"
#include "nonlinear/plant_evaluator.hpp"
#include "propagation/ode_integrator.hpp"

namespace ordex {

class NominalStates {
 public:
  /// Integrates x' = f(x, u_n(t), t) from X0 at T0 to T1 (T1 > T0) with PLANT, at tolerances a
  /// hundred times tighter than OPTIONS' (no tighter than 1e-13 relative) and steps of at most
  /// 1/2000 of the window, so that the Hermite dense output stays below the engine's own
  /// tolerances. Integration restarts at BREAKPOINTS. Throws NumericalError on failure.
  static std::shared_ptr<const NominalStates> integrate(PlantEvaluator& plant, const Eigen::VectorXd& x0, double t0,
                                                        double t1, const OdeOptions& options,
                                                        const std::vector<double>& breakpoints);
  /// The states of a trajectory CSV (TABLE, columns COLUMNS[i] for state i).
  static std::shared_ptr<const NominalStates> from_table(std::shared_ptr<const TimeTable> table,
                                                         std::vector<int> columns);

  /// x_n(T) into X (n values). T is clamped to the span. Allocates nothing; thread-safe.
  void state(double t, double* x) const;
  double first_time() const { return t0_; }
  double last_time() const { return t1_; }
  int states() const { return n_; }
  /// Knots of the dense output (CVODE's accepted steps), or the CSV's rows.
  std::size_t knots() const { return times_.size(); }

 private:
  int n_ = 0;
  double t0_ = 0, t1_ = 0;
  // Hermite form: on [times_[k], times_[k+1]] the states X_k -> X_{k+1} with slopes S0_k, S1_k
  // (f seen from inside the interval, so a jump of the input at a knot is honoured).
  std::vector<double> times_;
  Eigen::MatrixXd x_;   // n x knots
  Eigen::MatrixXd s0_;  // n x (knots-1)
  Eigen::MatrixXd s1_;  // n x (knots-1)
  std::shared_ptr<const TimeTable> table_;
  std::vector<int> columns_;
};

}  // namespace ordex
