// Model files (CONTRACT.md "Model file"): every key, --set overrides, [define] order, every
// class of mistake with its message, the bundled models, clone() and allocation-free
// evaluation.
#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <cstdlib>
#include <new>
#include <thread>

#include "io/errors.hpp"
#include "model/expression_system.hpp"
#include "model/model_file.hpp"
#include "support.hpp"

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

using ordex::InputError;
using ordex::load_model;
using ordex_test::model_path;
using ordex_test::temp_dir;
using ordex_test::write_file;

constexpr double kPi = 3.14159265358979323846;

std::string write_model(const std::string& name, const std::string& text) {
  std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

// The InputError message of loading TEXT as a model file (fails the test if it loads).
std::string load_error(const std::string& text, const ordex::ParameterOverrides& ov = {}) {
  std::string path = write_model("m.toml", text);
  try {
    load_model(path, ov);
  } catch (const InputError& e) {
    std::string msg = e.what();
    // Every message starts with the file.
    EXPECT_EQ(msg.rfind(path, 0), 0u) << msg;
    return msg.substr(path.size());
  }
  ADD_FAILURE() << "no error for:\n" << text;
  return "";
}

const char* kHeader = "[system]\nstates = [\"x\", \"v\"]\n";

TEST(ModelFile, ReadsEveryKey) {
  std::string path = write_model("full.toml", R"M(
# comment
[system]
title = "Every key"
states = ["x", "v"]
inputs = ["f", "g"]
outputs = ["y"]
period = "2*pi/w"
breakpoints = [2.5, "t_switch"]

[window]
from = "t_switch - 1"
to = 10

[parameters]
w = 2
t_switch = 1.25
damping = 0.1

[define]
k = "w^2*(1 + 0.5*sin(w*t))"

[matrices]
A = [[0, 1], ["-k", "-2*damping"]]
B = [[0, 0.5], [1, "t"]]
C = [["cos(t)", 0]]
D = [[0, 3e-1]]
)M");
  auto sys = load_model(path);
  const ordex::SystemInfo& info = sys->info();
  EXPECT_EQ(info.title, "Every key");
  EXPECT_EQ(info.source, path);
  EXPECT_EQ(info.state_names, (std::vector<std::string>{"x", "v"}));
  EXPECT_EQ(info.input_names, (std::vector<std::string>{"f", "g"}));
  EXPECT_EQ(info.output_names, (std::vector<std::string>{"y"}));
  ASSERT_TRUE(info.period.has_value());
  EXPECT_DOUBLE_EQ(*info.period, kPi);
  EXPECT_EQ(info.breakpoints, (std::vector<double>{1.25, 2.5}));  // sorted
  ASSERT_TRUE(info.window.has_value());
  EXPECT_DOUBLE_EQ(info.window->first, 0.25);
  EXPECT_DOUBLE_EQ(info.window->second, 10.0);
  const double t = 0.7;
  Eigen::Matrix2d a;
  a << 0, 1, -4 * (1 + 0.5 * std::sin(2 * t)), -0.2;
  EXPECT_LT((sys->A(t) - a).norm(), 1e-14);
  Eigen::Matrix2d b;
  b << 0, 0.5, 1, t;
  EXPECT_EQ(sys->B(t), b);
  EXPECT_DOUBLE_EQ(sys->C(t)(0, 0), std::cos(t));
  EXPECT_DOUBLE_EQ(sys->C(t)(0, 1), 0.0);
  EXPECT_DOUBLE_EQ(sys->D(t)(0, 1), 0.3);
  auto* es = dynamic_cast<ordex::ExpressionSystem*>(sys.get());
  ASSERT_NE(es, nullptr);
  EXPECT_EQ(es->time_varying_entries(), 3);  // -k, t, cos(t); the rest are stored once
}

TEST(ModelFile, OptionalPartsDefault) {
  auto sys = load_model(write_model("min.toml", std::string(kHeader) + "[matrices]\nA = [[0, 1], [-1, 0]]\n"));
  EXPECT_EQ(sys->inputs(), 0);
  EXPECT_EQ(sys->outputs(), 0);
  EXPECT_FALSE(sys->info().period.has_value());
  EXPECT_FALSE(sys->info().window.has_value());
  EXPECT_TRUE(sys->info().breakpoints.empty());
  EXPECT_TRUE(sys->info().title.empty());
  // D is zero when absent.
  auto sys2 = load_model(write_model("nod.toml", R"M(
[system]
states = ["x"]
inputs = ["u"]
outputs = ["y"]
[matrices]
A = [[-1]]
B = [[1]]
C = [[2]]
)M"));
  EXPECT_EQ(sys2->D(0.0)(0, 0), 0.0);
}

TEST(ModelFile, OverridesReplaceParametersEverywhere) {
  std::string path = write_model("ov.toml", R"M(
[system]
states = ["x", "v"]
period = "2*pi/w"
[window]
from = 0
to = "2*pi/w"
[parameters]
w = 1
c = 0.5
[define]
w2 = "w^2"
[matrices]
A = [[0, 1], ["-w2*(1 + c*cos(t))", 0]]
)M");
  auto base = load_model(path);
  auto over = load_model(path, {{"w", 2.0}});
  EXPECT_DOUBLE_EQ(*base->info().period, 2 * kPi);
  EXPECT_DOUBLE_EQ(*over->info().period, kPi);
  EXPECT_DOUBLE_EQ(over->info().window->second, kPi);
  EXPECT_DOUBLE_EQ(over->A(0.3)(1, 0), -4 * (1 + 0.5 * std::cos(0.3)));
  EXPECT_DOUBLE_EQ(base->A(0.3)(1, 0), -(1 + 0.5 * std::cos(0.3)));
  try {
    load_model(path, {{"omega", 2.0}});
    ADD_FAILURE() << "an undeclared override must fail";
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()),
              path + ": --set omega: the model has no parameter 'omega' (its parameters: w, c)");
  }
  // parse_override feeds load_model the way the apps do.
  auto kv = ordex::parse_override("c=2*0.25");
  auto via_text = load_model(path, {{kv.first, kv.second}});
  EXPECT_DOUBLE_EQ(via_text->A(0.0)(1, 0), -1.5);
}

TEST(ModelFile, DefinitionsFollowFileOrder) {
  // Keys are deliberately not in alphabetical order: z is used by m, m by a.
  std::string path = write_model("order.toml", R"M(
[system]
states = ["x"]
[parameters]
p = 3
[define]
z = "p + t"
m = "2*z"
c0 = 4
a = "m - z + c0"
[matrices]
A = [["a"]]
)M");
  auto sys = load_model(path);
  EXPECT_DOUBLE_EQ(sys->A(2.0)(0, 0), (3 + 2.0) + 4);
  auto* es = dynamic_cast<ordex::ExpressionSystem*>(sys.get());
  EXPECT_DOUBLE_EQ(es->symbol_value("m", 1.0), 8.0);
  EXPECT_DOUBLE_EQ(es->symbol_value("p", 1.0), 3.0);

  std::string later = load_error(R"M(
[system]
states = ["x"]
[define]
a = "2*b"
b = "t"
[matrices]
A = [["a"]]
)M");
  EXPECT_NE(later.find(": define.a: 'b' is defined later (define.b, line 6)"), std::string::npos) << later;
  std::string self = load_error(R"M(
[system]
states = ["x"]
[define]
a = "a + 1"
[matrices]
A = [["a"]]
)M");
  EXPECT_NE(self.find(": define.a: 'a' refers to itself"), std::string::npos) << self;
}

struct BadModel {
  const char* what;
  std::string text;
  std::string expected;  // the message after "PATH"
};

TEST(ModelFile, EveryMistakeNamesTheKey) {
  const std::string h = kHeader;
  const std::vector<BadModel> cases = {
      {"unknown symbol", h + "[parameters]\nomega = 1\n[matrices]\nA = [[0, 1], [\"-omeg^2\", 0]]\n",
       ": matrices.A[2][1]: unknown symbol 'omeg' in '-omeg^2'"},
      {"unknown function", h + "[matrices]\nA = [[0, 1], [\"sine(t)\", 0]]\n",
       ": matrices.A[2][1]: unknown function 'sine' in 'sine(t)'"},
      {"too many rows", h + "[matrices]\nA = [[0, 1], [0, 0], [1, 1]]\n",
       ": matrices.A: 3 rows, system.states has 2"},
      {"short row", h + "[matrices]\nA = [[0, 1], [0]]\n", ": matrices.A[2]: 1 entry, system.states has 2"},
      {"missing A", h + "[matrices]\n", ": matrices.A: missing"},
      {"missing matrices", h, ": matrices: missing"},
      {"missing states", "[system]\ntitle = \"x\"\n[matrices]\nA = [[0]]\n", ": system.states: missing"},
      {"empty states", "[system]\nstates = []\n[matrices]\nA = []\n", ": system.states: empty"},
      {"missing system", "[matrices]\nA = [[0]]\n", ": system: missing"},
      {"B without inputs", h + "[matrices]\nA = [[0, 1], [0, 0]]\nB = [[0], [1]]\n",
       ": matrices.B: the model has no inputs"},
      {"inputs without B", "[system]\nstates = [\"x\"]\ninputs = [\"u\"]\n[matrices]\nA = [[0]]\n",
       ": matrices.B: missing (system.inputs has 1)"},
      {"B with wrong columns", "[system]\nstates = [\"x\"]\ninputs = [\"u\"]\n[matrices]\nA = [[0]]\nB = [[1, 2]]\n",
       ": matrices.B[1]: 2 entries, system.inputs has 1"},
      {"C without outputs", h + "[matrices]\nA = [[0, 1], [0, 0]]\nC = [[1, 0]]\n",
       ": matrices.C: the model has no outputs"},
      {"C flat list", "[system]\nstates = [\"x\", \"v\"]\noutputs = [\"y\"]\n[matrices]\nA = [[0, 1], [0, 0]]\nC = [1, 0]\n",
       ": matrices.C: 2 rows, system.outputs has 1"},
      {"D without inputs", "[system]\nstates = [\"x\"]\noutputs = [\"y\"]\n[matrices]\nA = [[0]]\nC = [[1]]\nD = [[0]]\n",
       ": matrices.D: needs both inputs and outputs; the model has no inputs"},
      {"boolean entry", h + "[matrices]\nA = [[0, true], [0, 0]]\n",
       ": matrices.A[1][2]: expected a number or an expression string, found a boolean"},
      {"matrix not a list", h + "[matrices]\nA = 3\n", ": matrices.A: expected a list of rows"},
      {"row not a list", h + "[matrices]\nA = [[0, 1], 5]\n", ": matrices.A[2]: expected a list of entries"},
      {"nan literal", h + "[matrices]\nA = [[0, nan], [0, 0]]\n", ": matrices.A[1][2]: not a finite number"},
      {"unknown key", "[system]\nstates = [\"x\"]\nstats = [\"y\"]\n[matrices]\nA = [[0]]\n",
       ": system.stats: unknown key (line 3; expected title, states, inputs, outputs, period, breakpoints); "
       "did you mean 'states'?"},
      {"unknown table", h + "[matrix]\nA = [[0, 1], [0, 0]]\n", ": matrix: unknown key"},
      {"misspelled table", h + "[paramters]\nA = 1\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": paramters: unknown key (line 3; expected the tables [system, window, parameters, define, table, "
       "matrices]); did you mean 'parameters'?"},
      {"unknown matrix", h + "[matrices]\nA = [[0, 1], [0, 0]]\nE = [[1]]\n", ": matrices.E: unknown key"},
      {"unknown window key", h + "[window]\nfrom = 0\nuntil = 1\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": window.until: unknown key"},
      {"window without to", h + "[window]\nfrom = 0\n[matrices]\nA = [[0, 1], [0, 0]]\n", ": window.to: missing"},
      {"empty window", h + "[window]\nfrom = 1\nto = \"2 - 1\"\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": window: from and to are equal"},
      {"window uses t", h + "[window]\nfrom = 0\nto = \"t\"\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": window.to: 't' cannot be used here"},
      {"period not positive", h + "period = -1\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": system.period: -1 is not positive"},
      {"breakpoints not a list", h + "breakpoints = 1.5\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": system.breakpoints: expected a list of times, found a number"},
      {"breakpoint symbol", h + "breakpoints = [1, \"tb\"]\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": system.breakpoints[2]: unknown symbol 'tb'"},
      {"parameter expression", h + "[parameters]\na = \"1 + 2\"\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": parameters.a: expected a number, found a string"},
      {"parameter named like a function", h + "[parameters]\nsin = 1\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": parameters.sin: 'sin' is a function name"},
      {"parameter named t", h + "[parameters]\nt = 1\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": parameters.t: 't' is the independent variable"},
      {"define clashes with parameter", h + "[parameters]\nk = 1\n[define]\nk = \"2\"\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": define.k: 'k' is already parameters.k"},
      {"define not text", h + "[define]\nk = [1]\n[matrices]\nA = [[0, 1], [0, 0]]\n",
       ": define.k: expected a number or an expression string, found a list"},
      {"duplicate state", "[system]\nstates = [\"x\", \"x\"]\n[matrices]\nA = [[0, 0], [0, 0]]\n",
       ": system.states[2]: 'x' is already a state name"},
      {"output named like a state", "[system]\nstates = [\"x\"]\noutputs = [\"x\"]\n[matrices]\nA = [[0]]\nC = [[1]]\n",
       ": system.outputs[1]: 'x' is already a state name"},
      {"state name with comma", "[system]\nstates = [\"x,y\"]\n[matrices]\nA = [[0]]\n",
       ": system.states[1]: 'x,y' contains a comma"},
      {"state not a string", "[system]\nstates = [1]\n[matrices]\nA = [[0]]\n",
       ": system.states[1]: expected a name in quotes, found a number"},
      {"infinite at load", h + "[window]\nfrom = 0\nto = 1\n[matrices]\nA = [[0, 1], [\"1/t\", 0]]\n",
       ": matrices.A[2][1]: '1/t' evaluates to inf at t = 0"},
      {"constant entry not finite", h + "[matrices]\nA = [[0, \"sqrt(-1)\"], [0, 0]]\n",
       ": matrices.A[1][2]: evaluates to"},
      {"bad eccentricity", h + "[window]\nfrom = 0\nto = 1\n[parameters]\necc = 1.2\n[define]\nf = \"true_anomaly(t, ecc)\"\n[matrices]\nA = [[0, 1], [\"f\", 0]]\n",
       ": define.f: 'true_anomaly(t, ecc)' evaluates to nan at t = 0"},
      {"constant define not finite", h + "[define]\nk = \"log(0)\"\n[matrices]\nA = [[0, 1], [\"k\", 0]]\n",
       ": define.k: 'log(0)' evaluates to -inf"},
      {"expression syntax", h + "[matrices]\nA = [[0, 1], [\"2*(t\", 0]]\n", ": matrices.A[2][1]: cannot parse '2*(t'"},
      {"title not text", "[system]\ntitle = 3\nstates = [\"x\"]\n[matrices]\nA = [[0]]\n",
       ": system.title: expected text in quotes, found a number"},
      {"system not a table", "system = 3\n[matrices]\nA = [[0]]\n", ": system: expected a table [system]"},
  };
  for (const BadModel& c : cases) {
    std::string msg = load_error(c.text);
    EXPECT_EQ(msg.rfind(c.expected, 0), 0u) << c.what << "\n  got:      " << msg
                                            << "\n  expected: " << c.expected << "...";
  }
}

TEST(ModelFile, TomlSyntaxErrorGivesLineAndColumn) {
  std::string msg = load_error("[system]\nstates = [\"x\", \"v\"\n[matrices]\nA = [[0]]\n");
  // toml++ reports the place it stopped; the message must carry file:line:column.
  EXPECT_EQ(msg.rfind(":3:", 0), 0u) << msg;
  EXPECT_NE(msg.find("TOML syntax error"), std::string::npos) << msg;
  std::string dup = load_error("[system]\nstates = [\"x\"]\nstates = [\"y\"]\n[matrices]\nA = [[0]]\n");
  EXPECT_EQ(dup.rfind(":3:", 0), 0u) << dup;
}

TEST(ModelFile, MissingFile) {
  try {
    load_model("/nonexistent/dir/model.toml");
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()), "/nonexistent/dir/model.toml: no such model file");
  }
  try {
    load_model(temp_dir());
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()), temp_dir() + ": is a folder, not a model file");
  }
  // An empty file is valid TOML but not a model.
  EXPECT_NE(load_error("").find(": system: missing"), std::string::npos);
}

TEST(ModelFile, WrongSizedOutputIsRefused) {
  auto sys = load_model(model_path("mathieu.toml"));
  Eigen::MatrixXd small(1, 2);
  EXPECT_THROW(sys->A(0.0, small), std::invalid_argument);
}

TEST(ModelFile, NonFiniteDuringEvaluationIsNumericalError) {
  auto sys = load_model(write_model("pole.toml", "[system]\nstates = [\"x\"]\n[window]\nfrom = 0\nto = 2\n"
                                                 "[matrices]\nA = [[\"1/(t - 1)\"]]\n"));
  EXPECT_DOUBLE_EQ(sys->A(0.5)(0, 0), -2.0);
  try {
    sys->A(1.0);
    ADD_FAILURE();
  } catch (const ordex::NumericalError& e) {
    std::string msg = e.what();
    EXPECT_NE(msg.find("matrices.A[1][1] = 1/(t - 1) is not finite (inf) at t = 1"), std::string::npos) << msg;
  }
}

// --- bundled models -------------------------------------------------------------------------

TEST(ModelBundled, AllLoad) {
  for (const char* name : {"mathieu.toml", "airy.toml", "switched_stiffness.toml", "pumped_oscillator.toml",
                           "orbit_relative_motion.toml", "vehicle_lateral.toml"}) {
    SCOPED_TRACE(name);
    auto sys = load_model(model_path(name));
    EXPECT_GT(sys->states(), 0);
    EXPECT_FALSE(sys->info().title.empty());
    EXPECT_TRUE(sys->info().window.has_value());
  }
}

TEST(ModelBundled, MathieuAiryAndSwitched) {
  auto m = load_model(model_path("mathieu.toml"), {{"a", 2.5}, {"q", 0.7}});
  EXPECT_DOUBLE_EQ(*m->info().period, kPi);
  EXPECT_DOUBLE_EQ(m->info().window->second, kPi);
  for (double t : {0.0, 0.4, 2.9}) {
    Eigen::Matrix2d a;
    a << 0, 1, -(2.5 - 2 * 0.7 * std::cos(2 * t)), 0;  // x'' + (a - 2q cos 2t) x = 0
    EXPECT_LT((m->A(t) - a).norm(), 1e-15);
  }
  auto airy = load_model(model_path("airy.toml"));
  EXPECT_DOUBLE_EQ(airy->A(1.7)(1, 0), 1.7);  // x'' = t x
  EXPECT_DOUBLE_EQ(airy->A(1.7)(0, 1), 1.0);

  auto sw = load_model(model_path("switched_stiffness.toml"));
  EXPECT_EQ(sw->info().breakpoints, (std::vector<double>{1.5}));
  EXPECT_DOUBLE_EQ(sw->A(1.4999)(1, 0), -1.0);
  EXPECT_DOUBLE_EQ(sw->A(1.5)(1, 0), -4.0);
  EXPECT_EQ(sw->breakpoints_between(0, 3), (std::vector<double>{1.5}));

  auto p = load_model(model_path("pumped_oscillator.toml"), {{"zeta", 0.05}});
  EXPECT_DOUBLE_EQ(*p->info().period, kPi);
  EXPECT_DOUBLE_EQ(p->A(0.0)(1, 1), -0.1);
  EXPECT_DOUBLE_EQ(p->A(0.0)(1, 0), -(1.2 - 0.8));
  EXPECT_EQ(p->B(0.0), (Eigen::MatrixXd(2, 1) << 0, 1).finished());
}

// The orbit model's parts, read back through its definitions.
struct OrbitState {
  double f, r, fdot, fddot;
};
OrbitState orbit_at(const ordex::ExpressionSystem& s, double t) {
  return {s.symbol_value("f", t), s.symbol_value("r", t), s.symbol_value("fdot", t), s.symbol_value("fddot", t)};
}

TEST(ModelOrbit, PeriapsisAndApoapsisMatchVisViva) {
  const double a = 8000.0, e = 0.25, mu = 398600.4418;
  auto sys = load_model(model_path("orbit_relative_motion.toml"), {{"sma", a}, {"ecc", e}, {"t_peri", 100.0}});
  const double period = 2 * kPi * std::sqrt(a * a * a / mu);  // Kepler's third law
  EXPECT_NEAR(*sys->info().period, period, 1e-9 * period);
  EXPECT_NEAR(sys->info().window->first, 100.0, 1e-12);
  EXPECT_NEAR(sys->info().window->second, 100.0 + period, 1e-9 * period);
  // At periapsis r = a(1-e); the speed from the vis-viva law v^2 = mu (2/r - 1/a) is all
  // horizontal, so the frame turns at fdot = v / r, and rdot = fddot = 0.
  for (int apo = 0; apo <= 1; ++apo) {
    double t = 100.0 + apo * period / 2;
    double r = apo ? a * (1 + e) : a * (1 - e);
    double v = std::sqrt(mu * (2 / r - 1 / a));
    double fdot = v / r, g = mu / (r * r * r);
    Eigen::MatrixXd A = sys->A(t);
    SCOPED_TRACE(apo ? "apoapsis" : "periapsis");
    EXPECT_NEAR(A(3, 0), fdot * fdot + 2 * g, 1e-12 * g);
    EXPECT_NEAR(A(3, 4), 2 * fdot, 1e-12 * fdot);
    EXPECT_NEAR(A(4, 3), -2 * fdot, 1e-12 * fdot);
    EXPECT_NEAR(A(4, 1), fdot * fdot - g, 1e-11 * g);
    EXPECT_NEAR(A(5, 2), -g, 1e-12 * g);
    EXPECT_NEAR(A(3, 1), 0.0, 1e-10 * fdot * fdot);  // fddot = 0 at the apsides
    EXPECT_NEAR(A(4, 0), 0.0, 1e-10 * fdot * fdot);
    EXPECT_EQ(A.topRightCorner(3, 3), Eigen::Matrix3d::Identity());
    EXPECT_EQ(A.topLeftCorner(3, 3), Eigen::Matrix3d::Zero());
  }
  EXPECT_EQ(sys->B(0.0).bottomRows(3), Eigen::Matrix3d::Identity());
  EXPECT_EQ(sys->C(0.0).leftCols(3), Eigen::Matrix3d::Identity());
}

TEST(ModelOrbit, RatesAreDerivativesOfTheKeplerMotion) {
  auto sys = load_model(model_path("orbit_relative_motion.toml"));
  auto& es = dynamic_cast<ordex::ExpressionSystem&>(*sys);
  const double period = *sys->info().period;
  for (double frac : {0.05, 0.3, 0.61, 0.9, 1.2}) {
    double t = frac * period, h = 1e-2;
    OrbitState s = orbit_at(es, t), sp = orbit_at(es, t + h), sm = orbit_at(es, t - h);
    EXPECT_NEAR((sp.f - sm.f) / (2 * h), s.fdot, 1e-8 * s.fdot) << t;        // f' = fdot
    EXPECT_NEAR((sp.fdot - sm.fdot) / (2 * h), s.fddot, 1e-6 * std::fabs(s.fddot) + 1e-16) << t;
    // Angular momentum r^2 fdot = sqrt(mu p) is constant.
    EXPECT_NEAR(sp.r * sp.r * sp.fdot, sm.r * sm.r * sm.fdot, 1e-10 * s.r * s.r * s.fdot);
  }
  // f keeps growing over a second orbit (no wrap at 2 pi).
  EXPECT_GT(orbit_at(es, 1.2 * period).f, 2 * kPi);
}

TEST(ModelOrbit, LinearizationMatchesNewtonInTheRotatingFrame) {
  // Exact relative acceleration in a frame rotating at w = fdot z about the target at
  // R = (r, 0, 0): rho'' = g(R + rho) - g(R) - 2 w x rho' - w' x rho - w x (w x rho), with
  // Newton's g(x) = -mu x / |x|^3. A(t) must agree to first order in rho.
  const double mu = 398600.4418;
  auto sys = load_model(model_path("orbit_relative_motion.toml"));
  auto& es = dynamic_cast<ordex::ExpressionSystem&>(*sys);
  const double t = 0.37 * *sys->info().period;
  OrbitState s = orbit_at(es, t);
  Eigen::MatrixXd A = sys->A(t);
  auto error_at = [&](double scale) {
    Eigen::Vector3d rho = scale * Eigen::Vector3d(1.0, -0.7, 0.4);
    Eigen::Vector3d vel = scale * Eigen::Vector3d(1e-3, 2e-3, -1.5e-3);
    Eigen::Vector3d R(s.r, 0, 0), w(0, 0, s.fdot), wd(0, 0, s.fddot);
    auto g = [&](const Eigen::Vector3d& x) -> Eigen::Vector3d { return -mu * x / std::pow(x.norm(), 3); };
    Eigen::Vector3d exact = g(R + rho) - g(R) - 2 * w.cross(vel) - wd.cross(rho) - w.cross(w.cross(rho));
    Eigen::VectorXd x(6);
    x << rho, vel;
    Eigen::Vector3d linear = (A * x).tail(3);
    return std::make_pair((linear - exact).norm(), exact.norm());
  };
  auto e1 = error_at(1.0), e2 = error_at(0.5);
  EXPECT_LT(e1.first, 1e-3 * e1.second);
  double ratio = e1.first / e2.first;  // second-order remainder: halving rho quarters it
  EXPECT_GT(ratio, 3.6);
  EXPECT_LT(ratio, 4.4);
}

// --- clone and allocation -------------------------------------------------------------------

TEST(ModelClone, CopiesAreIndependent) {
  auto original = load_model(model_path("orbit_relative_motion.toml"), {{"ecc", 0.15}});
  auto copy = original->clone();
  const double t1 = 1234.5, t2 = 4321.0;
  Eigen::MatrixXd a1 = original->A(t1);
  Eigen::MatrixXd a2 = copy->A(t2);  // evaluating the copy must not disturb the original
  EXPECT_EQ(original->A(t1), a1);
  EXPECT_NE(a1, a2);
  Eigen::MatrixXd fresh = load_model(model_path("orbit_relative_motion.toml"), {{"ecc", 0.15}})->A(t2);
  original.reset();  // the copy holds no pointer into the original
  EXPECT_EQ(copy->A(t2), fresh);
  EXPECT_EQ(copy->info().state_names.size(), 6u);
  auto copy2 = copy->clone();
  EXPECT_EQ(copy2->A(t2), fresh);
}

TEST(ModelClone, ClonesRunOnThreads) {
  auto original = load_model(model_path("vehicle_lateral.toml"));
  std::vector<double> times;
  for (int k = 0; k <= 400; ++k) times.push_back(20.0 * k / 400.0);
  std::vector<Eigen::MatrixXd> serial;
  for (double t : times) serial.push_back(original->A(t));
  std::vector<std::unique_ptr<ordex::System>> copies;
  for (int i = 0; i < 4; ++i) copies.push_back(original->clone());
  std::vector<int> mismatches(copies.size(), 0);
  std::vector<std::thread> threads;
  for (std::size_t i = 0; i < copies.size(); ++i)
    threads.emplace_back([&, i] {
      Eigen::MatrixXd a(4, 4);
      for (int rep = 0; rep < 20; ++rep)
        for (std::size_t k = 0; k < times.size(); ++k) {
          std::size_t j = (k * 7 + i * 13 + rep) % times.size();  // each thread its own order
          copies[i]->A(times[j], a);
          if (a != serial[j]) ++mismatches[i];
        }
    });
  for (auto& th : threads) th.join();
  for (int m : mismatches) EXPECT_EQ(m, 0);
}

TEST(ModelClone, EvaluationAllocatesNothing) {
  for (const char* name : {"orbit_relative_motion.toml", "vehicle_lateral.toml", "switched_stiffness.toml"}) {
    auto sys = load_model(model_path(name));
    const double t0 = sys->info().window->first, t1 = sys->info().window->second;
    Eigen::MatrixXd a(sys->states(), sys->states()), b(sys->states(), sys->inputs());
    Eigen::MatrixXd c(sys->outputs(), sys->states()), d(sys->outputs(), sys->inputs());
    double trace = 0;
    g_allocations = 0;
    g_counting = true;
    for (int k = 0; k <= 1000; ++k) {
      double t = t0 + (t1 - t0) * k / 1000.0;
      sys->A(t, a);
      sys->B(t, b);
      sys->C(t, c);
      sys->D(t, d);
      trace += a.trace();
    }
    g_counting = false;
    EXPECT_EQ(g_allocations.load(), 0) << name;
    EXPECT_TRUE(std::isfinite(trace));
  }
}

}  // namespace
