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

/// J as text, a newline not included: compact (no spaces or line breaks: large results stay
/// small and quick to load) when INDENT < 0, the default; otherwise indented by INDENT spaces a
/// level (0: one item a line). Strings that are not valid UTF-8 (a file name in another
/// encoding) are written with each invalid byte as the text \xNN instead of failing
/// (nlohmann's type_error 316).
std::string dump_json(const Json& j, int indent = -1);

/// TEXT made valid UTF-8: every byte that is not part of a well-formed sequence becomes \xNN.
std::string utf8_escaped(const std::string& text);

/// Writes J (compact, or indented as in dump_json) to PATH atomically; "-" is standard output.
void write_json_file(const std::string& path, const Json& j, int indent = -1);

}  // namespace ordex
