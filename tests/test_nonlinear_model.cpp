// Nonlinear model files and their linearization about the nominal (lib/nonlinear): exact
// Jacobians against hand-derived closed forms, the two-body chaser against the published
// relative-motion equations, and bad input.
#include <gtest/gtest.h>

#include <boost/math/special_functions/ellint_1.hpp>
#include <boost/math/special_functions/jacobi_elliptic.hpp>
#include <cmath>

#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "nonlinear/nonlinear_model.hpp"
#include "support.hpp"

using namespace ordex;
using namespace ordex_test;

namespace {

std::string write_model(const std::string& name, const std::string& text) {
  const std::string path = temp_dir() + "/" + name;
  write_file(path, text);
  return path;
}

const char* kPendulum = R"M(
[system]
states = ["theta", "omega"]
inputs = ["torque"]
outputs = ["height"]
[window]
from = 0
to = 3
[parameters]
g = 9.81
L = 0.7
mass = 0.4
[define]
w2 = "g/L"
[dynamics]
f = ["omega", "-w2*sin(theta) + torque/(mass*L^2)"]
h = ["L*(1 - cos(theta)) + 0*torque"]
[nominal]
x0 = [1.1, 0]
u = ["0"]
)M";

}  // namespace

// Simple pendulum released from rest at theta0: theta(t) = 2 asin(k sn(K(k) - w0 t, k)),
// k = sin(theta0/2) (the textbook closed form in Jacobi elliptic functions, e.g. Lawden,
// "Elliptic Functions and Applications", ch. 5; sn and K from Boost.Math). The Jacobian by
// hand: A = [[0, 1], [-w0^2 cos(theta), 0]], B = [0; 1/(m L^2)], C = [L sin(theta), 0], D = 0.
TEST(NonlinearModel, PendulumJacobiansAlongTheNominalMatchTheClosedForm) {
  const std::string path = write_model("pendulum.toml", kPendulum);
  PropagationOptions o;
  o.rtol = 1e-10;
  o.atol = 1e-12;
  auto sys = load_linearized_model(path, {}, o);
  ASSERT_EQ(sys->states(), 2);
  EXPECT_NE(sys->info().title.find("linearized about its nominal"), std::string::npos);
  const double g = 9.81, L = 0.7, mass = 0.4, w0 = std::sqrt(g / L), k = std::sin(1.1 / 2);
  const double K = boost::math::ellint_1(k);
  for (double t : {0.0, 0.37, 1.0, 1.9, 2.5, 3.0}) {
    const double theta = 2 * std::asin(k * boost::math::jacobi_sn(k, K - w0 * t));
    Eigen::MatrixXd A = sys->A(t), B = sys->B(t), C = sys->C(t), D = sys->D(t);
    EXPECT_NEAR(A(1, 0), -w0 * w0 * std::cos(theta), 1e-7) << "t = " << t;
    EXPECT_EQ(A(0, 0), 0.0);
    EXPECT_EQ(A(0, 1), 1.0);
    EXPECT_EQ(A(1, 1), 0.0);
    EXPECT_NEAR(B(1, 0), 1 / (mass * L * L), 1e-12);
    EXPECT_NEAR(C(0, 0), L * std::sin(theta), 1e-7);
    EXPECT_EQ(D(0, 0), 0.0);
  }
  // A parameter override reaches f and its derivatives.
  auto heavy = load_linearized_model(path, {{"mass", 0.8}}, o);
  EXPECT_NEAR(heavy->B(1.0)(1, 0), 1 / (0.8 * L * L), 1e-12);
}

// The chaser in full two-body motion linearizes, about the target, to the relative-motion
// equations of Tschauner & Hempel (1965) in the time domain: the orbit model of the repository
// (its matrices typed from the published equations), to 1e-10 relative along the whole orbit.
TEST(NonlinearModel, TwoBodyChaserLinearizesToTheEllipticRelativeMotionEquations) {
  auto lin = load_linearized_model(model_path("chaser_two_body.toml"));
  auto ref = load_model(model_path("orbit_relative_motion.toml"));
  const double T = 2 * M_PI * std::sqrt(std::pow(9200.0, 3) / 398600.4418);
  for (int i = 0; i <= 40; ++i) {
    const double t = T * i / 40.0;
    const Eigen::MatrixXd a = lin->A(t), b = ref->A(t);
    EXPECT_LE((a - b).cwiseAbs().maxCoeff(), 1e-10 * b.cwiseAbs().maxCoeff()) << "t = " << t;
    EXPECT_LE((lin->B(t) - ref->B(t)).cwiseAbs().maxCoeff(), 1e-15);
    EXPECT_LE((lin->C(t) - ref->C(t)).cwiseAbs().maxCoeff(), 1e-15);
  }
}

// Circular target (ecc = 0): the closed-form Clohessy-Wiltshire (Hill) matrix, with
// n = sqrt(mu/a^3): x'' = 3 n^2 x + 2 n y', y'' = -2 n x', z'' = -n^2 z.
TEST(NonlinearModel, CircularTargetGivesTheHillMatrix) {
  auto lin = load_linearized_model(model_path("chaser_two_body.toml"), {{"ecc", 0.0}});
  const double n = std::sqrt(398600.4418 / std::pow(9200.0, 3));
  Eigen::MatrixXd cw = Eigen::MatrixXd::Zero(6, 6);
  cw(0, 3) = cw(1, 4) = cw(2, 5) = 1;
  cw(3, 0) = 3 * n * n;
  cw(3, 4) = 2 * n;
  cw(4, 3) = -2 * n;
  cw(5, 2) = -n * n;
  for (double t : {0.0, 1234.5, 6000.0})
    EXPECT_LE((lin->A(t) - cw).cwiseAbs().maxCoeff(), 1e-10 * n * n) << "t = " << t;
}

namespace {
void expect_input_error(const std::string& text, const std::string& fragment) {
  const std::string path = write_model("bad.toml", text);
  try {
    load_linearized_model(path);
    ADD_FAILURE() << "no error for " << fragment;
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find(fragment), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find(path), std::string::npos) << e.what();
  }
}

std::string pendulum_with(const std::string& from, const std::string& to) {
  std::string s = kPendulum;
  const std::size_t at = s.find(from);
  EXPECT_NE(at, std::string::npos);
  return s.replace(at, from.size(), to);
}
}  // namespace

TEST(NonlinearModel, BadInputNamesTheKey) {
  expect_input_error(pendulum_with("-w2*sin(theta)", "-w3*sin(theta)"), "dynamics.f[2]: unknown symbol 'w3'");
  expect_input_error(pendulum_with(R"(f = ["omega", )", R"(f = [)"), "dynamics.f: 1 expressions, the model has 2 states");
  expect_input_error(pendulum_with("-w2*sin(theta)", "-w2*(theta > 0 ? 1 : -1)"), "dynamics.f[2]");
  expect_input_error(pendulum_with("-w2*sin(theta)", "-w2*floor(theta)"), "cannot be differentiated");
  expect_input_error(pendulum_with("x0 = [1.1, 0]", "x0 = [1.1]"), "nominal.x0");
  expect_input_error(pendulum_with("u = [\"0\"]", ""), "nominal.u: missing");
  expect_input_error(pendulum_with("[window]\nfrom = 0\nto = 3", ""), "window: missing");
  expect_input_error(pendulum_with("u = [\"0\"]", "input = \"nothere.csv\""), "nothere.csv");
}

TEST(NonlinearModel, TrajectoryCsvMustCoverTheWindow) {
  write_file(temp_dir() + "/short.csv", "t,theta,omega,torque\n0,0,0,0\n1,0,0,0\n");
  expect_input_error(pendulum_with("x0 = [1.1, 0]\nu = [\"0\"]", "trajectory = \"short.csv\""),
                     "nominal.trajectory: " + temp_dir() + "/short.csv covers [0, 1], not the window [0, 3]");
}

TEST(NonlinearModel, EveryAppAcceptsANonlinearModel) {
  const std::string path = write_model("pendulum_app.toml", kPendulum);
  RunResult r = run_app("ordex-propagate", "--model " + path + " --json -");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("linearized about its nominal"), std::string::npos) << r.out;
}

// Nominal input from a CSV: x' = x u with u_n = t (linear between rows, exact here) and x(0) = 2
// gives x_n = 2 exp(t^2/2) (separation of variables): A = u_n = t, B = x_n.
TEST(NonlinearModel, NominalInputCsvDrivesTheNominal) {
  write_file(temp_dir() + "/ramp.csv", "t,u\n0,0\n0.5,0.5\n1,1\n");
  const std::string path = write_model("ramp.toml", R"M(
[system]
states = ["x"]
inputs = ["u"]
[window]
from = 0
to = 1
[dynamics]
f = ["x*u"]
[nominal]
x0 = [2]
input = "ramp.csv"
)M");
  PropagationOptions o;
  o.rtol = 1e-10;
  o.atol = 1e-12;
  auto sys = load_linearized_model(path, {}, o);
  for (double t : {0.0, 0.3, 0.5, 0.77, 1.0}) {
    EXPECT_NEAR(sys->A(t)(0, 0), t, 1e-12) << "t = " << t;
    EXPECT_NEAR(sys->B(t)(0, 0), 2 * std::exp(t * t / 2), 1e-8) << "t = " << t;
  }
}

// Nominal trajectory from a CSV: f = -x^3 + u about x_n = 1 + t (linear rows: exact between
// them), A = -3 x_n^2, B = 1.
TEST(NonlinearModel, NominalTrajectoryCsvIsUsedAsGiven) {
  write_file(temp_dir() + "/traj.csv", "t,x,u\n0,1,0\n1,2,0\n2,3,0\n");
  const std::string path = write_model("traj.toml", R"M(
[system]
states = ["x"]
inputs = ["u"]
[dynamics]
f = ["-x^3 + u"]
[nominal]
trajectory = "traj.csv"
)M");
  auto sys = load_linearized_model(path);
  ASSERT_TRUE(sys->info().window.has_value());
  EXPECT_EQ(sys->info().window->second, 2.0);
  for (double t : {0.0, 0.5, 1.25, 2.0}) {
    EXPECT_NEAR(sys->A(t)(0, 0), -3 * (1 + t) * (1 + t), 1e-12) << "t = " << t;
    EXPECT_EQ(sys->B(t)(0, 0), 1.0);
  }
}

// A Jacobian that is not finite on the nominal (d sqrt(x)/dx at x = 0) stops every app with
// exit 2 naming the entry.
TEST(NonlinearModel, JacobianNotFiniteOnTheNominalIsRefused) {
  const std::string path = write_model("sqrt.toml", R"M(
[system]
states = ["x"]
[window]
from = 0
to = 1
[dynamics]
f = ["sqrt(x)"]
[nominal]
x0 = [0]
)M");
  RunResult r = run_app("ordex-propagate", "--model " + path);
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("not finite"), std::string::npos) << r.err;
  EXPECT_EQ(line_count(r.err), 1) << r.err;
  r = run_app("ordex-linearize", "--model " + path + " --csv " + temp_dir() + "/sqrt.csv");
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("not finite"), std::string::npos) << r.err;
  EXPECT_FALSE(file_exists(temp_dir() + "/sqrt.csv"));
}

// A table-driven model: f = -cl(t) x^2 + gust with cl from a [table] (linear rows, cl = 2 t) and
// a [define] of time only (q = 3 cl), about the nominal x_n = 1 + t of a trajectory CSV. By hand:
// A = -2 cl x_n - q = -4 t (1 + t) - 6 t, B = 1.
TEST(NonlinearModel, TableDrivenJacobiansMatchTheHandDerivation) {
  write_file(temp_dir() + "/coef.csv", "t,cl\n0,0\n1,2\n2,4\n");
  write_file(temp_dir() + "/path.csv", "t,x,gust\n0,1,0\n2,3,0\n");
  const std::string path = write_model("table_driven.toml", R"M(
[system]
states = ["x"]
inputs = ["gust"]
[table]
file = "coef.csv"
[define]
q = "3*cl"
[dynamics]
f = ["-cl*x^2 - q*x + gust"]
[nominal]
trajectory = "path.csv"
)M");
  auto sys = load_linearized_model(path);
  for (double t : {0.0, 0.4, 1.0, 1.7, 2.0}) {
    EXPECT_NEAR(sys->A(t)(0, 0), -4 * t * (1 + t) - 6 * t, 1e-12) << "t = " << t;
    EXPECT_EQ(sys->B(t)(0, 0), 1.0);
  }
}
