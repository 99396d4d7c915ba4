// The periodic steady-state Kalman-Bucy filter as an estimation job (ordex-estimate --periodic):
// a constant system declared periodic against scipy's algebraic Riccati equation of the dual
// problem; a periodic plant against the long-window limit of the filter started far from it
// (the periodic solution attracts every positive definite start; Bittanti, Colaneri & De
// Nicolao 1991); the app's flags and refusals.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>

#include "estimation/periodic_estimate.hpp"
#include "job_support.hpp"
#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "support.hpp"

using namespace ordex;

namespace {

NoiseModel noise_of(const Eigen::MatrixXd& G, const Eigen::MatrixXd& Qn, const Eigen::MatrixXd& Rn) {
  NoiseModel noise;
  noise.G = WeightMatrix::constant(G, "G");
  noise.Qn = WeightMatrix::constant(Qn, "Qn");
  noise.Rn = WeightMatrix::constant(Rn, "Rn");
  noise.P0 = Eigen::MatrixXd::Identity(G.rows(), G.rows());
  return noise;
}

}  // namespace

TEST(PeriodicKalmanBucy, ConstantSystemDeclaredPeriodicMatchesScipy) {
  Eigen::MatrixXd A(3, 3), G(3, 2), C(2, 3), Qn(2, 2), Rn(2, 2);
  A << 0, 1, 0, -2, -0.3, 1, 0.5, 0, -1;
  G << 0.2, 0, 1, 0.1, 0, 0.7;
  C << 1, 0, 0, 0, 0, 1;
  Qn << 0.5, 0.1, 0.1, 0.3;
  Rn << 0.02, 0.005, 0.005, 0.04;
  FunctionSystem sys({"x1", "x2", "x3"});
  sys.set_A([A](double, MatrixRef m) { m = A; });
  sys.set_C({"y1", "y2"}, [C](double, MatrixRef m) { m = C; });
  sys.set_period(1.5);
  EstimationOptions o;
  o.noise = noise_of(G, Qn, Rn);
  o.samples = 31;
  const EstimationReport r = estimate_periodic(sys, 0.0, o);
  // scipy.linalg.solve_continuous_are(A', C', G Qn G', Rn): the filter's algebraic equation is
  // the regulator's of the dual system.
  nlohmann::json in;
  in["A"] = ordex_test::json_rows(A.transpose());
  in["B"] = ordex_test::json_rows(C.transpose());
  in["Q"] = ordex_test::json_rows(G * Qn * G.transpose());
  in["R"] = ordex_test::json_rows(Rn);
  auto py = ordex_test::run_python("riccati_care.py", "'" + in.dump() + "'");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  const Eigen::MatrixXd P = ordex_test::matrix_from_json(nlohmann::json::parse(py.out)["P"]);
  const Eigen::MatrixXd K = ordex_test::matrix_from_json(nlohmann::json::parse(py.out)["K"]);
  ASSERT_EQ(r.P.size(), 31u);
  for (const Eigen::MatrixXd& Pk : r.P) EXPECT_LT((Pk - P).norm(), 1e-6 * P.norm()) << Pk << "\nscipy:\n" << P;
  EXPECT_LT((r.gains.front() - K.transpose()).norm(), 1e-5 * K.norm());
  const nlohmann::json j = r.to_json();
  EXPECT_EQ(j["kind"], "periodic-kalman-bucy");
  EXPECT_TRUE(j["periodic"]["closed_loop_floquet"]["stable"].get<bool>());
  // The multipliers of A - L C over the period are exp(T eig(A - L C)) (constant system).
  const Eigen::VectorXcd ev = (A - K.transpose() * C).eigenvalues();
  double largest = 0;
  for (Eigen::Index k = 0; k < ev.size(); ++k) largest = std::max(largest, std::exp(1.5 * ev(k).real()));
  EXPECT_NEAR(j["periodic"]["closed_loop_floquet"]["largest_modulus"].get<double>(), largest, 1e-6 * largest);
}

TEST(PeriodicKalmanBucy, PeriodicPlantIsTheLimitOfTheFilterOverManyPeriods) {
  // The pumped oscillator (unstable open loop: a = 1.2, q = 0.4 lies in the first tongue) with
  // its force as process noise and its position measured.
  auto sys = load_model(ordex_test::model_path("pumped_oscillator.toml"));
  NoiseModel noise;
  noise.Qn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, 0.2), "Qn");
  noise.Rn = WeightMatrix::constant(Eigen::MatrixXd::Constant(1, 1, 0.05), "Rn");
  noise.through = {"f"};
  noise.P0 = 4.0 * Eigen::MatrixXd::Identity(2, 2);
  EstimationOptions o;
  o.noise = noise;
  o.propagation.rtol = 1e-10;
  o.propagation.atol = 1e-12;
  const EstimationReport periodic = estimate_periodic(*sys, 0.0, o);
  o.cross_check = false;
  const EstimationReport window = estimate(*sys, 0.0, 20 * M_PI, o);
  EXPECT_LT((window.P_final - periodic.P0).norm(), 1e-6 * periodic.P0.norm())
      << window.P_final << "\nperiodic:\n" << periodic.P0;
  const nlohmann::json j = periodic.to_json()["periodic"];
  EXPECT_GT(j["open_loop_floquet"]["largest_modulus"].get<double>(), 1.0);
  EXPECT_LT(j["closed_loop_floquet"]["largest_modulus"].get<double>(), 1.0);
}

TEST(PeriodicKalmanBucy, AppWritesThePeriodicGainAndRefusesWhatHasNoSteadyState) {
  const std::string dir = ordex_test::temp_dir();
  const std::string noise = dir + "/periodic_noise.toml";
  ordex_test::write_file(noise, "Qn = [0.2]\nthrough = [\"f\"]\nRn = [0.05]\nP0 = [1, 1]\n");
  const std::string model = ordex_test::model_path("pumped_oscillator.toml");
  const std::string json = dir + "/periodic_filter.json", csv = dir + "/periodic_gain.csv";
  auto r = ordex_test::run_app("ordex-estimate", "--model " + model + " --noise " + noise +
                                                     " --periodic --samples 11 --json " + json + " --csv " + csv);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("periodic steady-state Kalman-Bucy filter"), std::string::npos) << r.out;
  const auto j = nlohmann::json::parse(ordex_test::read_file(json));
  EXPECT_EQ(j["kind"], "periodic-kalman-bucy");
  EXPECT_NEAR(j["t1"].get<double>() - j["t0"].get<double>(), M_PI, 1e-12);
  EXPECT_EQ(j["gain_schedule"]["times"].size(), 11u);
  // --periodic with a sensor schedule, and on a model without a period: exit 2, one line.
  const std::string sensors = dir + "/periodic_sensors.toml";
  ordex_test::write_file(sensors, "[[measurement]]\noutputs = [\"position\"]\nevery = 1.0\nRn = [0.05]\n");
  r = ordex_test::run_app("ordex-estimate", "--model " + model + " --noise " + noise + " --periodic --measurements " +
                                                sensors);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--periodic and --measurements"), std::string::npos) << r.err;
  const std::string flat = dir + "/periodic_flat.toml";
  ordex_test::write_file(flat, "[system]\nstates = [\"x\"]\ninputs = [\"f\"]\noutputs = [\"y\"]\n"
                               "[matrices]\nA = [[-1]]\nB = [[1]]\nC = [[1]]\n[window]\nfrom = 0\nto = 1\n");
  r = ordex_test::run_app("ordex-estimate", "--model " + flat + " --noise " + noise + " --periodic");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("needs a model with a period"), std::string::npos) << r.err;
}
