// The response module's C++ API against outside references (METHODS.md "Forced response and
// discretization"): scipy.signal.lsim for constant models, scipy.integrate.solve_ivp for a
// time-varying one, closed forms for a scalar step, and the module's own consistency rules
// (batch = single runs, discrete model = response, direct path = exact path).
#include <gtest/gtest.h>

#include <cmath>
#include <sstream>
#include <unsupported/Eigen/MatrixFunctions>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "response/discretize.hpp"
#include "response/respond.hpp"
#include "response/step_matrices.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";

// Rows of comma-separated numbers (the reference scripts' output).
Eigen::MatrixXd parse_rows(const std::string& text) {
  std::vector<std::vector<double>> rows;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<double> r;
    std::istringstream ls(line);
    std::string f;
    while (std::getline(ls, f, ',')) r.push_back(std::stod(f));
    rows.push_back(r);
  }
  Eigen::MatrixXd m(rows.size(), rows.empty() ? 0 : rows[0].size());
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j) m(i, j) = rows[i][j];
  return m;
}

// Writes H as an input CSV with the given header and returns its path.
std::string write_history(const std::string& name, const InputHistory& h, const std::vector<std::string>& names) {
  std::string path = ordex_test::temp_dir() + "/" + name;
  std::ostringstream o;
  o.precision(17);
  o << "t";
  for (const auto& s : names) o << "," << s;
  o << "\n";
  for (std::size_t k = 0; k < h.samples(); ++k) {
    o << h.times[k];
    for (Eigen::Index j = 0; j < h.values.cols(); ++j) o << "," << h.values(k, j);
    o << "\n";
  }
  ordex_test::write_file(path, o.str());
  return path;
}

// Two inputs on N samples over [t0, t1]; JITTER moves the interior times (non-uniform grid).
// The first input jumps at t = 4 (a step command), the second is smooth.
InputHistory two_input_history(int N, double t0, double t1, double jitter = 0.0, double phase = 0.0) {
  std::vector<double> t(N);
  Eigen::MatrixXd u(N, 2);
  for (int k = 0; k < N; ++k) {
    double s = t0 + (t1 - t0) * k / (N - 1);
    if (k > 0 && k < N - 1) s += jitter * (t1 - t0) / (N - 1) * std::sin(7.3 * k);
    t[k] = s;
    u(k, 0) = std::sin(0.9 * s + phase) + (s > 4.0 ? 0.3 : 0.0);
    u(k, 1) = 0.5 * std::cos(2.1 * s) - 0.1 * phase;
  }
  return make_input_history(t, u, "history");
}

// The time-varying scenario of tests/reference/response_solve_ivp.py, as code.
FunctionSystem pumped_system() {
  FunctionSystem s({"x1", "x2"}, "pumped");
  s.set_A([](double t, MatrixRef a) { a << 0, 1, -(2 + 0.8 * std::sin(1.7 * t)), -0.15; });
  s.set_B({"u1", "u2"}, [](double t, MatrixRef b) { b << 0, 0, 1 + 0.4 * std::cos(t), 0.3; });
  s.set_C({"y"}, [](double t, MatrixRef c) { c << 1, 0.2 * std::sin(t); });
  s.set_D([](double, MatrixRef d) { d << 0.1, 0; });
  return s;
}

RespondOptions tight(Hold hold) {
  RespondOptions o;
  o.hold = hold;
  o.propagation.rtol = 1e-11;
  o.propagation.atol = 1e-13;
  return o;
}

double max_abs(const Eigen::MatrixXd& m) { return m.cwiseAbs().maxCoeff(); }

}  // namespace

// Scalar x' = a x + b u over one step h, closed forms by direct integration of
// e^{a(h-s)} b u(s) ds: zoh gamma = b (e^{ah} - 1)/a; for u linear from u0 to u1,
// gamma1 = b (e^{ah} - 1 - a h)/(a^2 h) and gamma0 = b (e^{ah} - 1)/a - gamma1.
TEST(ResponseStep, ScalarClosedForms) {
  const double a = -0.7, b = 1.9, h = 0.8;
  FunctionSystem s({"x"});
  s.set_A([a](double, MatrixRef m) { m(0, 0) = a; });
  s.set_B({"u"}, [b](double, MatrixRef m) { m(0, 0) = b; });
  PropagationOptions po;
  po.rtol = 1e-12;
  po.atol = 1e-14;
  for (Method method : {Method::Magnus4, Method::Magnus6, Method::Adams, Method::Bdf}) {
    po.method = method;
    StepMatrixBuilder zoh(s, Hold::Zoh, po, false), lin(s, Hold::Linear, po, false);
    StepMatrices z = zoh.steps({0.3, 0.3 + h})[0], l = lin.steps({0.3, 0.3 + h})[0];
    const double e = std::exp(a * h);
    EXPECT_NEAR(z.phi(0, 0), e, 1e-11) << method_name(method);
    EXPECT_NEAR(z.gamma0(0, 0), b * (e - 1) / a, 1e-10) << method_name(method);
    EXPECT_EQ(z.gamma1.size(), 0);
    const double g1 = b * (e - 1 - a * h) / (a * a * h);
    EXPECT_NEAR(l.gamma1(0, 0), g1, 1e-10) << method_name(method);
    EXPECT_NEAR(l.gamma0(0, 0), b * (e - 1) / a - g1, 1e-10) << method_name(method);
  }
}

TEST(ResponseExact, ConstantModelMatchesLsim) {
  std::unique_ptr<System> sys = load_model(kData + "response_constant.toml");
  InputHistory h = two_input_history(241, 0.0, 12.0);
  const std::string in = write_history("core_constant.csv", h, sys->info().input_names);
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    RespondOptions o;  // default tolerances: the contract's 1e-8 / 1e-10
    o.hold = hold;
    o.x0 = Eigen::Vector3d(0.4, -0.2, 0.1);
    RespondReport rep = respond(*sys, {h}, o);
    // Outside reference: scipy.signal.lsim (interp=True for linear, False for zoh).
    auto ref = ordex_test::run_python("response_lsim.py",
                                      kData + "response_constant.toml " + in + " " + hold_name(hold) + " 0.4,-0.2,0.1");
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    Eigen::MatrixXd r = parse_rows(ref.out);
    const RunResult& run = rep.runs[0];
    ASSERT_EQ(r.rows(), run.states.rows());
    EXPECT_LT(max_abs(run.states - r.middleCols(1, 3)), 1e-8 * max_abs(r.middleCols(1, 3))) << hold_name(hold);
    EXPECT_LT(max_abs(run.outputs - r.rightCols(2)), 1e-8 * max_abs(r.rightCols(2))) << hold_name(hold);
    EXPECT_TRUE(rep.time_invariant);
  }
}

TEST(ResponseExact, TimeVaryingModelMatchesSolveIvp) {
  FunctionSystem sys = pumped_system();
  InputHistory h = two_input_history(121, 0.0, 15.0, 0.3);  // non-uniform samples
  const std::string in = write_history("core_pumped.csv", h, {"u1", "u2"});
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    RespondOptions o = tight(hold);
    o.x0 = Eigen::Vector2d(1.0, -0.5);
    RespondReport rep = respond(sys, {h}, o);
    EXPECT_FALSE(rep.time_invariant);
    // Outside reference: scipy.integrate.solve_ivp (DOP853, rtol 1e-12) with the same
    // interpolated input, interval by interval.
    auto ref = ordex_test::run_python("response_solve_ivp.py", in + " " + hold_name(hold) + " 1.0,-0.5");
    ASSERT_EQ(ref.exit_code, 0) << ref.err;
    Eigen::MatrixXd r = parse_rows(ref.out);
    const RunResult& run = rep.runs[0];
    ASSERT_EQ(r.rows(), run.states.rows());
    EXPECT_LT(max_abs(run.states - r.middleCols(1, 2)), 1e-8) << hold_name(hold);
    EXPECT_LT(max_abs(run.outputs - r.rightCols(1)), 1e-8) << hold_name(hold);
    // The two holds really differ on this input (the check above is not blind to the hold).
  }
  RespondReport lin = respond(sys, {h}, tight(Hold::Linear)), zoh = respond(sys, {h}, tight(Hold::Zoh));
  EXPECT_GT(max_abs(lin.runs[0].states - zoh.runs[0].states), 1e-3);
}

TEST(ResponseExact, BatchEqualsSingleRunsAndSharesStepMatrices) {
  FunctionSystem sys = pumped_system();
  InputHistory a = two_input_history(201, 0.0, 10.0, 0.2, 0.0);
  InputHistory b = two_input_history(201, 0.0, 10.0, 0.2, 1.1);  // same grid as a
  InputHistory c = two_input_history(150, 0.0, 10.0, 0.0, 2.0);  // another grid
  RespondOptions o = tight(Hold::Linear);
  o.x0 = Eigen::Vector2d(0.2, 0.0);
  RespondReport batch = respond(sys, {a, b, c}, o);
  ASSERT_EQ(batch.runs.size(), 3u);
  EXPECT_EQ(batch.grids, 2u);
  // Step matrices are computed once per grid, not once per history.
  EXPECT_EQ(batch.computed_steps, 200 + 149);
  const InputHistory* hs[] = {&a, &b, &c};
  for (int i = 0; i < 3; ++i) {
    RespondReport one = respond(sys, {*hs[i]}, o);
    EXPECT_LT(max_abs(batch.runs[i].states - one.runs[0].states), 1e-12) << i;
    EXPECT_LT(max_abs(batch.runs[i].outputs - one.runs[0].outputs), 1e-12) << i;
  }
  // Different histories give different results (no mixing up between runs).
  EXPECT_GT(max_abs(batch.runs[0].states - batch.runs[1].states), 1e-2);
}

TEST(ResponseDiscrete, DiscreteModelReproducesResponse) {
  FunctionSystem sys = pumped_system();
  InputHistory h = two_input_history(161, 0.0, 12.0, 0.25);
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    RespondOptions o = tight(hold);
    o.x0 = Eigen::Vector2d(-0.3, 0.7);
    RespondReport rep = respond(sys, {h}, o);
    DiscretizeOptions d;
    d.hold = hold;
    d.propagation = o.propagation;
    DiscretizeReport dm = discretize(sys, h.times, d);
    ASSERT_EQ(dm.model.steps.size(), h.samples() - 1);
    Eigen::MatrixXd X = simulate_discrete(dm.model, o.x0, h.values);
    EXPECT_LT(max_abs(X - rep.runs[0].states), 1e-12) << hold_name(hold);
  }
}

TEST(ResponseDirect, DirectPathAgreesWithExactPath) {
  FunctionSystem sys = pumped_system();
  InputHistory h = two_input_history(81, 0.0, 9.0, 0.3);
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    for (OdeScheme scheme : {OdeScheme::Adams, OdeScheme::Bdf}) {
      RespondOptions o = tight(hold);
      o.x0 = Eigen::Vector2d(0.5, 0.5);
      RespondReport exact = respond(sys, {h}, o);
      o.path = ResponsePath::Direct;
      o.direct_scheme = scheme;
      RespondReport direct = respond(sys, {h}, o);
      EXPECT_GT(direct.direct.steps, 0);
      EXPECT_LT(max_abs(exact.runs[0].states - direct.runs[0].states), 1e-7) << hold_name(hold);
      EXPECT_LT(max_abs(exact.runs[0].outputs - direct.runs[0].outputs), 1e-7) << hold_name(hold);
    }
  }
}

TEST(ResponseExact, TimeInvariantReuseMatchesFullIntegration) {
  std::unique_ptr<System> sys = load_model(kData + "response_constant.toml");
  InputHistory h = two_input_history(401, 0.0, 20.0);
  RespondOptions o;
  o.hold = Hold::Linear;
  RespondReport reuse = respond(*sys, {h}, o);
  o.reuse_time_invariant = false;
  RespondReport full = respond(*sys, {h}, o);
  EXPECT_TRUE(reuse.time_invariant);
  EXPECT_LE(reuse.computed_steps, 3);
  EXPECT_EQ(reuse.computed_steps + reuse.reused_steps, 400);
  EXPECT_EQ(full.computed_steps, 400);
  EXPECT_LT(max_abs(reuse.runs[0].states - full.runs[0].states), 1e-9);
  // A time-varying model is never treated as time-invariant.
  FunctionSystem tv = pumped_system();
  EXPECT_FALSE(known_time_invariant(tv, 0.0, 20.0));
}

TEST(ResponseExact, WindowInsideTheSamples) {
  FunctionSystem sys = pumped_system();
  InputHistory h = two_input_history(101, 0.0, 10.0);
  RespondOptions o = tight(Hold::Linear);
  // Full run sampled at 2.345 (inside a sample interval) and at 7.0.
  o.t0 = 0.0;
  o.t1 = 10.0;
  o.sample_times = {0.0, 2.345, 7.0, 10.0};
  RespondReport full = respond(sys, {h}, o);
  ASSERT_EQ(full.runs[0].times.size(), 4u);
  // Restarting at 2.345 from the state there must land on the same state at 7.0.
  RespondOptions w = tight(Hold::Linear);
  w.t0 = 2.345;
  w.t1 = 7.0;
  w.x0 = full.runs[0].states.row(1).transpose();
  RespondReport part = respond(sys, {h}, w);
  EXPECT_LT(max_abs(part.runs[0].x_final.transpose() - full.runs[0].states.row(2)), 1e-9);
  EXPECT_DOUBLE_EQ(part.runs[0].times.front(), 2.345);
  // A window beyond the samples is an input error naming the file's last line.
  RespondOptions bad = tight(Hold::Linear);
  bad.t0 = 1.0;
  bad.t1 = 11.0;
  EXPECT_THROW(respond(sys, {h}, bad), InputError);
}

TEST(ResponseExact, FreeResponseMatchesMatrixExponential) {
  std::unique_ptr<System> sys = load_model(kData + "response_free.toml");
  RespondOptions o;
  o.t0 = 0.0;
  o.t1 = 6.0;
  o.sample_times = {0.0, 1.5, 3.0, 6.0};
  o.x0 = Eigen::Vector2d(1.0, 0.0);
  RespondReport rep = respond(*sys, {free_response_history(0.0, 6.0)}, o);
  Eigen::Matrix2d A;
  A << 0.0, 1.0, -3.0, -0.5;
  for (int k = 0; k < 4; ++k) {
    // Reference: x(t) = expm(A t) x0 (Eigen's MatrixFunctions, Higham's scaling and squaring).
    Eigen::Matrix2d At = A * o.sample_times[k];
    Eigen::Vector2d ref = At.exp() * o.x0;
    EXPECT_LT((rep.runs[0].states.row(k).transpose() - ref).cwiseAbs().maxCoeff(), 1e-8) << k;
  }
  EXPECT_NEAR(rep.runs[0].y_final(0), rep.runs[0].x_final(0), 1e-15);
}

TEST(ResponseInput, BadHistoriesNameFileAndLine) {
  FunctionSystem sys = pumped_system();
  const std::string dir = ordex_test::temp_dir();
  struct Case { std::string name, text, expect; };
  const Case cases[] = {
      {"order.csv", "t,u1,u2\n0,1,2\n1,1,2\n1,1,2\n", "order.csv:4: t is not strictly increasing"},
      {"missing.csv", "t,u1\n0,1\n1,2\n", "missing.csv:1: header 't,u1' does not match"},
      {"swapped.csv", "# comment\nt,u2,u1\n0,1,2\n1,1,2\n", "swapped.csv:2: header 't,u2,u1'"},
      {"extra.csv", "t,u1,u2\n0,1,2\n1,1,2,3\n", "extra.csv:3: 4 fields"},
      {"text.csv", "t,u1,u2\n0,1,2\n1,x,2\n", "text.csv:3: column 'u1': 'x' is not a finite number"},
      {"nan.csv", "t,u1,u2\n0,1,nan\n1,1,2\n", "nan.csv:2: column 'u2'"},
      {"one.csv", "t,u1,u2\n0,1,2\n", "one.csv: 1 data rows, at least 2"},
  };
  for (const Case& c : cases) {
    ordex_test::write_file(dir + "/" + c.name, c.text);
    try {
      read_input_history(dir + "/" + c.name, sys);
      ADD_FAILURE() << c.name << " was accepted";
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find(c.expect), std::string::npos) << e.what();
    }
  }
  ordex_test::write_file(dir + "/good.csv", "t,u1,u2\n0,1,2\n0.5,3,4\n");
  InputHistory h = read_input_history(dir + "/good.csv", sys);
  EXPECT_EQ(h.samples(), 2u);
  EXPECT_EQ(h.values(1, 1), 4.0);
  EXPECT_EQ(h.where(1), dir + "/good.csv:3");
}

// A model whose A jumps at a declared breakpoint (t = 1.5) inside a sample interval
// [1.2, 1.6]: the engine must land on the breakpoint. Reference: with a constant input the
// response is a product of two block exponentials exp([[A1, B], [0, 0]] 1.5) and
// exp([[A2, B], [0, 0]] 1.5) (Eigen's MatrixFunctions), whatever the hold.
TEST(ResponseExact, BreakpointInsideASampleInterval) {
  std::unique_ptr<System> sys = load_model(ORDEX_MODELS_DIR "/switched_stiffness.toml");
  std::vector<double> t;
  for (int k = 0; k <= 8; ++k) t.push_back(0.4 * k);  // 0 .. 3.2
  InputHistory h = make_input_history(t, Eigen::MatrixXd::Constant(9, 1, 0.7));
  auto block = [](double k, double c) {
    Eigen::Matrix3d m;
    m << 0, 1, 0, -k, -c, 1, 0, 0, 0;
    return m;
  };
  Eigen::Matrix3d E = (block(4.0, 0.2) * 1.5).exp() * (block(1.0, 0.2) * 1.5).exp();
  Eigen::Vector3d z0(0.3, 0.0, 0.7);
  Eigen::Vector3d ref = E * z0;
  for (Hold hold : {Hold::Linear, Hold::Zoh}) {
    for (ResponsePath path : {ResponsePath::Exact, ResponsePath::Direct}) {
      RespondOptions o = tight(hold);
      o.path = path;
      o.t0 = 0.0;
      o.t1 = 3.0;
      o.x0 = Eigen::Vector2d(0.3, 0.0);
      RespondReport rep = respond(*sys, {h}, o);
      EXPECT_LT((rep.runs[0].x_final - ref.head(2)).cwiseAbs().maxCoeff(), 1e-8)
          << hold_name(hold) << " " << response_path_name(path);
      EXPECT_FALSE(rep.time_invariant);
    }
  }
}
