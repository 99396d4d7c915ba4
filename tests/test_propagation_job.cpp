// The propagate job called from C++ as a library user would, without the command-line front
// end: Phi against closed forms, the grid kept or streamed to a sink, Floquet and Liouville on a
// damped oscillator, the JSON header with the parameters in effect, a 40-state brief that stays
// short, and validate() messages that name the Options field.
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <string>
#include <vector>

#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "job_support.hpp"
#include "propagation/propagate_report.hpp"

namespace {

using ordex::MatrixRef;

/// x'' = -w^2 x: Phi(t, t0) = [[cos w s, sin(w s)/w], [-w sin w s, cos w s]], s = t - t0
/// (closed form of the harmonic oscillator).
Eigen::Matrix2d oscillator_phi(double w, double s) {
  Eigen::Matrix2d p;
  p << std::cos(w * s), std::sin(w * s) / w, -w * std::sin(w * s), std::cos(w * s);
  return p;
}

ordex::FunctionSystem oscillator(double w) {
  ordex::FunctionSystem sys({"x", "v"}, "oscillator");
  sys.set_A([w](double, MatrixRef a) { a << 0, 1, -w * w, 0; });
  return sys;
}

/// Twenty uncoupled oscillators with frequencies 0.5, 0.6, ..., 2.4: forty states named q1, p1,
/// q2, p2, ...
ordex::FunctionSystem chain40() { return ordex_test::oscillator_bank(20, 0.0, false); }

ordex::PropagateOptions tight() {
  ordex::PropagateOptions o;
  o.propagation.rtol = 1e-11;
  o.propagation.atol = 1e-13;
  return o;
}

}  // namespace

TEST(PropagationJob, PhiMatchesTheClosedForm) {
  const ordex::FunctionSystem sys = oscillator(1.7);
  for (ordex::Method m : {ordex::Method::Magnus6, ordex::Method::Adams, ordex::Method::Bdf}) {
    ordex::PropagateOptions o = tight();
    o.propagation.method = m;
    const ordex::PropagateReport r = ordex::propagate(sys, 0.3, 4.1, o);
    EXPECT_LT((r.phi - oscillator_phi(1.7, 3.8)).cwiseAbs().maxCoeff(), 1e-7) << ordex::method_name(m);
    EXPECT_EQ(r.header.method, ordex::method_name(m));
    EXPECT_TRUE(r.sample_phi.empty());  // no grid asked for
  }
}

TEST(PropagationJob, GridIsKeptOrStreamedAsComputed) {
  const ordex::FunctionSystem sys = oscillator(2.0);
  ordex::PropagateOptions o = tight();
  o.samples = 11;
  const ordex::PropagateReport kept = ordex::propagate(sys, 0.0, 2.0, o);
  ASSERT_EQ(kept.sample_phi.size(), 11u);
  for (std::size_t k = 0; k < 11; ++k) {
    EXPECT_NEAR(kept.sample_times[k], 0.2 * k, 1e-15);
    EXPECT_LT((kept.sample_phi[k] - oscillator_phi(2.0, kept.sample_times[k])).cwiseAbs().maxCoeff(), 1e-8) << k;
  }
  std::vector<double> seen;
  const ordex::PropagateReport streamed =
      ordex::propagate(sys, 0.0, 2.0, o, [&](std::size_t k, double t, const Eigen::MatrixXd& phi) {
        EXPECT_EQ(k, seen.size());
        seen.push_back(t);
        EXPECT_LT((phi - oscillator_phi(2.0, t)).cwiseAbs().maxCoeff(), 1e-8) << t;
      });
  EXPECT_EQ(seen.size(), 11u);
  EXPECT_EQ(streamed.samples_streamed, 11u);
  EXPECT_TRUE(streamed.sample_phi.empty());  // the report keeps nothing it streamed
  EXPECT_LT((streamed.phi - oscillator_phi(2.0, 2.0)).cwiseAbs().maxCoeff(), 1e-8);
}

TEST(PropagationJob, FloquetAndLiouvilleOnADampedOscillator) {
  // x'' + 2 z x' + x = 0 declared periodic with T = 2: eigenvalues -z +- i sqrt(1 - z^2), so
  // the multipliers are exp(lambda T) with |mu| = exp(-z T), and trace A = -2 z gives
  // det Phi = exp(-2 z T) (Liouville; closed forms).
  const double z = 0.1, T = 2.0;
  ordex::FunctionSystem sys({"x", "v"});
  sys.set_A([z](double, MatrixRef a) { a << 0, 1, -1, -2 * z; });
  sys.set_period(T);
  ordex::PropagateOptions o = tight();
  o.floquet = true;
  const ordex::PropagateReport r = ordex::propagate(sys, 0.5, ordex::floquet_window_end(sys, 0.5), o);
  ASSERT_TRUE(r.floquet);
  const std::complex<double> lambda(-z, std::sqrt(1 - z * z));
  for (Eigen::Index k = 0; k < 2; ++k) {
    EXPECT_NEAR(std::abs(r.floquet->multipliers(k)), std::exp(-z * T), 1e-9);
    EXPECT_NEAR(std::abs(std::imag(r.floquet->multipliers(k))), std::abs(std::imag(std::exp(lambda * T))), 1e-9);
  }
  EXPECT_TRUE(r.floquet->stable);
  ASSERT_TRUE(r.liouville);
  EXPECT_NEAR(r.liouville->log_abs_det, -2 * z * T, 1e-9);
  EXPECT_NEAR(r.liouville->integral_trace, -2 * z * T, 1e-12);
  // A window that is not one period is refused, naming the field.
  try {
    ordex::propagate(sys, 0.5, 3.0, o);
    ADD_FAILURE() << "window of 2.5 periods accepted";
  } catch (const ordex::InputError& e) {
    EXPECT_NE(std::string(e.what()).find("PropagateOptions::floquet"), std::string::npos) << e.what();
  }
}

TEST(PropagationJob, JsonStartsWithTheHeaderAndTheParametersInEffect) {
  auto sys = ordex::load_model(ORDEX_MODELS_DIR "/mathieu.toml", {{"a", 2.5}});
  const ordex::PropagateReport r = ordex::propagate(*sys, 0.0, M_PI, ordex::PropagateOptions{});
  const ordex::Json j = r.to_json();
  std::vector<std::string> keys;
  for (auto it = j.begin(); it != j.end(); ++it) keys.push_back(it.key());
  ASSERT_GE(keys.size(), 5u);
  EXPECT_EQ(std::vector<std::string>(keys.begin(), keys.begin() + 5),
            (std::vector<std::string>{"ordex_version", "model", "t0", "t1", "method"}));
  EXPECT_EQ(j["ordex_version"], ORDEX_VERSION);
  EXPECT_EQ(j["model"]["title"], "Mathieu equation");
  EXPECT_EQ(j["model"]["source"], ORDEX_MODELS_DIR "/mathieu.toml");
  EXPECT_EQ(j["model"]["parameters"]["a"].get<double>(), 2.5);  // the override, not the file's 1.0
  EXPECT_EQ(j["model"]["parameters"]["q"].get<double>(), 0.5);  // the file's value
  EXPECT_NE(j["method"], "auto");
  for (const char* key : {"states", "steps", "matrix_evaluations", "phi", "error_estimate", "liouville"})
    EXPECT_TRUE(j.contains(key)) << key;
  EXPECT_FALSE(j.contains("app"));  // only the apps add it
  const ordex::Json a = ordex::with_app("ordex-propagate", j);
  EXPECT_EQ(a.begin().key(), "app");
  EXPECT_EQ(a.size(), j.size() + 1);
}

TEST(PropagationJob, FortyStatesGiveAShortBriefAndTheWholeMatrixInJson) {
  const ordex::FunctionSystem sys = chain40();
  const ordex::PropagateReport r = ordex::propagate(sys, 0.0, 3.0, tight());
  const std::string brief = r.brief();
  int lines = 0;
  for (char c : brief) lines += c == '\n';
  EXPECT_LT(lines, 16) << brief;
  EXPECT_LT(brief.size(), 2000u) << brief;
  EXPECT_NE(brief.find("largest entries"), std::string::npos) << brief;
  EXPECT_NE(brief.find("JSON"), std::string::npos) << brief;
  // The largest entry of Phi is -w sin(w s) of the stiffest block (w = 2.4 at s = 3, closed
  // form), named by its states.
  EXPECT_NE(brief.find("phi[p20][q20]"), std::string::npos) << brief;
  const ordex::Json j = r.to_json();
  ASSERT_EQ(j["phi"].size(), 40u);
  const Eigen::Matrix2d last = oscillator_phi(2.4, 3.0);
  EXPECT_NEAR(j["phi"][39][38].get<double>(), last(1, 0), 1e-7);
  EXPECT_NEAR(j["phi"][0][0].get<double>(), std::cos(0.5 * 3.0), 1e-7);
  // A small model keeps its full matrix on the terminal.
  const std::string small = ordex::propagate(oscillator(1.0), 0.0, 1.0, tight()).brief();
  EXPECT_EQ(small.find("largest entries"), std::string::npos) << small;
}

TEST(PropagationJob, ValidateNamesTheField) {
  const ordex::FunctionSystem sys = oscillator(1.0);
  auto message = [&](const ordex::PropagateOptions& o) -> std::string {
    try {
      ordex::propagate(sys, 0.0, 1.0, o);
    } catch (const ordex::InputError& e) {
      return e.what();
    }
    return "(no error)";
  };
  ordex::PropagateOptions o;
  o.samples = 1;
  EXPECT_EQ(message(o).rfind("PropagateOptions::samples = 1", 0), 0u) << message(o);
  o = ordex::PropagateOptions{};
  o.propagation.rtol = 1;
  EXPECT_EQ(message(o).rfind("PropagationOptions::rtol = 1", 0), 0u) << message(o);
  EXPECT_EQ(message(o).find("--"), std::string::npos) << message(o);  // no command-line flags
  o = ordex::PropagateOptions{};
  o.floquet = true;  // the oscillator declares no period
  EXPECT_NE(message(o).find("system.period"), std::string::npos) << message(o);
}
