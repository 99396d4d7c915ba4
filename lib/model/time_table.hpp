#pragma once
// Time series read from CSV that a model interpolates: the `[table]` section of a model file
// (docs/models.md "Tabulated models"). Column t holds the sample times (strictly increasing);
// every other column becomes a time-dependent symbol of the model's expressions.
#include <string>
#include <vector>

namespace ordex {

enum class Interpolation {
  linear,  ///< straight lines between samples: continuous, kinks at every sample time
  pchip,   ///< piecewise cubic Hermite, shape preserving (Fritsch-Carlson / Fritsch-Butland)
};

enum class OutsidePolicy {
  error,  ///< a time outside [first, last] is a NumericalError naming t and the file
  hold,   ///< a time outside [first, last] takes the value at the nearer end
};

/// How one table is read and interpolated (the keys of a [table] section).
struct TableOptions {
  /// CSV file (key `file`, required). A relative path is taken relative to the model file's
  /// folder by the loader; here it is the path to open.
  std::string file;
  /// `interpolation`: "linear" (default) or "pchip".
  Interpolation interpolation = Interpolation::linear;
  /// `outside`: "error" (default) or "hold".
  OutsidePolicy outside = OutsidePolicy::error;

  /// Throws InputError when `file` is empty. WHERE ("PATH: table") starts the message.
  void validate(const std::string& where) const;
};

const char* to_string(Interpolation i);
const char* to_string(OutsidePolicy o);

class TimeTable {
 public:
  /// Reads OPTIONS.file. Throws InputError "FILE:LINE: what" for a bad CSV (non-numeric field,
  /// wrong field count, t not increasing), a column name that is not a valid symbol, too few
  /// rows (2 for linear, 4 for pchip).
  explicit TimeTable(const TableOptions& options);
  /// A table from samples in memory (the Python package's System.from_samples): VALUES[c][k] is
  /// column COLUMNS[c] at TIMES[k]. OPTIONS.file names the table in messages (no file is read).
  /// Throws InputError for too few or not strictly increasing times, sizes that do not match
  /// or a value that is not finite.
  TimeTable(const TableOptions& options, std::vector<std::string> columns, std::vector<double> times,
            std::vector<std::vector<double>> values);

  const std::string& path() const { return options_.file; }
  const TableOptions& options() const { return options_; }
  /// Column names other than t, in file order.
  const std::vector<std::string>& columns() const { return columns_; }
  const std::vector<double>& times() const { return times_; }
  double first_time() const { return times_.front(); }
  double last_time() const { return times_.back(); }
  /// Times where the interpolant is only continuous: every sample time for linear, the two
  /// ends for pchip.
  std::vector<double> breakpoints() const;

  /// Every column at T into OUT[0 .. columns()-1]. Allocates nothing. Throws NumericalError
  /// for T outside the table under OutsidePolicy::error (a relative slack of 1e-12 of the
  /// table's span absorbs rounding at the ends).
  void evaluate(double t, double* out) const;
  /// One column at T (same rules as evaluate).
  double value(int column, double t) const;

 private:
  /// pchip: the derivative at each sample from times_ and values_ (nothing for linear).
  void compute_slopes();
  double clamp_time(double t) const;
  /// The interval k with times_[k] <= t <= times_[k+1] for t inside the table.
  std::size_t interval(double t) const;
  double at(std::size_t column, std::size_t k, double t) const;

  TableOptions options_;
  std::vector<std::string> columns_;
  std::vector<double> times_;
  std::vector<std::vector<double>> values_;  // values_[column][row]
  std::vector<std::vector<double>> slopes_;  // pchip: derivative at each sample, per column
};

}  // namespace ordex
