// The engine's robustness: trial steps that overflow are rejected and retried, never fatal;
// windows far too long for the step budget end quickly with a message naming the limit.
#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <limits>
#include <sstream>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/propagator.hpp"
#include "propagation/stepper.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

// x'' + c0 (1 + 0.8 cos 38 t) x' + k0 (1 + 0.8 sin 38 t) x = 0, k0 = 2e4, c0 = 400: stable and
// stiff (rates from about 30 to 650 per second), modulated 12 times over [0, 2].
FunctionSystem stiff_oscillator() {
  FunctionSystem s({"x", "v"}, "stiff oscillator");
  s.set_A([](double t, MatrixRef a) {
    a << 0, 1, -2e4 * (1 + 0.8 * std::sin(38 * t)), -400 * (1 + 0.8 * std::cos(38 * t));
  });
  return s;
}

Eigen::Matrix2d stiff_reference() {
  // Outside reference: scipy solve_ivp (Radau IIA, rtol 1e-10) over ten sub-windows, multiplied.
  // Computed once for the whole test program (about 20 s of Python).
  static const Eigen::Matrix2d ref = [] {
    auto r = ordex_test::run_python("propagation_stiff_oscillator.py", "2 10");
    EXPECT_EQ(r.exit_code, 0) << r.err;
    std::istringstream in(r.out);
    Eigen::Matrix2d m = Eigen::Matrix2d::Constant(NAN);
    in >> m(0, 0) >> m(0, 1) >> m(1, 0) >> m(1, 1);
    return m;
  }();
  return ref;
}

double relative_error(const Eigen::MatrixXd& phi, const Eigen::MatrixXd& ref) {
  return (phi - ref).cwiseAbs().maxCoeff() / ref.cwiseAbs().maxCoeff();
}

}  // namespace

TEST(PropagationRobustness, StiffModulatedOscillatorSucceedsOnEveryMethod) {
  const Eigen::Matrix2d ref = stiff_reference();
  ASSERT_TRUE(ref.allFinite());
  ASSERT_GT(ref.cwiseAbs().maxCoeff(), 0.0);
  FunctionSystem s = stiff_oscillator();
  for (Method m : {Method::Auto, Method::Magnus6, Method::Magnus4, Method::Adams, Method::Bdf, Method::Rk8}) {
    // Default tolerances (rtol 1e-8, atol 1e-10): Phi(2, 0) is about 1e-53, so the absolute
    // tolerance governs; the run must simply succeed and stay within it.
    PropagationOptions o;
    o.method = m;
    Propagator p(state_generator(s), o);
    Eigen::MatrixXd phi;
    ASSERT_NO_THROW(phi = p.transition(0, 2)) << method_name(m);
    EXPECT_TRUE(phi.allFinite()) << method_name(m);
    EXPECT_LT((phi - ref).cwiseAbs().maxCoeff(), 1e-8) << method_name(m);
  }
  for (Method m : {Method::Auto, Method::Magnus6, Method::Magnus4}) {
    // A purely relative tolerance (atol far below Phi) asks for every digit of the decay; the
    // exponential steps keep it. The error estimate must stay honest here too.
    PropagationOptions o;
    o.method = m;
    o.rtol = 1e-10;
    o.atol = 1e-80;
    Propagator p(state_generator(s), o);
    Eigen::MatrixXd phi = p.transition(0, 2);
    const double err = (phi - ref).cwiseAbs().maxCoeff();
    EXPECT_LT(relative_error(phi, ref), 1e-6) << method_name(m);
    EXPECT_LE(err, 10 * p.stats().error_estimate + 1e-9 * ref.cwiseAbs().maxCoeff()) << method_name(m);
    EXPECT_GT(p.stats().rejected_steps, 0) << method_name(m) << ": the first, far too long steps are rejected";
  }
}

TEST(PropagationRobustness, WholeWindowFirstStepIsRetriedShorter) {
  // A first trial over the whole window (about 400 decay times, 12 modulation periods): its
  // truncated Omega has huge commutator terms whose exponential overflows. That trial must be
  // rejected and the run succeed.
  const Eigen::Matrix2d ref = stiff_reference();
  FunctionSystem s = stiff_oscillator();
  for (Method m : {Method::Magnus4, Method::Magnus6, Method::Rk8}) {
    PropagationOptions o;
    o.method = m;
    o.initial_step = 2.0;
    Propagator p(state_generator(s), o);
    Eigen::MatrixXd phi;
    ASSERT_NO_THROW(phi = p.transition(0, 2)) << method_name(m);
    EXPECT_LT((phi - ref).cwiseAbs().maxCoeff(), 1e-8) << method_name(m);
    EXPECT_GT(p.stats().rejected_steps, 0) << method_name(m);
  }
}

TEST(PropagationRobustness, HugeWindowsEndQuicklyWithAClearMessage) {
  auto sys = load_model(ordex_test::model_path("orbit_relative_motion.toml"));
  for (bool use_period : {true, false}) {
    for (double t1 : {1e23, 1e308}) {
      PropagationOptions o;
      o.use_period = use_period;
      Propagator p(state_generator(*sys), o);
      const auto start = std::chrono::steady_clock::now();
      std::string message;
      try {
        p.transition(0, t1);
      } catch (const NumericalError& e) {
        message = e.what();
      }
      const double seconds =
          std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      // A hang guard, not a timing claim: the projected step count ends the run after a few
      // thousand steps (milliseconds) where max_steps alone would take minutes.
      EXPECT_LT(seconds, 60.0) << t1;
      if (use_period)
        EXPECT_NE(message.find("periods, more than 2^53"), std::string::npos) << message;
      else
        EXPECT_NE(message.find("PropagationOptions::max_steps"), std::string::npos) << message;
      EXPECT_EQ(message.find('\n'), std::string::npos) << message;
    }
  }
}

TEST(PropagationRobustness, UnstableGeneratorIsANumericalErrorNotAHang) {
  // x' = 800 x over [0, 2]: Phi = e^1600 overflows a double, a truly non-finite solution.
  FunctionSystem s({"x"});
  s.set_A([](double, MatrixRef a) { a(0, 0) = 800.0; });
  for (Method m : {Method::Magnus4, Method::Magnus6}) {
    PropagationOptions o;
    o.method = m;
    Propagator p(state_generator(s), o);
    try {
      p.transition(0, 2);
      FAIL() << method_name(m);
    } catch (const NumericalError& e) {
      // Near the largest double the steps shrink towards underflow: either failure names it.
      const std::string what = e.what();
      EXPECT_TRUE(what.find("not finite") != std::string::npos ||
                  what.find("step size underflow") != std::string::npos)
          << what;
    }
  }
}

TEST(StepController, FollowsTheProportionalIntegralLawWithinItsLimits) {
  // The law of Hairer, Norsett & Wanner (Solving ODEs I, Sec. IV.2) for an estimate of order
  // h^8 with beta = 0.04: factor = 0.9 e^-(1/8 - 0.03) e_prev^0.04, within [1/3, 6].
  StepController c(8.0, 1.0 / 3.0, 6.0);
  EXPECT_NEAR(c.next_factor(1.0), 0.9, 1e-15);  // e_prev starts at 1
  EXPECT_NEAR(c.next_factor(0.5), 0.9 * std::pow(0.5, -0.095), 1e-14);
  EXPECT_NEAR(c.next_factor(0.25), 0.9 * std::pow(0.25, -0.095) * std::pow(0.5, 0.04), 1e-14);
  EXPECT_EQ(c.next_factor(0.0), 6.0);               // no error seen: the largest growth
  EXPECT_EQ(c.next_factor(1e-30), 6.0);             // capped
  EXPECT_NEAR(c.next_factor(2.0), 0.9 * std::pow(2.0, -1.0 / 8.0), 1e-15);  // rejected: plain law
  EXPECT_LE(c.next_factor(1e-6), 1.0);              // no growth right after a rejection
  EXPECT_GT(c.next_factor(1e-6), 1.0);              // and growth again after that
  EXPECT_EQ(c.next_factor(std::numeric_limits<double>::infinity()), 1.0 / 3.0);  // a non-finite trial
  EXPECT_EQ(c.next_factor(1e12), 1.0 / 3.0);
}
