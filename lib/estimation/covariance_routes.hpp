#pragma once
// The two ways the estimator carries the covariance P forward in time (internal to
// lib/estimation), both through the engine:
//   Ode          the engine's symmetric matrix equation service (CVODE BDF, or the scheme
//                its probe picks, scheme_probe.hpp):
//                  dP/dt = A P + P A' + G Qn G' [- P C' Rn^-1 C P]
//                (F = A, S = G Qn G', and with the filter term G = C', W = Rn^-1);
//   Hamiltonian  the linear-fractional form P = Y X^-1 with
//                  d/dt [X; Y] = [[-A', C' Rn^-1 C], [G Qn G', A]] [X; Y],
//                the engine propagating that 2n x 2n generator over each interval of a dense
//                grid and P carried one interval at a time (P+ = (S21 + S22 P)(S11 + S12 P)^-1),
//                which keeps every step's matrices well scaled.
// (Differentiating Y X^-1 gives back the Riccati equation, so the routes solve one problem by
// unrelated means and their agreement measures the solution's accuracy.)
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "estimation/noise.hpp"
#include "propagation/options.hpp"
#include "riccati/riccati_solver.hpp"

namespace ordex {
namespace estimation_detail {

struct RouteStats {
  std::string engine;  ///< "cvode-bdf", "cvode-adams", "rkf78" or the engine method
  long steps = 0, evaluations = 0;
};

class CovarianceRoute {
 public:
  /// WITH_FILTER adds the continuous measurement term (the Kalman-Bucy equation); without it
  /// P follows the process noise alone (between the updates of a covariance analysis).
  /// [T0, T1] is the whole window; the Hamiltonian route spreads DENSE_INTERVALS over it.
  CovarianceRoute(const System& sys, const NoiseModel& noise, bool with_filter, RiccatiSolver route,
                  const PropagationOptions& options, int dense_intervals, double t0, double t1);
  ~CovarianceRoute();
  /// From P at TIMES.front() to every later time of TIMES (strictly ascending): VISIT(k, P(times[k]))
  /// for k = 1, 2, ... Throws NumericalError when P stops being finite or a step is singular.
  void carry(const std::vector<double>& times, const Eigen::MatrixXd& P,
             const std::function<void(std::size_t k, const Eigen::MatrixXd& P)>& visit);
  RouteStats stats() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace estimation_detail
}  // namespace ordex
