// Expressions of model files: syntax, functions, messages, true_anomaly, and the command-line
// helpers parse_override / evaluate_constant.
#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <cstdlib>
#include <new>

#include "io/errors.hpp"
#include "model/expression.hpp"
#include "model/model_file.hpp"

// Counts every allocation while g_counting is set, to show that evaluation allocates nothing.
#pragma GCC diagnostic ignored "-Wmismatched-new-delete"
static std::atomic<long> g_allocations{0};
static std::atomic<bool> g_counting{false};
void* operator new(std::size_t n) {
  if (g_counting) ++g_allocations;
  if (void* p = std::malloc(n ? n : 1)) return p;
  throw std::bad_alloc();
}
void operator delete(void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }

namespace {

using ordex::Expression;
using ordex::InputError;
using ordex::SymbolScope;

constexpr double kPi = 3.14159265358979323846;

// The message of the InputError that F throws ("" when it throws none).
template <class F>
std::string input_error(F f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

double eval(const std::string& text, double t = 0.0) {
  SymbolScope scope;
  double tv = t;
  scope.add_variable("t", &tv);
  return Expression(text, scope, "test").eval();
}

TEST(ModelExpression, ArithmeticPrecedenceAndConditionals) {
  EXPECT_DOUBLE_EQ(eval("1 + 2*3"), 7.0);
  EXPECT_DOUBLE_EQ(eval("(1 + 2)*3"), 9.0);
  EXPECT_DOUBLE_EQ(eval("2^3^2"), 512.0);  // right-associative power, as in mathematics
  EXPECT_DOUBLE_EQ(eval("-2^2"), -4.0);    // -(2^2)
  EXPECT_DOUBLE_EQ(eval("7/2"), 3.5);
  EXPECT_DOUBLE_EQ(eval("1.5e2 + .5"), 150.5);
  EXPECT_DOUBLE_EQ(eval("t < 1.5 ? 10 : 20", 1.0), 10.0);
  EXPECT_DOUBLE_EQ(eval("t < 1.5 ? 10 : 20", 2.0), 20.0);
  EXPECT_DOUBLE_EQ(eval("t <= 2 && t >= 2 ? 1 : 0", 2.0), 1.0);
  EXPECT_DOUBLE_EQ(eval("t == 3 || t != 3"), 1.0);
  EXPECT_DOUBLE_EQ(eval("t > 1 ? (t > 2 ? 3 : 2) : 1", 1.5), 2.0);
}

TEST(ModelExpression, FunctionsAgreeWithTheStandardLibrary) {
  const double x = 0.37;
  EXPECT_DOUBLE_EQ(eval("sin(t)", x), std::sin(x));
  EXPECT_DOUBLE_EQ(eval("cos(t)", x), std::cos(x));
  EXPECT_DOUBLE_EQ(eval("tan(t)", x), std::tan(x));
  EXPECT_DOUBLE_EQ(eval("asin(t)", x), std::asin(x));
  EXPECT_DOUBLE_EQ(eval("acos(t)", x), std::acos(x));
  EXPECT_DOUBLE_EQ(eval("atan(t)", x), std::atan(x));
  EXPECT_DOUBLE_EQ(eval("atan2(t, -1)", x), std::atan2(x, -1.0));
  EXPECT_DOUBLE_EQ(eval("sinh(t)", x), std::sinh(x));
  EXPECT_DOUBLE_EQ(eval("cosh(t)", x), std::cosh(x));
  EXPECT_DOUBLE_EQ(eval("tanh(t)", x), std::tanh(x));
  EXPECT_DOUBLE_EQ(eval("exp(t)", x), std::exp(x));
  EXPECT_DOUBLE_EQ(eval("log(t)", x), std::log(x));  // natural logarithm
  EXPECT_DOUBLE_EQ(eval("log10(t)", x), std::log10(x));
  EXPECT_DOUBLE_EQ(eval("sqrt(t)", x), std::sqrt(x));
  EXPECT_DOUBLE_EQ(eval("abs(-t)", x), x);
  EXPECT_DOUBLE_EQ(eval("floor(-t)", x), -1.0);
  EXPECT_DOUBLE_EQ(eval("min(3, t, 2)", x), x);
  EXPECT_DOUBLE_EQ(eval("max(3, t, 2)", x), 3.0);
  EXPECT_DOUBLE_EQ(eval("pi"), kPi);
  EXPECT_DOUBLE_EQ(eval("true_anomaly(0, 0.3)"), 0.0);
}

TEST(ModelExpression, ConstantsFoldAndVariablesAreRead) {
  SymbolScope scope;
  double t = 0, u = 5;
  scope.add_variable("t", &t);
  scope.add_variable("U", &u);
  scope.add_constant("k", 2.0);
  Expression c("k*pi", scope, "w");
  EXPECT_TRUE(c.is_constant());
  Expression e("k*t + U", scope, "w");
  EXPECT_FALSE(e.is_constant());
  EXPECT_EQ(e.variables_used(), (std::vector<std::string>{"U", "t"}));
  t = 3;
  EXPECT_DOUBLE_EQ(e.eval(), 11.0);
  u = -1;
  EXPECT_DOUBLE_EQ(e.eval(), 5.0);
}

TEST(ModelExpression, MessagesNameThePlaceAndTheSymbol) {
  SymbolScope scope;
  double t = 0;
  scope.add_variable("t", &t);
  scope.add_constant("omega", 1.0);
  scope.add_unavailable("later", "'later' is defined later");
  auto msg = [&](const std::string& text) {
    return input_error([&] { Expression(text, scope, "m.toml: matrices.A[2][1]"); });
  };
  EXPECT_EQ(msg("-omeg^2"),
            "m.toml: matrices.A[2][1]: unknown symbol 'omeg' in '-omeg^2'; did you mean 'omega'?");
  EXPECT_EQ(msg("zeta"), "m.toml: matrices.A[2][1]: unknown symbol 'zeta' in 'zeta'");  // nothing close
  EXPECT_NE(msg("sine(t)").find("unknown function 'sine' in 'sine(t)'; did you mean 'sin'?"), std::string::npos);
  EXPECT_NE(msg("foo(t)").find("unknown function 'foo'"), std::string::npos);
  EXPECT_NE(msg("sin + 1").find("'sin' is a function"), std::string::npos);
  EXPECT_NE(msg("omega(2)").find("'omega' is not a function"), std::string::npos);
  EXPECT_NE(msg("t = 3").find("'=' is not allowed"), std::string::npos);
  EXPECT_NE(msg("1, 2").find("','"), std::string::npos);
  EXPECT_NE(msg("2*later").find("'later' is defined later"), std::string::npos);
  EXPECT_NE(msg("3t").find("write * for a product"), std::string::npos);
  EXPECT_NE(msg("   ").find("empty expression"), std::string::npos);
  std::string syntax = msg("2 + ");
  EXPECT_EQ(syntax.rfind("m.toml: matrices.A[2][1]: cannot parse '2 + '", 0), 0u) << syntax;
  EXPECT_NE(msg("sin(1, 2)").find("cannot parse"), std::string::npos);
  EXPECT_NE(msg("(1 + t").find("cannot parse"), std::string::npos);
  // muparser's own constant names are not part of the language and never appear by accident.
  EXPECT_EQ(msg("_pi"), "m.toml: matrices.A[2][1]: unknown symbol '_pi' in '_pi'; did you mean 'pi'?");
  EXPECT_EQ(msg("_e").rfind("m.toml: matrices.A[2][1]: unknown symbol '_e' in '_e'", 0), 0u);
  EXPECT_NE(msg("ln(2)").find("unknown function 'ln'"), std::string::npos);
  for (const std::string& m : {msg("2 + "), msg("sin(1, 2)"), msg("(1 + t")})
    EXPECT_EQ(m.find("_pi"), std::string::npos) << m;
}

TEST(ModelExpression, SymbolNames) {
  EXPECT_TRUE(ordex::is_valid_symbol_name("omega_2"));
  EXPECT_TRUE(ordex::is_valid_symbol_name("_x"));
  EXPECT_FALSE(ordex::is_valid_symbol_name("2x"));
  EXPECT_FALSE(ordex::is_valid_symbol_name("a-b"));
  EXPECT_FALSE(ordex::is_valid_symbol_name("t"));
  EXPECT_FALSE(ordex::is_valid_symbol_name("pi"));
  EXPECT_FALSE(ordex::is_valid_symbol_name("cos"));
  EXPECT_NE(ordex::symbol_name_problem("cos").find("function"), std::string::npos);
}

TEST(ModelExpression, EvaluationAllocatesNothing) {
  SymbolScope scope;
  double t = 0;
  scope.add_variable("t", &t);
  scope.add_constant("e", 0.3);
  Expression a("t < 1 ? sin(t)*exp(-t) : max(cos(t), t^2, 1)", scope, "w");
  Expression b("true_anomaly(2*t, e) + atan2(t, 2)", scope, "w");
  double sum = 0;
  g_allocations = 0;
  g_counting = true;
  for (int k = 0; k < 2000; ++k) {
    t = 0.001 * k;
    sum += a.eval() + b.eval();
  }
  g_counting = false;
  EXPECT_EQ(g_allocations.load(), 0);
  EXPECT_TRUE(std::isfinite(sum));
  // The counter works: parsing does allocate.
  g_counting = true;
  Expression c("t + 1", scope, "w");
  g_counting = false;
  EXPECT_GT(g_allocations.load(), 0);
}

// --- true_anomaly ---------------------------------------------------------------------------

// The eccentric anomaly that belongs to a true anomaly f in [-pi, pi] (half-angle relation
// tan(E/2) = sqrt((1-e)/(1+e)) tan(f/2), any orbital mechanics text).
long double eccentric_from_true(long double f, long double e) {
  return 2.0L * std::atan2(std::sqrt(1.0L - e) * std::sin(f / 2), std::sqrt(1.0L + e) * std::cos(f / 2));
}

TEST(ModelTrueAnomaly, SatisfiesKeplersEquation) {
  // Kepler's equation E - e sin E = M, checked in long double at the returned f.
  for (double e : {0.0, 0.01, 0.1, 0.3, 0.6, 0.9, 0.97}) {
    for (int k = -50; k <= 50; ++k) {
      double m = kPi * k / 50.0;
      double f = ordex::true_anomaly(m, e);
      long double big_e = eccentric_from_true(f, e);
      long double residual = big_e - e * std::sin(big_e) - m;
      // Tolerance: rounding of f, amplified by dE/df = (1-e^2)^(1/2) / (1 + e cos f).
      EXPECT_LT(std::fabs(static_cast<double>(residual)), 2e-15 * (1 + 1 / (1 - e)))
          << "e = " << e << " M = " << m;
    }
  }
}

TEST(ModelTrueAnomaly, MatchesTheSmallEccentricitySeries) {
  // Equation of the centre (Murray & Dermott, Solar System Dynamics, 1999, eq. 2.88; from
  // memory): f = M + (2e - e^3/4) sin M + (5/4) e^2 sin 2M + (13/12) e^3 sin 3M + O(e^4).
  const double e = 0.005;
  for (int k = 0; k < 40; ++k) {
    double m = -3.0 + 0.17 * k;
    double series = m + (2 * e - e * e * e / 4) * std::sin(m) + 1.25 * e * e * std::sin(2 * m) +
                    13.0 / 12.0 * e * e * e * std::sin(3 * m);
    EXPECT_NEAR(ordex::true_anomaly(m, e), series, 2 * e * e * e * e) << "M = " << m;
  }
}

TEST(ModelTrueAnomaly, RateObeysKeplersSecondLaw) {
  // Conservation of angular momentum: df/dM = (1 + e cos f)^2 / (1 - e^2)^(3/2).
  for (double e : {0.2, 0.7}) {
    for (double m : {-2.5, -0.4, 0.0, 0.9, 3.0, 7.5, 40.0}) {
      const double h = 1e-5;
      double rate = (ordex::true_anomaly(m + h, e) - ordex::true_anomaly(m - h, e)) / (2 * h);
      double f = ordex::true_anomaly(m, e);
      double law = std::pow(1 + e * std::cos(f), 2) / std::pow(1 - e * e, 1.5);
      EXPECT_NEAR(rate, law, 1e-7 * law) << "e = " << e << " M = " << m;
    }
  }
}

TEST(ModelTrueAnomaly, ContinuousAndIncreasingPastFullTurns) {
  const double e = 0.3;
  EXPECT_NEAR(ordex::true_anomaly(2 * kPi, e), 2 * kPi, 1e-14);
  EXPECT_NEAR(ordex::true_anomaly(-2 * kPi, e), -2 * kPi, 1e-14);
  EXPECT_NEAR(ordex::true_anomaly(kPi, e), kPi, 1e-14);      // apoapsis
  EXPECT_NEAR(ordex::true_anomaly(3 * kPi, e), 3 * kPi, 1e-13);
  // No jump of 2 pi anywhere: steps stay below the largest rate times the step.
  const double max_rate = std::pow(1 + e, 2) / std::pow(1 - e * e, 1.5);
  const double h = 1e-3;
  double prev = ordex::true_anomaly(-13.0, e);
  for (double m = -13.0 + h; m < 13.0; m += h) {
    double f = ordex::true_anomaly(m, e);
    ASSERT_GT(f, prev) << "M = " << m;
    ASSERT_LT(f - prev, 1.0001 * max_rate * h) << "M = " << m;
    prev = f;
  }
  // f - M is 2 pi periodic.
  EXPECT_NEAR(ordex::true_anomaly(1.1 + 6 * kPi, e) - 6 * kPi, ordex::true_anomaly(1.1, e), 1e-12);
}

TEST(ModelTrueAnomaly, NearlyParabolicAndInvalidEccentricity) {
  // e close to 1: Newton's first steps leave the bracket; the result must still solve Kepler.
  for (double m : {1e-6, 1e-3, 0.05, 2.0}) {
    double f = ordex::true_anomaly(m, 0.999);
    long double big_e = eccentric_from_true(f, 0.999L);
    EXPECT_LT(std::fabs(static_cast<double>(big_e - 0.999L * std::sin(big_e) - m)), 1e-11) << m;
  }
  EXPECT_TRUE(std::isnan(ordex::true_anomaly(1.0, 1.0)));
  EXPECT_TRUE(std::isnan(ordex::true_anomaly(1.0, -0.1)));
  EXPECT_TRUE(std::isnan(ordex::true_anomaly(NAN, 0.1)));
}

// --- command-line helpers -------------------------------------------------------------------

TEST(ModelCommandLine, EvaluateConstant) {
  EXPECT_DOUBLE_EQ(ordex::evaluate_constant("2*pi", "--to"), 2 * kPi);
  EXPECT_DOUBLE_EQ(ordex::evaluate_constant("1e-3", "--from"), 1e-3);
  EXPECT_DOUBLE_EQ(ordex::evaluate_constant("sqrt(2)/2", "--x0"), std::sqrt(2.0) / 2);
  EXPECT_EQ(input_error([] { ordex::evaluate_constant("2*x", "--to"); }),
            "--to: unknown symbol 'x' in '2*x'");
  EXPECT_NE(input_error([] { ordex::evaluate_constant("t", "--to"); }).find("unknown symbol 't'"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::evaluate_constant("1/0", "--to"); }).find("--to: '1/0' evaluates to inf"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::evaluate_constant("", "--to"); }).find("--to: empty expression"),
            std::string::npos);
}

TEST(ModelCommandLine, ParseOverride) {
  auto kv = ordex::parse_override("q=0.4");
  EXPECT_EQ(kv.first, "q");
  EXPECT_DOUBLE_EQ(kv.second, 0.4);
  kv = ordex::parse_override(" omega = pi/2 ");
  EXPECT_EQ(kv.first, "omega");
  EXPECT_DOUBLE_EQ(kv.second, kPi / 2);
  EXPECT_NE(input_error([] { ordex::parse_override("q"); }).find("--set 'q': expected NAME=VALUE"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::parse_override("=3"); }).find("NAME before '=' is missing"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::parse_override("q="); }).find("VALUE after '=' is missing"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::parse_override("q=abc"); }).find("--set q: unknown symbol 'abc'"),
            std::string::npos);
  EXPECT_NE(input_error([] { ordex::parse_override("2q=1"); }).find("does not start with a letter"),
            std::string::npos);
}

}  // namespace
