#pragma once
// The matrix exponential by scaling and squaring with Pade approximants of degree 3 to 13
// (Higham, SIAM J. Matrix Anal. Appl. 26 (2005) 1179-1193), with all work matrices kept between
// calls so that a Magnus step allocates nothing once the sizes are set.
#include <Eigen/Dense>

#include "propagation/block_expm.hpp"

namespace ordex {

class MatrixExponential {
 public:
  /// OUT = exp(A). A must be square and finite.
  void compute(const Eigen::MatrixXd& a, Eigen::MatrixXd& out);

 private:
  /// Pade and squaring on a_ (already balanced), result into OUT.
  void pade(Eigen::MatrixXd& out);

  Eigen::MatrixXd a_, a2_, a4_, a6_, u_, v_, tmp_, p_, q_;
  Eigen::VectorXd scale_;
  Eigen::PartialPivLU<Eigen::MatrixXd> lu_;
  BlockTriangularPade block_;  // for block upper triangular arguments (block_expm.hpp)
};

}  // namespace ordex
