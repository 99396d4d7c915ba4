// The gramian job called from C++ as a library user would, without the command-line front
// end: the Gramian, the running Gramian handed to a sink, the minimum-energy transfer and the
// sliding profile against closed forms; the JSON header with the parameters in effect; progress
// that moves; a 40-state brief that stays short; validate() messages naming the Options field.
#include <gtest/gtest.h>

#include <cmath>
#include <set>
#include <string>
#include <vector>

#include "gramian/report.hpp"
#include "io/errors.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "job_support.hpp"

namespace {

using ordex::MatrixRef;

const std::string kCart = ORDEX_TESTS_DIR "/data/gramian_double_integrator.toml";  // p'' = gain f, [0, 2]

/// Reachability Gramian of p'' = g u over [0, t]: g^2 [[t^3/3, t^2/2], [t^2/2, t]] (closed form).
Eigen::Matrix2d cart_reachability(double t, double g = 1) {
  Eigen::Matrix2d w;
  w << t * t * t / 3, t * t / 2, t * t / 2, t;
  return g * g * w;
}

/// Twenty uncoupled lightly damped oscillators, each driven by its own input: forty states.
ordex::FunctionSystem chain40() { return ordex_test::oscillator_bank(20, 0.05, true); }

ordex::GramianJobOptions tight(ordex::GramianKind kind) {
  ordex::GramianJobOptions o;
  o.gramian.kind = kind;
  o.gramian.propagation.rtol = 1e-11;
  o.gramian.propagation.atol = 1e-13;
  return o;
}

}  // namespace

TEST(GramianJob, GramianRunningGramianAndTransferAgainstClosedForms) {
  auto sys = ordex::load_model(kCart);
  ordex::GramianJobOptions o = tight(ordex::GramianKind::Reachability);
  o.samples = 21;
  o.transfer = ordex::TransferOptions{};
  o.transfer->x0 = Eigen::Vector2d(0, 0);
  o.transfer->xf = Eigen::Vector2d(1, 0);
  std::vector<double> times;
  const ordex::GramianReport r = ordex::gramian(*sys, 0.0, 2.0, o, [&](double t, const Eigen::MatrixXd& w) {
    times.push_back(t);
    EXPECT_LT((w - cart_reachability(t)).cwiseAbs().maxCoeff(), 1e-9) << t;
  });
  EXPECT_EQ(times.size(), 21u);  // one running Gramian per sample, from the same sweep
  EXPECT_LT((r.result.gramian - cart_reachability(2.0)).cwiseAbs().maxCoeff(), 1e-9);
  EXPECT_EQ(r.spectrum.rank, 2);
  ASSERT_TRUE(r.transfer);
  // Rest to (1, 0) over T = 2: energy d' W_r^-1 d = 12 / T^3 = 1.5 (closed form).
  EXPECT_NEAR(r.transfer->energy, 1.5, 1e-9);
  EXPECT_LT(r.transfer->final_error, 1e-8);
  EXPECT_EQ(r.transfer->times.size(), 21u);
}

TEST(GramianJob, ProfileWindowsAgainstTheClosedForm) {
  auto sys = ordex::load_model(kCart);
  ordex::GramianJobOptions o = tight(ordex::GramianKind::Controllability);
  o.profile = ordex::ProfileOptions{};
  o.profile->window_length = 0.5;
  o.profile->stride = 0.25;
  const ordex::GramianReport r = ordex::gramian(*sys, 0.0, 2.0, o);
  ASSERT_TRUE(r.profile);
  ASSERT_EQ(r.profile->windows.size(), 7u);
  // A constant pair: every window's W_c is [[L^3/3, -L^2/2], [-L^2/2, L]], L = 0.5 (closed
  // form); its eigenvalues by the 2 x 2 formula.
  const double L = 0.5, a = L * L * L / 3, b = -L * L / 2, c = L;
  const double mid = (a + c) / 2, rad = std::sqrt((a - c) * (a - c) / 4 + b * b);
  for (const auto& w : r.profile->windows) {
    EXPECT_NEAR(w.spectrum.lambda_min, mid - rad, 1e-9 * (mid + rad));
    EXPECT_NEAR(w.spectrum.lambda_max, mid + rad, 1e-9 * (mid + rad));
  }
}

TEST(GramianJob, JsonStartsWithTheHeaderAndTheParametersInEffect) {
  auto sys = ordex::load_model(kCart, {{"gain", 2.0}});
  const ordex::GramianReport r = ordex::gramian(*sys, 0.0, 2.0, tight(ordex::GramianKind::Reachability));
  const ordex::Json j = r.to_json();
  std::vector<std::string> keys;
  for (auto it = j.begin(); it != j.end(); ++it) keys.push_back(it.key());
  ASSERT_GE(keys.size(), 5u);
  EXPECT_EQ(std::vector<std::string>(keys.begin(), keys.begin() + 5),
            (std::vector<std::string>{"ordex_version", "model", "t0", "t1", "method"}));
  EXPECT_EQ(j["model"]["title"], "Cart on a frictionless rail (test model)");
  EXPECT_EQ(j["model"]["parameters"]["gain"].get<double>(), 2.0);
  EXPECT_EQ(j["t1"].get<double>(), 2.0);
  // The override is in effect: W_r scales with gain^2 (closed form).
  EXPECT_NEAR(j["gramian"][0][0].get<double>(), 4 * 8.0 / 3, 1e-8);
  for (const char* key : {"kind", "gramian", "eigenvalues", "condition", "rank", "full_rank", "weakest_direction",
                          "rank_verdict"})
    EXPECT_TRUE(j.contains(key)) << key;
}

TEST(GramianJob, ProgressMovesFromZeroToOne) {
  auto sys = ordex::load_model(kCart);
  std::vector<double> seen;
  ordex::GramianJobOptions o = tight(ordex::GramianKind::Controllability);
  o.samples = 201;
  o.gramian.propagation.progress = [&](double f) { seen.push_back(f); };
  o.profile = ordex::ProfileOptions{};
  o.profile->window_length = 0.5;
  ordex::gramian(*sys, 0.0, 2.0, o);
  ASSERT_FALSE(seen.empty());
  std::set<int> percents;
  for (std::size_t k = 0; k < seen.size(); ++k) {
    if (k) EXPECT_GE(seen[k], seen[k - 1]) << k;  // never back
    EXPECT_GE(seen[k], 0.0);
    EXPECT_LE(seen[k], 1.0);
    percents.insert(static_cast<int>(100 * seen[k]));
  }
  EXPECT_LT(seen.front(), 0.5);
  EXPECT_EQ(seen.back(), 1.0);
  EXPECT_GE(percents.size(), 10u);  // it moves, rather than sitting at 100%
}

TEST(GramianJob, FortyStatesGiveAShortBrief) {
  const ordex::FunctionSystem sys = chain40();
  const ordex::GramianReport r = ordex::gramian(sys, 0.0, 5.0, tight(ordex::GramianKind::Controllability));
  const std::string brief = r.brief();
  int lines = 0;
  for (char c : brief) lines += c == '\n';
  EXPECT_LT(lines, 14) << brief;
  EXPECT_LT(brief.size(), 1500u) << brief;
  EXPECT_EQ(r.to_json()["gramian"].size(), 40u);
}

TEST(GramianJob, ValidateNamesTheField) {
  auto sys = ordex::load_model(kCart);
  auto message = [&](const ordex::GramianJobOptions& o) -> std::string {
    try {
      ordex::gramian(*sys, 0.0, 2.0, o);
    } catch (const ordex::InputError& e) {
      return e.what();
    }
    return "(no error)";
  };
  ordex::GramianJobOptions o;
  o.rank_tol = 0;
  EXPECT_EQ(message(o).rfind("GramianJobOptions::rank_tol = 0", 0), 0u) << message(o);
  o = ordex::GramianJobOptions{};
  o.samples = 1;
  EXPECT_EQ(message(o).rfind("GramianJobOptions::samples = 1", 0), 0u) << message(o);
  o = ordex::GramianJobOptions{};
  o.gramian.threads = 0;
  EXPECT_EQ(message(o).rfind("GramianOptions::threads = 0", 0), 0u) << message(o);
  try {
    ordex::parse_kind("sideways");
    ADD_FAILURE();
  } catch (const ordex::InputError& e) {
    EXPECT_EQ(std::string(e.what()).rfind("GramianOptions::kind", 0), 0u) << e.what();
  }
  EXPECT_EQ(message(o).find("--"), std::string::npos) << message(o);  // no command-line flags
}
