// The matrix exponential of block upper triangular matrices evaluated on the blocks
// (lib/propagation/block_expm.hpp, used by MatrixExponential when the argument has that form):
// against scipy.linalg.expm (tests/reference/propagation_block_expm.py) on Van Loan's Gramian
// generator [[A, Q], [0, -A']] and the held-input generator [[A, B], [0, 0]] at norms that select
// every Pade degree and several squarings, against a closed form, and the split detection.
// The steppers' block products and Van Loan commutators (lib/propagation/block_algebra.hpp)
// against the dense definitions, and the engine on a Van Loan generator against scipy's expm.
#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <string>
#include <nlohmann/json.hpp>
#include <random>
#include <vector>

#include "propagation/block_algebra.hpp"
#include "propagation/block_expm.hpp"
#include "propagation/expm.hpp"
#include "propagation/propagator.hpp"
#include "propagation/stepper.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

Eigen::MatrixXd random_matrix(int r, int c, std::mt19937& gen) {
  std::normal_distribution<double> d(0.0, 1.0);
  Eigen::MatrixXd m(r, c);
  for (int i = 0; i < r; ++i)
    for (int j = 0; j < c; ++j) m(i, j) = d(gen);
  return m;
}

/// [[A, Q], [0, -A']] with Q = G G' (positive semidefinite), scaled to 1-norm NORM.
Eigen::MatrixXd gramian_generator(int n, double norm, std::mt19937& gen) {
  const Eigen::MatrixXd a = random_matrix(n, n, gen) - 1.5 * Eigen::MatrixXd::Identity(n, n);
  const Eigen::MatrixXd g = random_matrix(n, 2, gen);
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(2 * n, 2 * n);
  m.topLeftCorner(n, n) = a;
  m.topRightCorner(n, n) = g * g.transpose();
  m.bottomRightCorner(n, n) = -a.transpose();
  return m * (norm / m.cwiseAbs().colwise().sum().maxCoeff());
}

/// [[A, B], [0, 0]] (n + m square), scaled to 1-norm NORM.
Eigen::MatrixXd held_input_generator(int n, int m, double norm, std::mt19937& gen) {
  Eigen::MatrixXd g = Eigen::MatrixXd::Zero(n + m, n + m);
  g.topLeftCorner(n, n) = random_matrix(n, n, gen);
  g.topRightCorner(n, m) = random_matrix(n, m, gen);
  return g * (norm / g.cwiseAbs().colwise().sum().maxCoeff());
}

std::vector<Eigen::MatrixXd> scipy_expm(const std::vector<Eigen::MatrixXd>& ms) {
  nlohmann::json in;
  in["matrices"] = nlohmann::json::array();
  for (const auto& m : ms) {
    nlohmann::json rows = nlohmann::json::array();
    for (Eigen::Index i = 0; i < m.rows(); ++i) {
      std::vector<double> r(m.cols());
      for (Eigen::Index j = 0; j < m.cols(); ++j) r[j] = m(i, j);
      rows.push_back(r);
    }
    in["matrices"].push_back(rows);
  }
  const std::string path = ordex_test::temp_dir() + "/block_expm_in.json";
  ordex_test::write_file(path, in.dump(17));
  auto r = ordex_test::run_python("propagation_block_expm.py", path);
  EXPECT_EQ(r.exit_code, 0) << r.err;
  std::vector<Eigen::MatrixXd> out;
  const auto j = nlohmann::json::parse(r.out)["expm"];
  for (std::size_t k = 0; k < ms.size(); ++k) {
    Eigen::MatrixXd e(ms[k].rows(), ms[k].cols());
    for (Eigen::Index i = 0; i < e.rows(); ++i)
      for (Eigen::Index c = 0; c < e.cols(); ++c) e(i, c) = j[k][i][c].get<double>();
    out.push_back(e);
  }
  return out;
}

}  // namespace

TEST(BlockExpm, SplitIsFoundOnlyWhereTheLowerLeftBlockIsZero) {
  std::mt19937 gen(3);
  EXPECT_EQ(block_triangular_split(gramian_generator(10, 1.0, gen)), 10);
  EXPECT_EQ(block_triangular_split(held_input_generator(8, 6, 1.0, gen)), 8);
  // Too unbalanced to pay: three input columns against 40 states.
  EXPECT_EQ(block_triangular_split(held_input_generator(40, 3, 1.0, gen)), 0);
  EXPECT_EQ(block_triangular_split(random_matrix(12, 12, gen)), 0);
  Eigen::MatrixXd m = gramian_generator(6, 1.0, gen);
  m(11, 0) = 1e-300;  // one nonzero in the lower-left block: dense
  EXPECT_EQ(block_triangular_split(m), 0);
}

TEST(BlockExpm, ClosedFormOfScalarBlocks) {
  // exp([[a I, c I], [0, b I]]) = [[e^a I, c (e^a - e^b) / (a - b) I], [0, e^b I]] (the divided
  // difference of exp; Van Loan 1978).
  const double a = -3.7, b = 2.9, c = 1.3;
  const int n = 5;
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(2 * n, 2 * n);
  m.topLeftCorner(n, n).diagonal().setConstant(a);
  m.bottomRightCorner(n, n).diagonal().setConstant(b);
  m.topRightCorner(n, n).diagonal().setConstant(c);
  ASSERT_EQ(block_triangular_split(m), n);
  MatrixExponential e;
  Eigen::MatrixXd out;
  e.compute(m, out);
  for (int i = 0; i < n; ++i) {
    EXPECT_NEAR(out(i, i) / std::exp(a), 1.0, 1e-13);
    EXPECT_NEAR(out(n + i, n + i) / std::exp(b), 1.0, 1e-13);
    EXPECT_NEAR(out(i, n + i) / (c * (std::exp(a) - std::exp(b)) / (a - b)), 1.0, 1e-13);
  }
  EXPECT_EQ(out.bottomLeftCorner(n, n).cwiseAbs().maxCoeff(), 0.0);
}

TEST(BlockExpm, BlockGeneratorsMatchScipyAtEveryPadeDegree) {
  // 1-norms 0.01 .. 60 select the Pade degrees 3, 5, 7, 9 and 13 with 0 to 4 squarings
  // (Higham 2005, Table 2.3: theta_3 = 0.015, theta_5 = 0.25, theta_7 = 0.95, theta_9 = 2.1,
  // theta_13 = 5.4); balancing may lower a norm, which changes nothing in the check.
  std::mt19937 gen(11);
  std::vector<Eigen::MatrixXd> ms;
  for (double norm : {0.01, 0.2, 0.9, 2.0, 5.0, 60.0}) {
    ms.push_back(gramian_generator(12, norm, gen));
    ms.push_back(held_input_generator(9, 7, norm, gen));
  }
  // A stiff Gramian generator: A with a fast decaying mode (-a' then grows like e^{40}).
  Eigen::MatrixXd stiff = gramian_generator(8, 2.0, gen);
  stiff(0, 0) -= 40.0;
  stiff(8, 8) += 40.0;
  ms.push_back(stiff);
  const std::vector<Eigen::MatrixXd> ref = scipy_expm(ms);
  ASSERT_EQ(ref.size(), ms.size());
  MatrixExponential e;
  for (std::size_t k = 0; k < ms.size(); ++k) {
    ASSERT_GT(block_triangular_split(ms[k]), 0) << k;
    Eigen::MatrixXd out;
    e.compute(ms[k], out);
    // Relative error blockwise, so that a large block does not hide a small one's error.
    const Eigen::Index s = block_triangular_split(ms[k]), l = ms[k].rows() - s;
    auto rel = [&](Eigen::Index r0, Eigen::Index c0, Eigen::Index r, Eigen::Index c) {
      return (out.block(r0, c0, r, c) - ref[k].block(r0, c0, r, c)).norm() / ref[k].block(r0, c0, r, c).norm();
    };
    EXPECT_LT(rel(0, 0, s, s), 1e-12) << "matrix " << k;
    EXPECT_LT(rel(0, s, s, l), 1e-12) << "matrix " << k;
    if (ms[k].block(s, s, l, l).norm() == 0) {
      // exp(0) = I (closed form; scipy's dense evaluation leaves errors of 1e-11 there at norm 60)
      EXPECT_LT((out.block(s, s, l, l) - Eigen::MatrixXd::Identity(l, l)).norm(), 1e-14) << "matrix " << k;
    } else {
      EXPECT_LT(rel(s, s, l, l), 1e-12) << "matrix " << k;
    }
    EXPECT_EQ(out.bottomLeftCorner(l, s).cwiseAbs().maxCoeff(), 0.0);
  }
}

TEST(BlockAlgebra, VanLoanCommutatorIsTheDenseCommutatorAndKeepsTheForm) {
  std::mt19937 gen(11);
  const int n = 7;
  const Eigen::MatrixXd x = gramian_generator(n, 3.0, gen), y = gramian_generator(n, 2.0, gen);
  const Eigen::MatrixXd dense = x * y - y * x;  // the definition
  Eigen::MatrixXd out = Eigen::MatrixXd::Constant(2 * n, 2 * n, 99.0), work(n, n);
  van_loan_commutator_into(out, x, y, n, work);
  EXPECT_LT((out - dense).cwiseAbs().maxCoeff(), 1e-14 * dense.cwiseAbs().maxCoeff() * 2 * n);
  EXPECT_EQ(out.bottomLeftCorner(n, n).cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ((out.bottomRightCorner(n, n) + out.topLeftCorner(n, n).transpose()).cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ((out.topRightCorner(n, n) - out.topRightCorner(n, n).transpose()).cwiseAbs().maxCoeff(), 0.0);
  // Split 0: the plain commutator of any matrices.
  const Eigen::MatrixXd a = random_matrix(5, 5, gen), b = random_matrix(5, 5, gen);
  Eigen::MatrixXd c(5, 5), none;
  van_loan_commutator_into(c, a, b, 0, none);
  EXPECT_LT((c - (a * b - b * a)).cwiseAbs().maxCoeff(), 1e-13);
}

TEST(BlockAlgebra, BlockProductIsTheDenseProductForAnySplit) {
  std::mt19937 gen(12);
  for (int k : {1, 3, 5, 7}) {
    Eigen::MatrixXd x = random_matrix(8, 8, gen), y = random_matrix(8, 8, gen);
    x.bottomLeftCorner(8 - k, k).setZero();
    y.bottomLeftCorner(8 - k, k).setZero();
    Eigen::MatrixXd out = Eigen::MatrixXd::Constant(8, 8, -5.0);
    block_product_into(out, x, y, k);
    EXPECT_LT((out - x * y).cwiseAbs().maxCoeff(), 1e-13) << "split " << k;
    EXPECT_EQ(out.bottomLeftCorner(8 - k, k).cwiseAbs().maxCoeff(), 0.0) << "split " << k;
    EXPECT_EQ(zero_lower_left_split(out, k), k);
  }
  Eigen::MatrixXd full = random_matrix(6, 6, gen);
  EXPECT_EQ(zero_lower_left_split(full, 3), 0);
  EXPECT_EQ(zero_lower_left_split(full, 0), 0);
}

namespace {

/// Van Loan's generator of a time-varying pair: A(t) = A0 + sin(2t) A1, q(t) = g(t) g(t)' with
/// g(t) = G0 + cos(t) G1, so that the Gramian block is symmetric at every t.
Generator time_varying_van_loan(int n, std::mt19937& gen, bool structured) {
  auto a0 = std::make_shared<Eigen::MatrixXd>(0.5 * random_matrix(n, n, gen) - 0.3 * Eigen::MatrixXd::Identity(n, n));
  auto a1 = std::make_shared<Eigen::MatrixXd>(0.4 * random_matrix(n, n, gen));
  auto g0 = std::make_shared<Eigen::MatrixXd>(random_matrix(n, 2, gen));
  auto g1 = std::make_shared<Eigen::MatrixXd>(0.5 * random_matrix(n, 2, gen));
  Generator g;
  g.dim = 2 * n;
  g.van_loan_half = structured ? n : 0;
  g.label = "time-varying Van Loan generator";
  g.eval = [n, a0, a1, g0, g1](double t, MatrixRef out) {
    out.topLeftCorner(n, n) = *a0 + std::sin(2 * t) * *a1;
    const Eigen::MatrixXd b = *g0 + std::cos(t) * *g1;
    out.topRightCorner(n, n) = b * b.transpose();
    out.bottomLeftCorner(n, n).setZero();
    out.bottomRightCorner(n, n) = -out.topLeftCorner(n, n).transpose();
  };
  return g;
}

}  // namespace

// A constant generator's transition matrix is expm((t1 - t0) G): scipy.linalg.expm is the
// outside reference for the structured steps of every method that uses them.
TEST(BlockAlgebra, EngineOnAConstantVanLoanGeneratorMatchesScipyExpm) {
  std::mt19937 gen(21);
  const int n = 6;
  const Eigen::MatrixXd g = gramian_generator(n, 2.0, gen);
  const double span = 3.0;
  const Eigen::MatrixXd ref = scipy_expm({span * g})[0];
  for (const char* method : {"magnus4", "magnus6", "rk8"}) {
    Generator gen_c;
    gen_c.dim = 2 * n;
    gen_c.van_loan_half = n;
    gen_c.eval = [g](double, MatrixRef out) { out = g; };
    PropagationOptions o;
    o.method = parse_method(method);
    o.rtol = 1e-11;
    o.atol = 1e-14;
    Propagator prop(gen_c, o);
    const Eigen::MatrixXd phi = prop.transition(0.0, span);
    EXPECT_LT((phi - ref).cwiseAbs().maxCoeff() / ref.cwiseAbs().maxCoeff(), 1e-9) << method;
    EXPECT_EQ(phi.bottomLeftCorner(n, n).cwiseAbs().maxCoeff(), 0.0) << method;
  }
}

// The structured steps take the same steps as the dense ones up to round-off, so on a
// time-varying generator both give the same transition matrix far inside the tolerance; a
// carried X without the zero block (a leg continued from a general matrix) takes the dense
// products and equals Phi X.
TEST(BlockAlgebra, StructuredStepsAgreeWithDenseStepsOnATimeVaryingGenerator) {
  const int n = 5;
  for (const char* method : {"magnus4", "magnus6", "rk8"}) {
    std::mt19937 g1(31), g2(31);
    PropagationOptions o;
    o.method = parse_method(method);
    o.rtol = 1e-10;
    o.atol = 1e-13;
    Propagator structured(time_varying_van_loan(n, g1, true), o);
    Propagator dense(time_varying_van_loan(n, g2, false), o);
    const Eigen::MatrixXd ps = structured.transition(0.0, 4.0), pd = dense.transition(0.0, 4.0);
    const double scale = pd.cwiseAbs().maxCoeff();
    EXPECT_LT((ps - pd).cwiseAbs().maxCoeff() / scale, 1e-11) << method;
    EXPECT_EQ(structured.stats().steps, dense.stats().steps) << method;
    std::mt19937 g3(5), g4(31);
    Eigen::MatrixXd x = random_matrix(2 * n, 2 * n, g3), x0 = x;
    Eigen::MatrixXd err = Eigen::MatrixXd::Zero(2 * n, 2 * n);
    const Generator vl = time_varying_van_loan(n, g4, true);
    auto stepper = std::string(method) == "rk8" ? make_runge_kutta8_stepper(vl, o)
                                                : make_magnus_stepper(vl, o, std::string(method) == "magnus4" ? 4 : 6);
    PropagationStats stats;
    stepper->advance(0.0, 4.0, x, err, stats, {});
    const Eigen::MatrixXd expect = pd * x0;
    EXPECT_LT((x - expect).cwiseAbs().maxCoeff() / expect.cwiseAbs().maxCoeff(), 1e-9) << method;
  }
}
