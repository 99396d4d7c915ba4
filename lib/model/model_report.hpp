#pragma once
// What a loaded model is, in brief (for an app's report) and in full (for --json); and the
// header that every job's JSON summary starts with.
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

/// The header every job's JSON summary starts with (CONTRACT.md "The library as a package"), so
/// that a summary says which model, with which parameter values, over which window and by which
/// method it was computed. A job's Report keeps one and its to_json() starts from it.
struct ReportHeader {
  std::string title;   ///< SystemInfo::title (may be empty)
  std::string source;  ///< SystemInfo::source (the model file, or "code")
  /// SystemInfo::parameters: the values in effect after overrides, in file order.
  std::vector<std::pair<std::string, double>> parameters;
  double t0 = 0, t1 = 0;  ///< the window
  std::string method;     ///< the method actually used (never "auto")

  /// {"ordex_version", "model": {"title", "source", "parameters": {NAME: VALUE, ...}}, "t0",
  /// "t1", "method"}, in this order; the job's own keys follow.
  Json to_json() const;
};

/// The header of a job on SYS over [t0, t1] computed by METHOD.
ReportHeader report_header(const System& sys, double t0, double t1, const std::string& method);

/// SUMMARY with "app": APP as its first key, for the summaries the apps write.
Json with_app(const std::string& app, const Json& summary);

}  // namespace ordex
