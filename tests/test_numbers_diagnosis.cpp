// Failures that name their cause: the model entry that is not finite, too large, or blowing up
// where the engine stops, through the library and through ordex-propagate (exit 3, one line).
#include <gtest/gtest.h>

#include <regex>

#include "model/function_system.hpp"
#include "model/model_file.hpp"
#include "propagation/generator.hpp"
#include "support.hpp"

namespace {

using namespace ordex;

std::string write_model(const std::string& name, const std::string& body) {
  const std::string path = ordex_test::temp_dir() + "/" + name + ".toml";
  ordex_test::write_file(path, "[system]\nstates = [\"x\", \"v\"]\n[window]\nfrom = 0\nto = 1\n" + body);
  return path;
}

const std::string kPole = "[matrices]\nA = [[0, 1], [\"1/(t-0.1)\", 0]]\n";
const std::string kMass = "[parameters]\nk = 3\n[define]\nm = \"1 - t/0.5\"\n[matrices]\nA = [[0, 1], [\"-k/m\", 0]]\n";
const std::string kHuge = "[matrices]\nA = [[1e308, 1], [0, 0]]\n";

TEST(NumbersDiagnosis, ModelNamesTheEntryThatBreaksDown) {
  // A pole at t = 0.1, seen from just before it (where step-size control gives up).
  auto pole = load_model(write_model("pole", kPole));
  std::string d = pole->diagnose_entries(0.0999, 1.0);
  EXPECT_NE(d.find("matrices.A[2][1] = 1/(t-0.1) is not finite at t = 0.1"), std::string::npos) << d;
  EXPECT_NE(d.find("pole.toml"), std::string::npos) << d;
  // A mass reaching zero at t = 0.5, through a [define].
  auto mass = load_model(write_model("mass", kMass));
  d = mass->diagnose_entries(0.49, 1.0);
  EXPECT_NE(d.find("matrices.A[2][1] = -k/m is not finite at t = 0.5"), std::string::npos) << d;
  // Finite but far too large to compute with.
  auto huge = load_model(write_model("huge", kHuge));
  d = huge->diagnose_entries(0.0, 1.0);
  EXPECT_NE(d.find("matrices.A[1][1] = 1e+308 at t = 0 is too large"), std::string::npos) << d;
  // A sound model says nothing.
  EXPECT_EQ(load_model(write_model("fine", "[matrices]\nA = [[0, 1], [\"-1-t\", 0]]\n"))->diagnose_entries(0.5, 1), "");
}

TEST(NumbersDiagnosis, GenericDefaultNamesMatrixAndIndex) {
  FunctionSystem s({"x", "v"});
  s.set_A([](double t, MatrixRef a) { a << 0, 1, -2.0 / (0.75 - t), 0; });
  const std::string d = s.diagnose_entries(0.7, 1.0);
  EXPECT_NE(d.find("A[2][1] is not finite at t = 0.75"), std::string::npos) << d;
  // Backward integration looks the other way.
  EXPECT_NE(s.diagnose_entries(0.8, -1.0).find("A[2][1]"), std::string::npos);
  EXPECT_EQ(s.diagnose_entries(0.7, -1.0), "");
  // with_diagnosis wraps the engine's own message.
  const Generator g = state_generator(s);
  const std::string m = with_diagnosis(g, 0.7, 1.0, "A(t): step size underflow at t = 0.7");
  EXPECT_NE(m.find("A[2][1] is not finite at t = 0.75 (A(t): step size underflow at t = 0.7)"), std::string::npos) << m;
}

TEST(NumbersDiagnosis, AppFailureNamesTheEntryInOneLine) {
  for (const auto& [name, body, expect] :
       std::vector<std::tuple<std::string, std::string, std::string>>{
           {"app_pole", kPole, "matrices.A[2][1] = 1/(t-0.1) is not finite at t = 0.1"},
           {"app_mass", kMass, "matrices.A[2][1] = -k/m is not finite at t = 0.5"},
           // the engine stops within a few doubles of t = 0 (3.6e-310), where the entry is named
           {"app_huge", kHuge, "matrices.A[1][1] = 1e+308 at t = "}}) {
    auto r = ordex_test::run_app("ordex-propagate", "--model " + write_model(name, body));
    EXPECT_EQ(r.exit_code, 3) << name << ": " << r.err;
    EXPECT_EQ(ordex_test::line_count(r.err), 1) << r.err;
    EXPECT_NE(r.err.find(expect), std::string::npos) << name << ": " << r.err;
  }
}

}  // namespace
