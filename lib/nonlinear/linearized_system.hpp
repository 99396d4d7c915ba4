#pragma once
// The linearization of a nonlinear plant about its nominal as a System:
// A(t) = df/dx, B(t) = df/du, C(t) = dh/dx, D(t) = dh/du at (x_n(t), u_n(t), t), exact
// Jacobians evaluated from their symbolic derivatives.
#include <limits>
#include <memory>

#include "model/system.hpp"
#include "nonlinear/nominal.hpp"
#include "nonlinear/plant_evaluator.hpp"

namespace ordex {

class LinearizedSystem : public System {
 public:
  /// INFO: the plant's, with the title and window that say what this is (nonlinear_model.cpp).
  LinearizedSystem(std::unique_ptr<PlantEvaluator> plant, std::shared_ptr<const NominalStates> nominal, SystemInfo info);

  void A(double t, MatrixRef out) const override;
  void B(double t, MatrixRef out) const override;
  void C(double t, MatrixRef out) const override;
  void D(double t, MatrixRef out) const override;
  std::unique_ptr<System> clone() const override;
  /// Throws InputError naming the Jacobian entry (its key and derivative text) that is not
  /// finite on the nominal at T.
  void check_finite_at(double t) const override;
  using System::A;
  using System::B;
  using System::C;
  using System::D;

  /// The nominal at T (x_n: n values, u_n: m values).
  void nominal(double t, double* x, double* u) const;

 private:
  void refresh(double t) const;

  std::unique_ptr<PlantEvaluator> plant_;
  std::shared_ptr<const NominalStates> nominal_;
  // The four matrices at the last t asked (modules ask A and B at one t in turn).
  mutable double last_t_ = std::numeric_limits<double>::quiet_NaN();
  mutable Eigen::VectorXd x_, u_;
  mutable Eigen::MatrixXd a_, b_, c_, d_;
};

}  // namespace ordex
