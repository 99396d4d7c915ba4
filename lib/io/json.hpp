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

/// J as indented text (2 spaces), a newline not included. Strings that are not valid UTF-8
/// (a file name in another encoding) are written with each invalid byte as the text \xNN
/// instead of failing (nlohmann's type_error 316).
std::string dump_json(const Json& j);

/// TEXT made valid UTF-8: every byte that is not part of a well-formed sequence becomes \xNN.
std::string utf8_escaped(const std::string& text);

/// Writes J (indented) to PATH atomically; "-" is standard output.
void write_json_file(const std::string& path, const Json& j);

}  // namespace ordex
