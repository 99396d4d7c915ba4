#pragma once
// Numeric CSV files: one header row of column names, then one row a sample. The writer is
// atomic (complete or absent); the reader reports every problem with the file and line.
#include <Eigen/Dense>
#include <memory>
#include <string>
#include <vector>

#include "io/output_file.hpp"

namespace ordex {

/// A numeric table read from CSV: column names from the header and the values, one row a line.
struct CsvTable {
  std::string path;                 ///< the file it came from (for messages)
  std::vector<std::string> header;  ///< column names, trimmed
  Eigen::MatrixXd values;           ///< rows x columns
  std::vector<int> line_of_row;     ///< 1-based file line of each data row (for messages)
  int header_line = 1;              ///< 1-based file line of the header row
};

/// Reads PATH (bounded: see io/input_file.hpp). Blank lines and lines starting with '#' are
/// skipped; a UTF-8 byte-order mark is ignored; one trailing empty column (the separator that
/// spreadsheets put at the end of each line) is dropped. Every data row must have as many
/// fields as the header, each a finite number. Fields separated by ';' or tabs are refused
/// with "the separator must be a comma". Throws InputError "PATH:LINE: what", quoting at most
/// about 80 characters of a field.
CsvTable read_csv(const std::string& path);

/// Requires column 0 to be named "t" and strictly increasing, and at least MIN_ROWS rows.
void require_time_column(const CsvTable& table, int min_rows = 2);

/// Streams rows to an OutputFile; numbers with full double precision.
class CsvWriter {
 public:
  CsvWriter(const std::string& path, const std::vector<std::string>& header);
  void row(const std::vector<double>& values);
  void row(double t, const Eigen::Ref<const Eigen::VectorXd>& values);
  /// Renames the finished file into place; without it the file is absent.
  void commit();

 private:
  OutputFile out_;
  std::size_t columns_;
};

/// Column names "PREFIX_i_j" (1-based, row-major) for an R x C matrix.
std::vector<std::string> matrix_column_names(const std::string& prefix, int rows, int cols);
/// Appends M row-major to V.
void append_row_major(std::vector<double>& v, const Eigen::MatrixXd& m);

}  // namespace ordex
