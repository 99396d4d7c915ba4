#pragma once
// Nonlinear model files (CONTRACT.md "Nonlinear models"; docs/nonlinear.md): [dynamics] with
// x' = f(x, u, t) and optional y = h(x, u, t), [nominal] with the trajectory to linearize
// about. Loading gives the plant (for simulation) and its linearization about the nominal,
// A(t) = df/dx, B(t) = df/du, C(t) = dh/dx, D(t) = dh/du at (x_n(t), u_n(t), t), a System that
// every module accepts.
#include <memory>
#include <string>
#include <vector>

#include "model/model_file.hpp"
#include "model/system.hpp"
#include "nonlinear/nominal.hpp"
#include "nonlinear/plant_evaluator.hpp"
#include "propagation/options.hpp"

namespace ordex {

/// A loaded nonlinear model: the plant's definition and its nominal trajectory (both immutable).
struct NonlinearModel {
  std::shared_ptr<const PlantDefinition> plant;
  std::shared_ptr<const NominalStates> nominal;
  Eigen::VectorXd nominal_x0;  ///< x_n at the start of the window
  /// True when the nominal was integrated from nominal_x0 (false: read from nominal.trajectory).
  bool nominal_integrated = false;
  /// The parameters that nominal.x0's expressions use (a sweep refuses to vary them).
  std::vector<std::string> nominal_x0_parameters;
  /// The linearization about the nominal (a new System with its own evaluator).
  std::unique_ptr<System> linearization() const;
  /// A new evaluator of the plant (one per thread).
  std::unique_ptr<PlantEvaluator> evaluator() const { return std::make_unique<PlantEvaluator>(plant); }
  const SystemInfo& info() const { return plant->info; }
};

/// True when PATH is a model file with a [dynamics] section (a nonlinear model).
bool is_nonlinear_model_file(const std::string& path);

/// Reads PATH, differentiates f and h, and integrates the nominal with OPTIONS' tolerances (the
/// engine's: method adams or bdf chooses CVODE's scheme, anything else Adams). Every mistake is
/// an InputError "PATH: KEY: what"; a nominal that cannot be integrated a NumericalError.
NonlinearModel load_nonlinear_model(const std::string& path, const ParameterOverrides& overrides = {},
                                    const PropagationOptions& options = {});

/// The linearization of the nonlinear model at PATH (load_nonlinear_model(...).linearization()).
std::unique_ptr<System> load_linearized_model(const std::string& path, const ParameterOverrides& overrides = {},
                                              const PropagationOptions& options = {});

}  // namespace ordex
