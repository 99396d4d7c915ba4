#pragma once
// Helpers of the job tests (tests/test_*_job.cpp that call the library without the front end).
#include <Eigen/Dense>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "io/errors.hpp"
#include "model/function_system.hpp"

namespace ordex_test {

/// x' = a x + b u (input "u"), and y = x (output "y") when WITH_OUTPUT.
inline std::unique_ptr<ordex::FunctionSystem> scalar_plant(double a, double b, bool with_output = false) {
  auto sys = std::make_unique<ordex::FunctionSystem>(std::vector<std::string>{"x"});
  sys->set_A([a](double, ordex::MatrixRef m) { m(0, 0) = a; });
  sys->set_B({"u"}, [b](double, ordex::MatrixRef m) { m(0, 0) = b; });
  if (with_output) sys->set_C({"y"}, [](double, ordex::MatrixRef m) { m(0, 0) = 1.0; });
  return sys;
}

/// A bank of COUNT uncoupled oscillators q_i'' + DAMPING q_i' + w_i^2 q_i = u_i with w_i = 0.5,
/// 0.6, ...: 2 COUNT states named q1, p1, q2, p2, ...; inputs u1, u2, ... (one per oscillator,
/// on its p) when DRIVEN. The states' names and sizes make reports of many states testable.
inline ordex::FunctionSystem oscillator_bank(int count, double damping, bool driven) {
  std::vector<std::string> names, inputs;
  for (int i = 1; i <= count; ++i) {
    names.push_back("q" + std::to_string(i));
    names.push_back("p" + std::to_string(i));
    inputs.push_back("u" + std::to_string(i));
  }
  ordex::FunctionSystem sys(names, std::to_string(count) + " oscillators");
  sys.set_A([count, damping](double, ordex::MatrixRef a) {
    a.setZero();
    for (int i = 0; i < count; ++i) {
      const double w = 0.5 + 0.1 * i;
      a(2 * i, 2 * i + 1) = 1;
      a(2 * i + 1, 2 * i) = -w * w;
      a(2 * i + 1, 2 * i + 1) = -damping;
    }
  });
  if (driven)
    sys.set_B(inputs, [count](double, ordex::MatrixRef b) {
      b.setZero();
      for (int i = 0; i < count; ++i) b(2 * i + 1, i) = 1;
    });
  return sys;
}

/// The message of the InputError that F throws ("" when it throws none).
template <class F>
std::string input_error_of(F f) {
  try {
    f();
  } catch (const ordex::InputError& e) {
    return e.what();
  }
  return "";
}

/// A matrix as a JSON list of rows (for the Python reference scripts).
inline nlohmann::json json_rows(const Eigen::MatrixXd& m) {
  nlohmann::json j = nlohmann::json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    nlohmann::json r = nlohmann::json::array();
    for (Eigen::Index k = 0; k < m.cols(); ++k) r.push_back(m(i, k));
    j.push_back(r);
  }
  return j;
}

/// A JSON list of rows as a matrix.
inline Eigen::MatrixXd matrix_from_json(const nlohmann::json& j) {
  Eigen::MatrixXd m(j.size(), j.empty() ? 0 : j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
}

}  // namespace ordex_test
