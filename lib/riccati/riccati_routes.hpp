#pragma once
// The two solver routes behind solve_riccati (internal to lib/riccati). Each fills SOL.P at
// every node of SOL.nodes (already set) and the counts in SOL.stats.
#include "riccati/riccati_solver.hpp"

namespace ordex {
namespace riccati_detail {

void solve_by_riccati_ode(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol);
void solve_by_hamiltonian(const System& sys, const Weights& w, const RiccatiOptions& options, RiccatiSolution& sol);

/// Throws NumericalError "WHAT is not finite at t = T" unless every entry of X is finite.
void require_finite_matrix(const Eigen::MatrixXd& x, const std::string& what, double t);

}  // namespace riccati_detail
}  // namespace ordex
