// The response and discretization jobs called from C++ without the apps' front end: results
// against closed forms, each Report's JSON header, and validate() messages naming Options fields.
#include <gtest/gtest.h>

#include <cmath>
#include <unsupported/Eigen/MatrixFunctions>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "response/discretize.hpp"
#include "response/respond.hpp"
#include "job_support.hpp"

using namespace ordex;
using ordex_test::input_error_of;
using ordex_test::scalar_plant;

namespace {

const std::string kData = std::string(ORDEX_TESTS_DIR) + "/data/";

void expect_header(const Json& j, const std::string& source, double t0, double t1) {
  std::vector<std::string> keys;
  for (auto it = j.begin(); it != j.end(); ++it) keys.push_back(it.key());
  ASSERT_GE(keys.size(), 5u);
  EXPECT_EQ((std::vector<std::string>(keys.begin(), keys.begin() + 5)),
            (std::vector<std::string>{"ordex_version", "model", "t0", "t1", "method"}));
  EXPECT_EQ(j["ordex_version"], ORDEX_VERSION);
  EXPECT_EQ(j["model"]["source"], source);
  EXPECT_TRUE(j["model"].contains("title"));
  EXPECT_TRUE(j["model"]["parameters"].is_object());
  EXPECT_EQ(j["t0"].get<double>(), t0);
  EXPECT_EQ(j["t1"].get<double>(), t1);
  EXPECT_NE(j["method"], "auto");  // the method actually used
  EXPECT_FALSE(j.contains("app"));
}

}  // namespace

TEST(RespondJob, RampInputMatchesTheClosedForm) {
  // u(t) = c t is exact under the linear hold; x(t) = x0 e^{at} + b c (e^{at} - 1 - a t) / a^2
  // (variation of constants, integrated by hand).
  const double a = -0.8, b = 1.3, c = 0.5, x0 = 0.2;
  auto sys = scalar_plant(a, b, true);
  std::vector<double> t{0.0, 0.7, 1.9, 3.0, 4.0};
  Eigen::MatrixXd u(5, 1);
  for (int k = 0; k < 5; ++k) u(k, 0) = c * t[static_cast<std::size_t>(k)];
  RespondOptions o;
  o.x0 = Eigen::VectorXd::Constant(1, x0);
  o.samples = 9;
  const RespondReport rep = respond(*sys, {make_input_history(t, u)}, o);
  ASSERT_EQ(rep.runs.size(), 1u);
  const RunResult& r = rep.runs[0];
  ASSERT_EQ(r.times.size(), 9u);
  for (std::size_t k = 0; k < r.times.size(); ++k) {
    const double s = r.times[k], e = std::exp(a * s);
    const double want = x0 * e + b * c * (e - 1 - a * s) / (a * a);
    EXPECT_NEAR(r.states(static_cast<Eigen::Index>(k), 0), want, 1e-8) << "t = " << s;
    EXPECT_EQ(r.outputs(static_cast<Eigen::Index>(k), 0), r.states(static_cast<Eigen::Index>(k), 0));  // y = x
  }
  expect_header(rep.to_json(), "code", 0.0, 4.0);
  EXPECT_EQ(rep.to_json()["samples"].get<int>(), 9);
}

TEST(RespondJob, FreeResponseNeedsNoHistoryAndUsesTheModelWindow) {
  auto sys = load_model(kData + "response_free.toml");
  RespondOptions o;
  o.x0 = Eigen::Vector2d(1.0, 0.5);
  const RespondReport rep = respond(*sys, {}, o);
  ASSERT_EQ(rep.runs.size(), 1u);
  EXPECT_EQ(rep.runs[0].times.size(), 101u);  // the free response's default grid
  // x(6) = expm(6 A) x0 (Eigen's MatrixFunctions, Higham's scaling and squaring).
  Eigen::Matrix2d A;
  A << 0.0, 1.0, -3.0, -0.5;
  const Eigen::Matrix2d A6 = A * 6.0;
  const Eigen::Vector2d want = A6.exp() * Eigen::Vector2d(1.0, 0.5);
  EXPECT_LT((rep.runs[0].x_final - want).cwiseAbs().maxCoeff(), 1e-8);
  expect_header(rep.to_json(), kData + "response_free.toml", 0.0, 6.0);
}

TEST(RespondJob, SinkReceivesEverySampleAndTheReportKeepsNone) {
  // Ramps u = c t on two grids (two histories share one, a third has its own). Streamed to a
  // sink, every sample must equal the closed form x(t) = x0 e^{at} + b c (e^{at} - 1 - a t) / a^2
  // (variation of constants, integrated by hand) and y = x + d(t) u with d(t) = 0.3 + 0.1 t, each
  // run's samples in order of time, and the report must hold no sample arrays.
  const double a = -0.8, b = 1.3, x0 = 0.2;
  auto sys = scalar_plant(a, b, true);
  sys->set_D([](double t, MatrixRef m) { m(0, 0) = 0.3 + 0.1 * t; });
  const std::vector<double> c{0.5, -1.5, 2.0};
  auto ramp = [&](const std::vector<double>& t, double slope) {
    Eigen::MatrixXd u(static_cast<Eigen::Index>(t.size()), 1);
    for (std::size_t k = 0; k < t.size(); ++k) u(static_cast<Eigen::Index>(k), 0) = slope * t[k];
    return make_input_history(t, u);
  };
  const std::vector<double> shared{0.0, 0.7, 1.9, 3.0, 4.0}, own{0.0, 1.0, 2.5, 4.0};
  const std::vector<InputHistory> hs{ramp(shared, c[0]), ramp(shared, c[1]), ramp(own, c[2])};
  for (ResponsePath path : {ResponsePath::Exact, ResponsePath::Direct}) {
    SCOPED_TRACE(response_path_name(path));
    RespondOptions o;
    o.path = path;
    o.x0 = Eigen::VectorXd::Constant(1, x0);
    o.samples = 9;
    o.propagation.rtol = 1e-10;
    o.propagation.atol = 1e-12;
    const RespondReport kept = respond(*sys, hs, o);
    std::vector<std::vector<ResponseSample>> got(hs.size());
    o.sink = [&](const ResponseSample& s) {
      ASSERT_LT(s.run, got.size());
      EXPECT_EQ(s.k, got[s.run].size());  // in order, none missing
      got[s.run].push_back(s);
    };
    const RespondReport streamed = respond(*sys, hs, o);
    ASSERT_EQ(streamed.runs.size(), hs.size());
    for (std::size_t i = 0; i < hs.size(); ++i) {
      const RunResult& r = streamed.runs[i];
      EXPECT_TRUE(r.times.empty());
      EXPECT_EQ(r.states.rows(), 0);
      EXPECT_EQ(r.outputs.rows(), 0);
      EXPECT_EQ(r.samples, 9u);
      ASSERT_EQ(got[i].size(), 9u);
      EXPECT_EQ(r.x_final, kept.runs[i].x_final);
      EXPECT_EQ(r.y_final, kept.runs[i].y_final);
      for (std::size_t k = 0; k < 9; ++k) {
        const ResponseSample& s = got[i][k];
        EXPECT_EQ(s.count, 9u);
        const double t = s.t, e = std::exp(a * t), want = x0 * e + b * c[i] * (e - 1 - a * t) / (a * a);
        EXPECT_NEAR(t, 0.5 * static_cast<double>(k), 1e-15);
        EXPECT_NEAR(s.x(0), want, 1e-7) << "run " << i << ", t = " << t;
        EXPECT_NEAR(s.y(0), want + (0.3 + 0.1 * t) * c[i] * t, 1e-7) << "run " << i << ", t = " << t;
        // The same numbers as the samples kept without a sink.
        EXPECT_EQ(s.t, kept.runs[i].times[k]);
        EXPECT_EQ(s.x(0), kept.runs[i].states(static_cast<Eigen::Index>(k), 0));
        EXPECT_EQ(s.y(0), kept.runs[i].outputs(static_cast<Eigen::Index>(k), 0));
      }
    }
    EXPECT_EQ(streamed.to_json()["runs"][2]["samples"].get<int>(), 9);
  }
}

TEST(DiscretizeJob, ZeroOrderHoldOfTheScalarPlantMatchesTheClosedForm) {
  // phi = e^{a h}, gamma = b (e^{a h} - 1) / a for a held input (integrated by hand).
  const double a = -0.8, b = 1.3, h = 0.25;
  auto sys = scalar_plant(a, b);
  DiscretizeOptions o;
  o.step = h;
  const DiscretizeReport rep = discretize(*sys, 0.0, 1.1, o);
  ASSERT_EQ(rep.model.times.size(), 6u);  // 0, .25, .5, .75, 1, 1.1
  for (std::size_t k = 0; k < rep.model.steps.size(); ++k) {
    const double hk = rep.model.times[k + 1] - rep.model.times[k], e = std::exp(a * hk);
    EXPECT_NEAR(rep.model.steps[k].phi(0, 0), e, 1e-9);
    EXPECT_NEAR(rep.model.steps[k].gamma0(0, 0), b * (e - 1) / a, 1e-9);
  }
  // The brief's growth over the grid is |Phi(1.1, 0)| = e^{1.1 a} (closed form), not the
  // eigenvalue of one step.
  const std::string brief = rep.brief();
  const std::string key = "growth over the grid: |Phi(t_N, t_0)| = ";
  const std::size_t at = brief.find(key);
  ASSERT_NE(at, std::string::npos) << brief;
  EXPECT_NEAR(std::stod(brief.substr(at + key.size())), std::exp(1.1 * a), 1e-5) << brief;
  EXPECT_NE(brief.find("no stability verdict"), std::string::npos) << brief;
  const Json j = rep.to_json();
  expect_header(j, "code", 0.0, 1.1);
  EXPECT_EQ(j["gamma"].size(), 5u);
  DiscretizeOptions grid;
  grid.samples = 5;
  EXPECT_EQ(discretize(*sys, 0.0, 1.0, grid).model.times.size(), 5u);
}

TEST(DiscretizeJob, ThreadedIntervalsMatchTheClosedFormOfATimeVaryingInput) {
  // x' = c x + cos(t) u with u held on [s, t]: phi = e^{c h} and, integrated by hand,
  // gamma = int_s^t e^{c (t - r)} cos(r) dr = [e^{c (t - r)} (sin r - c cos r)]_s^t / (1 + c^2).
  // 600 intervals: several batches on each of three threads, handed back in order.
  auto sys = load_model(kData + "response_cosine_input.toml");
  ASSERT_TRUE(sys->clones_may_run_concurrently());
  const double c = -0.7;
  DiscretizeOptions o;
  o.step = 0.01;
  o.threads = 3;
  const DiscretizeReport rep = discretize(*sys, 0.0, 6.0, o);
  ASSERT_EQ(rep.model.steps.size(), 600u);
  EXPECT_EQ(rep.computed_steps, 600);
  double worst_phi = 0, worst_gamma = 0;
  for (std::size_t k = 0; k < rep.model.steps.size(); ++k) {
    const StepMatrices& st = rep.model.steps[k];
    ASSERT_EQ(st.t_start, rep.model.times[k]);
    ASSERT_EQ(st.t_end, rep.model.times[k + 1]);
    const double s = st.t_start, t = st.t_end;
    auto prim = [&](double r) { return std::exp(c * (t - r)) * (std::sin(r) - c * std::cos(r)) / (1 + c * c); };
    worst_phi = std::max(worst_phi, std::abs(st.phi(0, 0) - std::exp(c * (t - s))));
    worst_gamma = std::max(worst_gamma, std::abs(st.gamma0(0, 0) - (prim(t) - prim(s))));
  }
  EXPECT_LT(worst_phi, 1e-10);
  EXPECT_LT(worst_gamma, 1e-10);
  // The largest single step's gain is max_k e^{c h_k} = e^{-0.007} (all steps of 10 ms).
  EXPECT_NEAR(rep.largest_step, std::exp(c * 0.01), 1e-12);
  // The same grid on one thread: the same steps within the engine's tolerance.
  o.threads = 1;
  const DiscretizeReport one = discretize(*sys, 0.0, 6.0, o);
  for (std::size_t k = 0; k < rep.model.steps.size(); k += 37)
    EXPECT_NEAR(one.model.steps[k].gamma0(0, 0), rep.model.steps[k].gamma0(0, 0), 1e-10);
  o.threads = 0;
  EXPECT_NE(input_error_of([&] { discretize(*sys, 0.0, 6.0, o); }).find("DiscretizeOptions::threads = 0"),
            std::string::npos);
}

TEST(ResponseJobs, ValidateNamesTheFields) {
  auto sys = scalar_plant(-1.0, 1.0);
  const InputHistory h = make_input_history({0.0, 1.0}, Eigen::MatrixXd::Ones(2, 1));
  auto respond_error = [&](const RespondOptions& o) { return input_error_of([&] { respond(*sys, {h}, o); }); };
  RespondOptions o;
  o.x0 = Eigen::Vector3d(1, 2, 3);
  EXPECT_NE(respond_error(o).find("RespondOptions::x0: 3 entries, the model has 1 states"), std::string::npos);
  o = {};
  o.samples = 1;
  EXPECT_NE(respond_error(o).find("RespondOptions::samples = 1"), std::string::npos) << respond_error(o);
  o = {};
  o.t0 = 0.5;
  o.t1 = 0.25;
  EXPECT_NE(respond_error(o).find("RespondOptions::t0/t1"), std::string::npos) << respond_error(o);
  o = {};
  o.path = ResponsePath::Direct;
  o.propagation.method = Method::Magnus4;
  EXPECT_NE(respond_error(o).find("PropagationOptions::method: magnus4"), std::string::npos) << respond_error(o);
  EXPECT_NE(input_error_of([] { parse_response_path("fast"); }).find("RespondOptions::path: unknown path 'fast'"),
            std::string::npos);
  DiscretizeOptions d;
  d.step = -0.1;
  const std::string m = input_error_of([&] { discretize(*sys, 0.0, 1.0, d); });
  EXPECT_NE(m.find("DiscretizeOptions::step = -0.1"), std::string::npos) << m;
  d = {};
  d.samples = 0;
  EXPECT_NE(input_error_of([&] { discretize(*sys, 0.0, 1.0, d); }).find("DiscretizeOptions::samples = 0"),
            std::string::npos);
  o = {};
  o.x0 = Eigen::Vector3d(1, 2, 3);
  EXPECT_EQ(respond_error(o).find("--"), std::string::npos);
}
