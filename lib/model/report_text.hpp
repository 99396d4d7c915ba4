#pragma once
// Text forms shared by the jobs' brief reports: a matrix or a direction is shown whole while the
// model is small and summarised beyond kBriefMaxStates states, so that a 40-state run prints a
// few lines, not a 40 x 40 table (the JSON summary always holds everything).
#include <Eigen/Dense>
#include <string>
#include <vector>

namespace ordex {

/// Largest state count whose matrices and directions a brief report prints whole.
constexpr int kBriefMaxStates = 8;

/// NAME (rows x cols) as text, each line starting with INDENT. Up to kBriefMaxStates rows and
/// columns: the whole matrix, one row a line. Larger: its 2-norm, Frobenius norm, extreme
/// singular values and condition number, and the COUNT largest entries by magnitude, each named
/// NAME[row name][column name], with a line saying that the JSON summary holds it in full.
/// ROWS and COLS name the rows and columns (missing names become x1, x2, ...).
std::string matrix_brief(const Eigen::MatrixXd& m, const std::string& name, const std::vector<std::string>& rows,
                         const std::vector<std::string>& cols, const std::string& indent = "  ", int count = 5);

/// A direction (a unit vector over the states) as "x 0.707, v -0.707": every entry up to
/// kBriefMaxStates states; beyond, the COUNT largest entries by magnitude and how many are left.
std::string direction_brief(const Eigen::VectorXd& v, const std::vector<std::string>& names, int count = 6);

/// VALUES (e.g. eigenvalues) as a space-separated list: all of them up to kBriefMaxStates, the
/// COUNT smallest and largest beyond (with "..." and how many are between).
std::string values_brief(const Eigen::VectorXd& values, int count = 3);

}  // namespace ordex
