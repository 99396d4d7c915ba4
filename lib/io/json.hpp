#pragma once
// JSON summaries (CONTRACT.md): matrices as lists of rows, numbers with full double precision.
// nlohmann::json prints doubles in shortest round-trip form, which is full precision.
#include <Eigen/Dense>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace ordex {

using Json = nlohmann::ordered_json;

/// A matrix as a list of rows. Non-finite entries become null (JSON has no NaN).
Json to_json(const Eigen::MatrixXd& m);
/// A vector as a flat list.
Json vector_to_json(const Eigen::VectorXd& v);
Json vector_to_json(const std::vector<double>& v);
/// A number, or null when non-finite.
Json number_to_json(double x);

/// Writes J (indented) to PATH atomically; "-" is standard output.
void write_json_file(const std::string& path, const Json& j);

}  // namespace ordex
