#pragma once
// What a nonlinear run reads besides the model: a gain schedule (the CSV of ordex-regulate) and
// dispersions of the initial state and parameters (a TOML file; docs/nonlinear.md).
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

/// K(t) sampled at TIMES (m x n each), linear between samples, held outside.
struct GainSchedule {
  std::string path;
  std::vector<double> times;
  std::vector<Eigen::MatrixXd> gains;
  /// K(T) into K (m x n). Allocates nothing; thread-safe.
  void at(double t, MatrixRef K) const;
};

/// Reads PATH: columns t,K_1_1,...,K_m_n (row-major, 1-based, as ordex-regulate writes them) for
/// INFO's m inputs and n states. Throws InputError naming the file when the columns differ.
GainSchedule read_gain_schedule(const std::string& path, const SystemInfo& info);

/// One dispersed quantity: a normal deviation (standard deviation SIZE) or a uniform one on
/// [-SIZE, SIZE], added to the value it disperses.
struct Dispersion {
  enum class Law { normal, uniform };
  int index = 0;      ///< the state or parameter (file order)
  Law law = Law::normal;
  double size = 0;    ///< standard deviation or half-width, >= 0
};

struct Dispersions {
  std::string path;
  std::vector<Dispersion> states;      ///< of the initial deviation dx0
  std::vector<Dispersion> parameters;  ///< of the model's parameters
  bool empty() const { return states.empty() && parameters.empty(); }
};

/// Reads PATH: [initial_state] NAME = { sigma = S } or { half_width = H }, [parameters] the same.
/// Throws InputError "PATH: KEY: what" for an unknown name, law or a negative size.
Dispersions read_dispersions(const std::string& path, const SystemInfo& info);

}  // namespace ordex
