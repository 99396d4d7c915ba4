#pragma once
// The pieces of the weights reader that other files of matrices reuse (the estimator's noise
// file and sensor schedule): a matrix entry by entry as numbers or expressions of t, and the
// symmetry and definiteness checks. Internal to the library (needs toml++).
#include <Eigen/Dense>
#include <string>
#include <toml++/toml.h>
#include <utility>

#include "riccati/weights.hpp"

namespace ordex {
namespace weight_detail {

/// Reads NODE as a ROWS x COLS matrix (a list of rows) or, when square, a flat list meaning the
/// diagonal; entries numbers or expression strings of t. Messages name "PATH: KEY[i][j]".
WeightMatrix read_weight_matrix(const toml::node& node, const std::string& path, const std::string& key, int rows,
                                int cols);

/// Throws InputError "NAME: not symmetric at t = T (entry [i][j] = .. but [j][i] = ..)" unless
/// |X - X'| <= TOL * max(1, largest |entry|).
void require_symmetric(const Eigen::MatrixXd& x, const std::string& name, double t, double tol);

/// Smallest eigenvalue and largest eigenvalue magnitude of the symmetric part of X.
std::pair<double, double> eigen_range(const Eigen::MatrixXd& x);

/// Parses TEXT as TOML; InputError "PATH:LINE: not valid TOML: ..." otherwise.
toml::table parse_toml_text(const std::string& text, const std::string& path);

}  // namespace weight_detail
}  // namespace ordex
