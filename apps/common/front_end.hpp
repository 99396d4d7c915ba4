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
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "io/csv.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "model/system.hpp"
#include "model/time_grid.hpp"
#include "nonlinear/nonlinear_model.hpp"
#include "propagation/options.hpp"

namespace ordex {

namespace po = boost::program_options;

/// Library field names and the app's flags for them, e.g. {"GramianJobOptions::rank_tol",
/// "--rank-tol"}: the library's messages name Options fields, the user typed flags.
using FlagNames = std::vector<std::pair<std::string, std::string>>;

/// TEXT with every field of FLAGS (and PropagationOptions::method, rtol, atol, which every app
/// takes as --method, --rtol, --atol) replaced by its flag: "Struct::field = V is ..." becomes
/// "--flag: V is ...", any other mention of the field the flag itself.
std::string with_flag_names(std::string text, const FlagNames& flags = {});

/// Runs BODY; InputError and option-parsing errors print "APP: error: WHAT" (fields translated
/// to flags by with_flag_names) and return 2, as do filesystem errors (a path that cannot be
/// used); NumericalError returns 3, anything else returns 3 with its message. Never lets an
/// exception escape.
int run_app(const std::string& app, const std::function<int()>& body, const FlagNames& flags = {});

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
  int json_indent = -1;              ///< --json-indent N (0..16); -1 (default) = compact JSON
};

/// Adds --model --set --from --to --method --rtol --atol --samples --json --json-indent --csv
/// --help --version to DESC, bound to C. SAMPLES_HELP (CSV_HELP) replaces the default help text
/// of --samples (--csv).
void add_common_options(po::options_description& desc, CommonOptions& c,
                        const std::string& samples_help = "", const std::string& csv_help = "");

/// Parses argv into VM against DESC (unknown options and stray arguments are errors).
/// Returns false when --help or --version was given and printed (the app then returns 0).
/// USAGE is the first line of --help; ABOUT is a paragraph printed under it.
bool parse_command_line(int argc, char** argv, const po::options_description& desc,
                        po::variables_map& vm, const std::string& app, const std::string& usage,
                        const std::string& about);

/// The one output check of every app, before any work: the outputs against each other and
/// against the run's INPUTS (check_outputs in io/output_file.hpp: no output names an input, two
/// outputs never name one file, no output is a folder, at most one is "-"). Empty entries are
/// outputs (inputs) not asked for. Throws InputError.
void check_output_paths(const std::vector<std::string>& outputs, const std::vector<std::string>& inputs = {});

/// The input files of a run: every file SYS was read from (the model file, its tables' CSV
/// files) followed by EXTRA (--input, --weights, --times, ...; empty entries skipped).
std::vector<std::string> run_inputs(const System& sys, const std::vector<std::string>& extra = {});

/// The --json summary: opened (as a temporary) before the work, so that an unwritable path
/// fails first; write() writes the summary, commit() puts it in place (OutputFile: "-" is
/// standard output, a write error is an error). An empty path writes nothing. The text is
/// compact unless INDENT (or, when INDENT is not given, this run's --json-indent as parsed by
/// parse_command_line: so every app honours it without passing it along) asks for indentation.
class SummaryOutput {
 public:
  explicit SummaryOutput(const std::string& path, std::optional<int> indent = std::nullopt);
  void write(const Json& summary);
  void commit();

 private:
  std::unique_ptr<OutputFile> file_;
  int indent_ = -1;
};

/// A CSV at PATH with the header "t,PREFIX_1_1,...,PREFIX_R_C" (row-major, 1-based) for a
/// matrix time series; null when PATH is empty.
std::unique_ptr<CsvWriter> open_matrix_csv(const std::string& path, const std::string& prefix, int rows, int cols);
/// Appends the row t, M (row-major) to CSV.
void write_matrix_row(CsvWriter& csv, double t, const Eigen::MatrixXd& m);

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

/// The model of --model: a model file, or a nonlinear model file ([dynamics]) as its
/// linearization about the nominal (integrated with --method, --rtol, --atol).
std::unique_ptr<System> load_any_model(const CommonOptions& c, const std::map<std::string, double>& overrides);

/// Loads the model (with --set overrides) and resolves everything else. Throws InputError.
/// With NEED_WINDOW false a missing window is allowed (t0 = t1 = 0).
AppSetup setup_from_common(const CommonOptions& c, bool need_window = true);

/// Throws InputError "--from/--to: ..." unless the window of S runs forward (t1 > t0).
void require_forward_window(const AppSetup& s);

/// Parses a comma-separated vector ("1,0,0.5") of EXPECTED entries (-1: any number).
/// OPTION names it in messages ("--x0: 3 entries, the model has 4 states").
Eigen::VectorXd parse_vector(const std::string& text, int expected, const std::string& option,
                             const std::string& what = "states");

/// The progress reporter of long runs, called with the fraction done (0 to 1). On a terminal
/// (standard error) a bar "APP [#####.....]  50%  12 s" redrawn in place, from the first second
/// on; otherwise one line "APP: 50% after 10 s" every 5 seconds, from the fifth on, so short
/// runs print nothing. Not thread-safe: call it from one thread.
std::function<void(double)> progress_reporter(const std::string& app);
/// The same with its parts given (for tests): OUT instead of standard error, TERMINAL choosing
/// the bar or the lines, EVERY the seconds between lines (the bar starts after EVERY / 5 and is
/// redrawn at most every EVERY / 25).
std::function<void(double)> progress_reporter(const std::string& app, std::ostream& out, bool terminal, double every);
/// The former name of progress_reporter.
inline std::function<void(double)> terminal_progress(const std::string& app) { return progress_reporter(app); }


/// A nonlinear model from the common options (--model, --set, --from/--to, --method, --rtol,
/// --atol): the model with its nominal, the window (default the model's) and the options.
struct NonlinearSetup {
  NonlinearModel model;
  double t0 = 0, t1 = 0;
  PropagationOptions propagation;
};
/// Throws InputError when --model is not a nonlinear model file ([dynamics]).
NonlinearSetup nonlinear_setup_from_common(const CommonOptions& c);

/// The caution printed with results that can drive hardware (gains, steering inputs).
extern const char* const kHardwareCaution;

}  // namespace ordex
