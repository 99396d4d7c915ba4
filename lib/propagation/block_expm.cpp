#include "propagation/block_expm.hpp"

#include <algorithm>
#include <cstdlib>

namespace ordex {

Eigen::Index block_triangular_split(const Eigen::MatrixXd& m) {
  const Eigen::Index dim = m.rows();
  if (dim < 4 || m.cols() != dim) return 0;
  // lowest[j]: the last row with a nonzero in column j (-1 for a zero column). A split k is
  // valid when every column left of it has its nonzeros above row k.
  Eigen::Index best = 0, reach = -1;
  for (Eigen::Index k = 1; k < dim; ++k) {
    Eigen::Index r = dim - 1;
    while (r >= 0 && m(r, k - 1) == 0.0) --r;
    reach = std::max(reach, r);
    if (reach < k && 4 * k >= dim && 4 * (dim - k) >= dim &&
        (best == 0 || std::abs(2 * k - dim) < std::abs(2 * best - dim)))
      best = k;
  }
  return best;
}

namespace {

using Blocks = BlockTriangularPade::Blocks;

/// C = A B blockwise.
void multiply(const Blocks& a, const Blocks& b, Blocks& c) {
  c.x.noalias() = a.x * b.x;
  c.z.noalias() = a.z * b.z;
  c.y.noalias() = a.x * b.y;
  c.y.noalias() += a.y * b.z;
}

/// OUT = sum c_i T_i + c_id I (T_i may be null for a zero coefficient list end).
void combine(Blocks& out, double c1, const Blocks& t1, double c2, const Blocks& t2, double c3, const Blocks& t3,
             double c_id) {
  out.x = c1 * t1.x + c2 * t2.x + c3 * t3.x;
  out.y = c1 * t1.y + c2 * t2.y + c3 * t3.y;
  out.z = c1 * t1.z + c2 * t2.z + c3 * t3.z;
  out.x.diagonal().array() += c_id;
  out.z.diagonal().array() += c_id;
}

void set_identity_multiple(Blocks& out, double c, Eigen::Index k, Eigen::Index l) {
  out.x = c * Eigen::MatrixXd::Identity(k, k);
  out.z = c * Eigen::MatrixXd::Identity(l, l);
  out.y.setZero(k, l);
}

void add_scaled(Blocks& out, double c, const Blocks& t) {
  out.x += c * t.x;
  out.y += c * t.y;
  out.z += c * t.z;
}

}  // namespace

void BlockTriangularPade::compute(const Eigen::MatrixXd& m, Eigen::Index k, const double* b, int degree,
                                  int squarings, Eigen::MatrixXd& out) {
  const Eigen::Index dim = m.rows(), l = dim - k;
  a_.x = m.topLeftCorner(k, k);
  a_.y = m.topRightCorner(k, l);
  a_.z = m.bottomRightCorner(l, l);
  multiply(a_, a_, a2_);
  if (degree == 13) {
    multiply(a2_, a2_, a4_);
    multiply(a4_, a2_, a6_);
    // OUT = A6 (b[12+o] A6 + b[10+o] A4 + b[8+o] A2) + b[6+o] A6 + b[4+o] A4 + b[2+o] A2 + b[o] I:
    // the odd part's polynomial (o = 1, then U = A OUT) and the even part V (o = 0).
    const auto even_powers = [&](Blocks& out, int o) {
      combine(tmp_, b[12 + o], a6_, b[10 + o], a4_, b[8 + o], a2_, 0.0);
      multiply(a6_, tmp_, out);
      add_scaled(out, b[6 + o], a6_);
      add_scaled(out, b[4 + o], a4_);
      add_scaled(out, b[2 + o], a2_);
      out.x.diagonal().array() += b[o];
      out.z.diagonal().array() += b[o];
    };
    even_powers(p_, 1);
    multiply(a_, p_, u_);
    even_powers(v_, 0);
  } else {
    // U = A sum b_{2j+1} A^{2j}, V = sum b_{2j} A^{2j}, powers built up as needed.
    set_identity_multiple(p_, b[1], k, l);
    set_identity_multiple(v_, b[0], k, l);
    tmp_ = a2_;  // A^{2j}
    for (int j = 1; 2 * j <= degree; ++j) {
      if (j > 1) {
        multiply(tmp_, a2_, w_);
        std::swap(tmp_, w_);
      }
      add_scaled(v_, b[2 * j], tmp_);
      if (2 * j + 1 <= degree) add_scaled(p_, b[2 * j + 1], tmp_);
    }
    multiply(a_, p_, u_);
  }
  // r = (V - U)^-1 (V + U), blockwise: with Q = V - U and P = V + U,
  //   r_z = Q_z^-1 P_z,  r_x = Q_x^-1 P_x,  r_y = Q_x^-1 (P_y - Q_y r_z).
  combine(q_, 1.0, v_, -1.0, u_, 0.0, v_, 0.0);
  combine(p_, 1.0, v_, 1.0, u_, 0.0, v_, 0.0);
  lu_x_.compute(q_.x);
  lu_z_.compute(q_.z);
  r_.z = lu_z_.solve(p_.z);
  r_.x = lu_x_.solve(p_.x);
  p_.y.noalias() -= q_.y * r_.z;
  r_.y = lu_x_.solve(p_.y);
  for (int s = 0; s < squarings; ++s) {
    multiply(r_, r_, w_);
    std::swap(r_, w_);
  }
  out.resize(dim, dim);
  out.topLeftCorner(k, k) = r_.x;
  out.topRightCorner(k, l) = r_.y;
  out.bottomLeftCorner(l, k).setZero();
  out.bottomRightCorner(l, l) = r_.z;
}

}  // namespace ordex
