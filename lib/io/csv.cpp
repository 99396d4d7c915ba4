#include "io/csv.hpp"

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <sstream>

#include "io/errors.hpp"
#include "io/input_file.hpp"

namespace ordex {
namespace {

std::string trim(const std::string& s) {
  std::size_t b = s.find_first_not_of(" \t\r");
  if (b == std::string::npos) return "";
  std::size_t e = s.find_last_not_of(" \t\r");
  return s.substr(b, e - b + 1);
}

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> out;
  std::string field;
  std::istringstream in(line);
  while (std::getline(in, field, ',')) out.push_back(trim(field));
  if (!line.empty() && line.back() == ',') out.push_back("");
  return out;
}

// The message for a file whose fields are separated by something else than a comma (a
// spreadsheet in a decimal-comma locale writes "0,5;1,2"; others write tabs).
std::string separator_problem(const std::string& line) {
  if (line.find(';') != std::string::npos) return "fields are separated by ';'";
  if (line.find('\t') != std::string::npos) return "fields are separated by tabs";
  return "";
}

[[noreturn]] void fail_separator(const std::string& where, const std::string& problem) {
  throw InputError(where + problem + "; the separator must be a comma (and numbers use a decimal point)");
}

}  // namespace

CsvTable read_csv(const std::string& path) {
  LineReader in(path, "CSV file");
  CsvTable t;
  t.path = path;
  std::vector<std::vector<double>> rows;
  std::string line;
  while (in.next(line)) {
    const int lineno = in.line_number();
    const std::string where = path + ":" + std::to_string(lineno) + ": ";
    std::string s = trim(line);
    if (s.empty() || s[0] == '#') continue;
    std::vector<std::string> fields = split(s);
    if (t.header.empty()) {
      // Spreadsheets end every line with a separator: a last column without a name is empty.
      if (fields.size() > 1 && fields.back().empty()) fields.pop_back();
      for (const auto& f : fields) {
        std::string sep = separator_problem(f);
        if (!sep.empty()) fail_separator(where, sep);
        if (f.empty()) throw InputError(where + "empty column name in header");
      }
      t.header = fields;
      t.header_line = lineno;
      continue;
    }
    // A spreadsheet's trailing separator, with or without an unnamed last header column.
    if (fields.size() == t.header.size() + 1 && fields.back().empty()) fields.pop_back();
    if (fields.size() != t.header.size()) {
      std::string sep = separator_problem(s);
      if (!sep.empty()) fail_separator(where, sep);
      throw InputError(where + std::to_string(fields.size()) + " fields, the header has " +
                       std::to_string(t.header.size()) +
                       (fields.size() > t.header.size() ? " (a decimal comma? numbers use a decimal point)" : ""));
    }
    std::vector<double> r;
    r.reserve(fields.size());
    for (std::size_t j = 0; j < fields.size(); ++j) {
      const std::string& f = fields[j];
      char* end = nullptr;
      errno = 0;
      double v = f.empty() ? 0.0 : std::strtod(f.c_str(), &end);
      if (f.empty() || end == f.c_str() || *end != '\0' || !std::isfinite(v)) {
        std::string sep = separator_problem(f);
        if (!sep.empty()) fail_separator(where, sep);
        throw InputError(where + "column " + quote_clipped(t.header[j]) + ": " + quote_clipped(f) +
                         " is not a finite number");
      }
      r.push_back(v);
    }
    rows.push_back(std::move(r));
    t.line_of_row.push_back(lineno);
  }
  if (t.header.empty()) throw InputError(path + ": empty file (no header row)");
  t.values.resize(static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(t.header.size()));
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < t.header.size(); ++j) t.values(i, j) = rows[i][j];
  return t;
}

void require_time_column(const CsvTable& table, int min_rows) {
  if (table.header.empty() || table.header[0] != "t")
    throw InputError(table.path + ":" + std::to_string(table.header_line) +
                     ": the first column must be named 't'");
  if (table.values.rows() < min_rows)
    throw InputError(table.path + ": " + std::to_string(table.values.rows()) +
                     " data rows, at least " + std::to_string(min_rows) + " are needed");
  for (Eigen::Index i = 1; i < table.values.rows(); ++i)
    if (!(table.values(i, 0) > table.values(i - 1, 0)))
      throw InputError(table.path + ":" + std::to_string(table.line_of_row[i]) +
                       ": t is not strictly increasing");
}

CsvWriter::CsvWriter(const std::string& path, const std::vector<std::string>& header)
    : out_(path), columns_(header.size()) {
  std::ostream& o = out_.stream();
  o.precision(17);
  for (std::size_t j = 0; j < header.size(); ++j) o << (j ? "," : "") << header[j];
  o << "\n";
}

void CsvWriter::row(const std::vector<double>& values) {
  std::ostream& o = out_.stream();
  for (std::size_t j = 0; j < values.size(); ++j) o << (j ? "," : "") << values[j];
  o << "\n";
}

void CsvWriter::row(double t, const Eigen::Ref<const Eigen::VectorXd>& values) {
  std::ostream& o = out_.stream();
  o << t;
  for (Eigen::Index j = 0; j < values.size(); ++j) o << "," << values(j);
  o << "\n";
}

void CsvWriter::commit() { out_.commit(); }

std::vector<std::string> matrix_column_names(const std::string& prefix, int rows, int cols) {
  std::vector<std::string> names;
  for (int i = 1; i <= rows; ++i)
    for (int j = 1; j <= cols; ++j)
      names.push_back(prefix + "_" + std::to_string(i) + "_" + std::to_string(j));
  return names;
}

void append_row_major(std::vector<double>& v, const Eigen::MatrixXd& m) {
  for (Eigen::Index i = 0; i < m.rows(); ++i)
    for (Eigen::Index j = 0; j < m.cols(); ++j) v.push_back(m(i, j));
}

}  // namespace ordex
