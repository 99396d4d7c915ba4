#pragma once
// Helpers of the job tests (tests/test_*_job.cpp that call the library without the front end).
#include <Eigen/Dense>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

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

/// A JSON list of rows as a matrix.
inline Eigen::MatrixXd matrix_from_json(const nlohmann::json& j) {
  Eigen::MatrixXd m(j.size(), j.empty() ? 0 : j[0].size());
  for (std::size_t i = 0; i < j.size(); ++i)
    for (std::size_t k = 0; k < j[i].size(); ++k) m(i, k) = j[i][k].get<double>();
  return m;
}

}  // namespace ordex_test
