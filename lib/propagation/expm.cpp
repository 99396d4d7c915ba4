#include "propagation/expm.hpp"

#include <cmath>

namespace ordex {
namespace {

// Pade coefficients b_0..b_m and the 1-norm bounds theta_m below which degree m reaches unit
// roundoff in double precision (Higham 2005, Table 2.3 and eq. (2.8)).
const double kB3[] = {120., 60., 12., 1.};
const double kB5[] = {30240., 15120., 3360., 420., 30., 1.};
const double kB7[] = {17297280., 8648640., 1995840., 277200., 25200., 1512., 56., 1.};
const double kB9[] = {17643225600., 8821612800., 2075673600., 302702400., 30270240.,
                      2162160., 110880., 3960., 90., 1.};
const double kB13[] = {64764752532480000., 32382376266240000., 7771770303897600.,
                       1187353796428800., 129060195264000., 10559470521600.,
                       670442572800., 33522128640., 1323241920., 40840800.,
                       960960., 16380., 182., 1.};
const double kTheta3 = 1.495585217958292e-2;
const double kTheta5 = 2.539398330063230e-1;
const double kTheta7 = 9.504178996162932e-1;
const double kTheta9 = 2.097847961257068e0;
const double kTheta13 = 5.371920351148152e0;

}  // namespace

namespace {

double norm1(const Eigen::MatrixXd& m) { return m.cwiseAbs().colwise().sum().maxCoeff(); }

// Diagonal similarity by powers of two (Parlett & Reinsch, Numer. Math. 13 (1969) 293-304, the
// balancing of LAPACK's dgebal without permutations): B = D^-1 A D with rows and columns of
// comparable size, so exp(A) = D exp(B) D^-1 exactly in floating point. Models in physical
// units (km and s, say) have entries of very different sizes; balancing brings ||h A|| from
// hundreds down to about one, which saves the exponential most of its squarings.
void balance(Eigen::MatrixXd& a, Eigen::VectorXd& scale) {
  const Eigen::Index n = a.rows();
  scale.setOnes(n);
  for (int sweep = 0; sweep < 20; ++sweep) {
    bool done = true;
    for (Eigen::Index i = 0; i < n; ++i) {
      double c = a.col(i).cwiseAbs().sum() - std::abs(a(i, i));
      double r = a.row(i).cwiseAbs().sum() - std::abs(a(i, i));
      if (c == 0 || r == 0) continue;
      const double s = c + r;
      double f = 1, g = r / 2;
      while (c < g && f < 1e150) { f *= 2; c *= 4; }
      g = r * 2;
      while (c > g && f > 1e-150) { f /= 2; c /= 4; }
      if ((c + r) / f < 0.95 * s) {
        done = false;
        scale(i) *= f;
        a.row(i) /= f;
        a.col(i) *= f;
      }
    }
    if (done) break;
  }
}

}  // namespace

void MatrixExponential::compute(const Eigen::MatrixXd& a, Eigen::MatrixXd& out) {
  a_ = a;
  const double before = norm1(a_);
  if (a_.rows() > 1 && before > kTheta3) {
    balance(a_, scale_);
    if (norm1(a_) < before) {
      pade(out);
      // exp(A) = D exp(B) D^-1
      out.array().colwise() *= scale_.array();
      out.array().rowwise() /= scale_.transpose().array();
      return;
    }
    a_ = a;
  }
  pade(out);
}

void MatrixExponential::pade(Eigen::MatrixXd& out) {
  const Eigen::Index n = a_.rows();
  const double norm1_a = norm1(a_);
  int squarings = 0;
  const double* b = nullptr;
  int degree = 13;
  if (norm1_a <= kTheta3) { b = kB3; degree = 3; }
  else if (norm1_a <= kTheta5) { b = kB5; degree = 5; }
  else if (norm1_a <= kTheta7) { b = kB7; degree = 7; }
  else if (norm1_a <= kTheta9) { b = kB9; degree = 9; }
  else {
    b = kB13;
    squarings = std::max(0, static_cast<int>(std::ceil(std::log2(norm1_a / kTheta13))));
  }
  if (squarings > 0) a_ *= std::ldexp(1.0, -squarings);
  // Block upper triangular (the modules' generators): the same approximant on the blocks.
  if (const Eigen::Index split = block_triangular_split(a_)) {
    block_.compute(a_, split, b, degree, squarings, out);
    return;
  }
  a2_.noalias() = a_ * a_;
  const auto I = Eigen::MatrixXd::Identity(n, n);
  if (degree == 13) {
    a4_.noalias() = a2_ * a2_;
    a6_.noalias() = a4_ * a2_;
    tmp_ = b[13] * a6_ + b[11] * a4_ + b[9] * a2_;
    p_.noalias() = a6_ * tmp_;
    p_ += b[7] * a6_ + b[5] * a4_ + b[3] * a2_ + b[1] * I;
    u_.noalias() = a_ * p_;
    tmp_ = b[12] * a6_ + b[10] * a4_ + b[8] * a2_;
    v_.noalias() = a6_ * tmp_;
    v_ += b[6] * a6_ + b[4] * a4_ + b[2] * a2_ + b[0] * I;
  } else {
    // U = A * sum b_{2k+1} A^{2k}, V = sum b_{2k} A^{2k}, with powers built up as needed.
    p_ = b[1] * I;
    v_ = b[0] * I;
    tmp_ = a2_;  // A^{2k}
    for (int k = 1; 2 * k <= degree; ++k) {
      if (k > 1) {
        q_.noalias() = tmp_ * a2_;
        tmp_.swap(q_);
      }
      v_ += b[2 * k] * tmp_;
      if (2 * k + 1 <= degree) p_ += b[2 * k + 1] * tmp_;
    }
    u_.noalias() = a_ * p_;
  }
  // r = (V - U)^{-1} (V + U)
  q_ = v_ - u_;
  p_ = v_ + u_;
  lu_.compute(q_);
  out = lu_.solve(p_);
  for (int k = 0; k < squarings; ++k) {
    tmp_.noalias() = out * out;
    out.swap(tmp_);
  }
}

}  // namespace ordex
