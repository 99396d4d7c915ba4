#pragma once
// The two solver routes behind solve_riccati (internal to lib/riccati). Each fills SOL.P at
// every node of SOL.nodes (already set) and the counts in SOL.stats.
#include <string>

#include "propagation/generator.hpp"
#include "riccati/riccati_solver.hpp"

namespace ordex {
namespace riccati_detail {

void solve_by_riccati_ode(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol);
void solve_by_hamiltonian(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol);

/// The Hamiltonian [[A - B R^-1 N', -B R^-1 B'], [-(Q - N R^-1 N'), -(A - B R^-1 N')']] of the
/// regulator's Riccati equation with weights W as the engine's generator over [T0, T1] (its
/// breakpoints and switching times); SYS and W must outlive it. Used by the finite-horizon route
/// and the periodic steady state (its monodromy).
Generator hamiltonian_generator(const System& sys, const Weights& w, double t0, double t1, const std::string& label);

/// Throws NumericalError "WHAT is not finite at t = T" unless every entry of X is finite.
void require_finite_matrix(const Eigen::MatrixXd& x, const std::string& what, double t);

}  // namespace riccati_detail
}  // namespace ordex
