#pragma once
// What every app shares: the common options of CONTRACT.md, model loading with --set, the
// window and sample grid, and the error handling that turns exceptions into one line on
// standard error and the right exit status.
//
// An app's main is:
//   int main(int argc, char** argv) {
//     return ordex::run_app("ordex-NAME", [&] { ...parse, compute, write...; return 0; });
//   }
#include <Eigen/Dense>
#include <boost/program_options.hpp>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "model/time_grid.hpp"
#include "propagation/options.hpp"

namespace ordex {

namespace po = boost::program_options;

/// Runs BODY; InputError and option-parsing errors print "APP: error: WHAT" and return 2,
/// NumericalError returns 3, anything else returns 3 with its message. Never lets an
/// exception escape.
int run_app(const std::string& app, const std::function<int()>& body);

/// The options of CONTRACT.md "Options every app takes", as parsed text.
struct CommonOptions {
  std::string model;                 ///< --model PATH (required)
  std::vector<std::string> sets;     ///< --set NAME=VALUE, repeatable
  std::string from, to;              ///< --from/--to as typed (expressions allowed); empty = absent
  std::string method = "auto";       ///< --method
  double rtol = 1e-8;                ///< --rtol
  double atol = 1e-10;               ///< --atol
  int samples = 101;                 ///< --samples
  std::string json;                  ///< --json PATH ("-" = standard output); empty = none
  std::string csv;                   ///< --csv PATH; empty = none
};

/// Adds --model --set --from --to --method --rtol --atol --samples --json --csv --help --version
/// to DESC, bound to C. SAMPLES_HELP replaces the default help text of --samples.
void add_common_options(po::options_description& desc, CommonOptions& c,
                        const std::string& samples_help = "");

/// Parses argv into VM against DESC (unknown options and stray arguments are errors).
/// Returns false when --help or --version was given and printed (the app then returns 0).
/// USAGE is the first line of --help; ABOUT is a paragraph printed under it.
bool parse_command_line(int argc, char** argv, const po::options_description& desc,
                        po::variables_map& vm, const std::string& app, const std::string& usage,
                        const std::string& about);

/// Checks the output paths before any work: none is an existing folder, no two name the same
/// file (they would share one temporary and clobber each other), and at most one is "-"
/// (standard output). Empty entries are outputs not asked for. Throws InputError.
void check_output_paths(const std::vector<std::string>& paths);

/// Whether the short human-readable report goes to standard output: not when --json - or
/// --csv - already writes machine-readable data there.
inline bool report_to_stdout(const CommonOptions& c) { return c.json != "-" && c.csv != "-"; }

/// The model, window, engine options and sample grid resolved from the common options.
struct AppSetup {
  std::unique_ptr<System> system;
  double t0 = 0, t1 = 0;           ///< window (from --from/--to or the model's [window])
  PropagationOptions propagation;  ///< method and tolerances, validated
  std::vector<double> samples;     ///< --samples equally spaced times in [t0, t1], ends included
};

/// Loads the model (with --set overrides) and resolves everything else. Throws InputError.
/// With NEED_WINDOW false a missing window is allowed (t0 = t1 = 0).
AppSetup setup_from_common(const CommonOptions& c, bool need_window = true);

/// Parses a comma-separated vector ("1,0,0.5") of EXPECTED entries (-1: any number).
/// OPTION names it in messages ("--x0: 3 entries, the model has 4 states").
Eigen::VectorXd parse_vector(const std::string& text, int expected, const std::string& option,
                             const std::string& what = "states");

/// A progress reporter for long runs: writes "APP: NN%" to standard error now and then when
/// standard error is a terminal, and nothing otherwise.
std::function<void(double)> terminal_progress(const std::string& app);

/// The caution printed with results that can drive hardware (gains, steering inputs).
extern const char* const kHardwareCaution;

}  // namespace ordex
