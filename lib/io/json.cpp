#include "io/json.hpp"

#include <cmath>

#include "io/output_file.hpp"

namespace ordex {

Json number_to_json(double x) { return std::isfinite(x) ? Json(x) : Json(nullptr); }

Json to_json(const Eigen::MatrixXd& m) {
  Json rows = Json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    Json row = Json::array();
    for (Eigen::Index j = 0; j < m.cols(); ++j) row.push_back(number_to_json(m(i, j)));
    rows.push_back(std::move(row));
  }
  return rows;
}

Json vector_to_json(const Eigen::VectorXd& v) {
  Json a = Json::array();
  for (Eigen::Index i = 0; i < v.size(); ++i) a.push_back(number_to_json(v(i)));
  return a;
}

Json vector_to_json(const std::vector<double>& v) {
  Json a = Json::array();
  for (double x : v) a.push_back(number_to_json(x));
  return a;
}

void write_json_file(const std::string& path, const Json& j) {
  OutputFile f(path);
  f.stream() << j.dump(2) << "\n";
  f.commit();
}

}  // namespace ordex
