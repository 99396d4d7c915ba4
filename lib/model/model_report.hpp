#pragma once
// What a loaded model is, in brief (for an app's report) and in full (for --json).
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "io/json.hpp"
#include "model/system.hpp"

namespace ordex {

struct ModelReport {
  std::string source;  ///< the model file, or "code"
  std::string title;
  std::vector<std::string> states, inputs, outputs;
  std::vector<std::pair<std::string, double>> parameters;  ///< values in effect (after --set)
  std::optional<double> period;
  std::optional<std::pair<double, double>> window;
  int breakpoints = 0;          ///< declared plus those of linear tables
  int entries = 0;              ///< entries of A, B, C, D
  int time_varying_entries = -1;  ///< re-evaluated at every t (-1: not known, a C++ model)
  struct Table {
    std::string file, interpolation, outside;
    std::vector<std::string> columns;
    int rows = 0;
    double first = 0, last = 0;
  };
  std::vector<Table> tables;

  /// The full summary: keys source, title, states, inputs, outputs, parameters (object),
  /// period, window ([from, to]), breakpoints, entries, time_varying_entries, tables.
  Json to_json() const;
  /// Two or three lines for standard output.
  std::string brief() const;
};

/// Describes SYS; models loaded from files give their parameters, tables and entry counts.
ModelReport describe_model(const System& sys);

}  // namespace ordex
