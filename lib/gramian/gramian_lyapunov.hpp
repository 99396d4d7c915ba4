#pragma once
// The Lyapunov differential equation route (METHODS.md): W on its n(n+1)/2 independent entries,
// integrated by the engine's symmetric matrix equation service (symmetric_matrix_ode.hpp):
//   forward  dW/dt  = a W + W a' + q,  W(t0) = 0    ->  W(t1)  = W_r(t0, t1)
//   backward dW/dt0 = a W + W a' - q,  W(t1) = 0    ->  W(t0)  = W_c(t0, t1)
// With BDF the service solves its Newton systems exactly by a Schur-based Lyapunov solve.
#include <Eigen/Dense>

#include "gramian/gramian.hpp"
#include "propagation/lyapunov_solver.hpp"     // (kept for the tests that check the solver)
#include "propagation/ode_integrator.hpp"
#include "propagation/symmetric_packing.hpp"   // (kept for the benchmark's reference integrator)

namespace ordex {

/// W_r(t0, t1) (REACHABILITY true, integrated forward) or W_c(t0, t1) (false, backward) of PAIR
/// by the Lyapunov equation. STATS receives CVODE's counts when not null.
Eigen::MatrixXd lyapunov_gramian(const WeightedPair& pair, double t0, double t1, bool reachability,
                                 const OdeOptions& options, OdeStats* stats = nullptr);

}  // namespace ordex
