#pragma once
// The Lyapunov differential equation route (METHODS.md): the n(n+1)/2 independent entries of W
// integrated by CVODE through OdeIntegrator.
//   forward  dW/dt  = a W + W a' + q,  W(t0) = 0    ->  W(t1)  = W_r(t0, t1)
//   backward dW/dt0 = a W + W a' - q,  W(t1) = 0    ->  W(t0)  = W_c(t0, t1)
// With BDF the Newton systems (I - gamma L) X = R, L(X) = a X + X a', are Lyapunov equations
// M X + X M' = R with M = I/2 - gamma a; SchurLyapunovSolver (lib/propagation) solves them exactly
// in O(n^3), so GMRES
// converges in one iteration and no n^2 x n^2 matrix is ever formed.
#include <Eigen/Dense>
#include <complex>

#include "gramian/gramian.hpp"
#include "propagation/lyapunov_solver.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/symmetric_packing.hpp"

namespace ordex {



/// W_r(t0, t1) (REACHABILITY true, integrated forward) or W_c(t0, t1) (false, backward) of PAIR
/// by the Lyapunov equation. STATS receives CVODE's counts when not null.
Eigen::MatrixXd lyapunov_gramian(const WeightedPair& pair, double t0, double t1, bool reachability,
                                 const OdeOptions& options, OdeStats* stats = nullptr);

}  // namespace ordex
