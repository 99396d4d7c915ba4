#pragma once
// The Pade approximant of the matrix exponential for a block upper triangular matrix
//   M = [[X, Y], [0, Z]]   (X k x k, Z l x l, Y k x l)
// evaluated on the blocks. Every power and polynomial of M keeps the form, so a product costs
// the four block products X X', Z Z' and X Y' + Y Z' instead of the eight of the dense (k + l)
// square product, and the final solve needs the LU factors of the two diagonal blocks only.
// The generators the engine meets in the modules have this form: Van Loan's [[A, Q], [0, -A']]
// for Gramians and [[A, B], [0, 0]] for held inputs, and so does every Magnus Omega built from
// them (the form is closed under commutators). The approximant is the same rational function of
// M as the dense evaluation (Higham, SIAM J. Matrix Anal. Appl. 26 (2005) 1179-1193: the degree
// and squarings are chosen from the 1-norm of the whole M), so its backward error bound carries
// over; the off-diagonal block is the Frechet-type integral int_0^1 e^{(1-s) X} Y e^{s Z} ds
// (Van Loan, IEEE TAC 23 (1978) 395-404; Al-Mohy & Higham, SIAM J. Matrix Anal. Appl. 30 (2009)
// 1639-1657, for the case X = Z).
#include <Eigen/Dense>

namespace ordex {

/// The split k (0 < k < dim) at which M's lower-left (dim - k) x k block is exactly zero,
/// the one closest to dim / 2; 0 when M has none with both diagonal blocks at least dim / 4
/// (then the blocks would save little). O(dim^2).
Eigen::Index block_triangular_split(const Eigen::MatrixXd& m);

/// Work matrices of the blockwise Pade evaluation, kept between calls (no allocation per call
/// once the sizes are set).
class BlockTriangularPade {
 public:
  /// OUT = r(M)^(2^SQUARINGS), r the [DEGREE/DEGREE] Pade approximant whose numerator has the
  /// coefficients B[0..DEGREE] (DEGREE odd, 3 to 13), M split at K (block_triangular_split).
  /// M must already be scaled by 2^-SQUARINGS.
  void compute(const Eigen::MatrixXd& m, Eigen::Index k, const double* b, int degree, int squarings,
               Eigen::MatrixXd& out);

  /// Blocks of a block upper triangular matrix [[x, y], [0, z]].
  struct Blocks {
    Eigen::MatrixXd x, y, z;
  };

 private:
  Blocks a_, a2_, a4_, a6_, tmp_, p_, u_, v_, q_, r_, w_;
  Eigen::PartialPivLU<Eigen::MatrixXd> lu_x_, lu_z_;
};

}  // namespace ordex
