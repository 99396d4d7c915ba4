#include "common/front_end.hpp"

#include <algorithm>
#include <chrono>
#include <iomanip>
#include <filesystem>
#include <set>
#include <cmath>
#include <iostream>
#include <sstream>
#include <unistd.h>

#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "model/model_file.hpp"
#include "nonlinear/nonlinear_model.hpp"

namespace ordex {

const char* const kHardwareCaution =
    "Caution: these results are analysis aids. Validate them on the full nonlinear plant with "
    "margins, and have them reviewed by qualified engineers under the applicable codes and "
    "standards before they drive real hardware.";

namespace {

/// The run's --json-indent (set by parse_command_line; -1: compact), the default of SummaryOutput.
int g_json_indent = -1;

/// True while a progress bar occupies the terminal's last line (an error then starts a new one).
bool g_bar_open = false;

void end_progress_line() {
  if (g_bar_open) std::cerr << "\n";
  g_bar_open = false;
}

void replace_all(std::string& text, const std::string& from, const std::string& to) {
  for (std::size_t at = text.find(from); at != std::string::npos; at = text.find(from, at + to.size()))
    text.replace(at, from.size(), to);
}

}  // namespace

std::string with_flag_names(std::string text, const FlagNames& flags) {
  FlagNames all = flags;
  all.push_back({"PropagationOptions::method", "--method"});
  all.push_back({"PropagationOptions::rtol", "--rtol"});
  all.push_back({"PropagationOptions::atol", "--atol"});
  // Longer fields first, so that "X::scaling.units" is not caught by "X::scaling".
  std::stable_sort(all.begin(), all.end(),
                   [](const auto& a, const auto& b) { return a.first.size() > b.first.size(); });
  for (const auto& [field, flag] : all) {
    replace_all(text, field + " = ", flag + ": ");
    replace_all(text, field, flag);
  }
  return text;
}

int run_app(const std::string& app, const std::function<int()>& body, const FlagNames& flags) {
  try {
    return body();
  } catch (const InputError& e) {
    end_progress_line();
    std::cerr << app << ": error: " << with_flag_names(e.what(), flags) << std::endl;
    return kExitInput;
  } catch (const std::filesystem::filesystem_error& e) {
    // A path that cannot be used at all (name too long, a loop of links) is bad input.
    end_progress_line();
    std::cerr << app << ": error: " << utf8_escaped(e.path1().string()) << ": " << e.code().message() << std::endl;
    return kExitInput;
  } catch (const po::error& e) {
    std::cerr << app << ": error: " << e.what() << " (see --help)" << std::endl;
    return kExitInput;
  } catch (const NumericalError& e) {
    end_progress_line();
    std::cerr << app << ": error: " << e.what() << std::endl;
    return kExitNumerical;
  } catch (const std::bad_alloc&) {
    std::cerr << app << ": error: out of memory" << std::endl;
    return kExitNumerical;
  } catch (const std::exception& e) {
    end_progress_line();
    std::cerr << app << ": error: " << e.what() << std::endl;
    return kExitNumerical;
  } catch (...) {
    std::cerr << app << ": error: unexpected failure" << std::endl;
    return kExitNumerical;
  }
}

void add_common_options(po::options_description& desc, CommonOptions& c,
                        const std::string& samples_help, const std::string& csv_help) {
  desc.add_options()
      ("help", "print this help and exit")
      ("version", "print the version and exit")
      ("model", po::value(&c.model)->value_name("PATH"), "model file (TOML), required")
      ("set", po::value(&c.sets)->value_name("NAME=VALUE")->composing(),
       "override a parameter of the model; repeatable")
      ("from", po::value(&c.from)->value_name("T0"),
       "start of the window (a number or expression such as 2*pi); default from [window]")
      ("to", po::value(&c.to)->value_name("T1"), "end of the window; default from [window]")
      ("method", po::value(&c.method)->value_name("NAME")->default_value("auto"),
       "auto, magnus4, magnus6, adams, bdf or rk8 (README: Choosing a method)")
      ("rtol", po::value(&c.rtol)->value_name("R")->default_value(1e-8, "1e-8"),
       "relative tolerance of the propagation")
      ("atol", po::value(&c.atol)->value_name("A")->default_value(1e-10, "1e-10"),
       "absolute tolerance of the propagation")
      ("samples",
       samples_help.empty() ? po::value(&c.samples)->value_name("N")->default_value(c.samples)
                            : po::value(&c.samples)->value_name("N"),
       samples_help.empty() ? "equally spaced output times in the window, both ends included"
                            : samples_help.c_str())
      ("json", po::value(&c.json)->value_name("PATH"),
       "write the machine-readable summary; '-' writes it to standard output")
      ("json-indent", po::value(&c.json_indent)->value_name("N"),
       "indent the JSON summary by N spaces a level (0 to 16; 0 puts one item a line); default compact "
       "(one line, no spaces: smaller and quicker to load)")
      ("csv", po::value(&c.csv)->value_name("PATH"),
       csv_help.empty() ? "write the time series, a header row first" : csv_help.c_str());
}

bool parse_command_line(int argc, char** argv, const po::options_description& desc,
                        po::variables_map& vm, const std::string& app, const std::string& usage,
                        const std::string& about) {
  // Arguments that belong to no option are collected so that they can be named in the error
  // (program_options would otherwise ignore them or reject them without saying which).
  std::vector<std::string> stray;
  po::options_description hidden;
  hidden.add_options()("ordex-stray-argument", po::value(&stray));
  po::options_description all;
  all.add(desc).add(hidden);
  po::positional_options_description positional;
  positional.add("ordex-stray-argument", -1);
  po::store(po::command_line_parser(argc, argv).options(all).positional(positional).run(), vm);
  if (vm.count("ordex-stray-argument")) {
    const auto& args = vm["ordex-stray-argument"].as<std::vector<std::string>>();
    throw InputError("unexpected argument '" + args.front() + "' (options start with --; see --help)");
  }
  if (vm.count("help")) {
    std::cout << "Usage: " << usage << "\n\n" << about << "\n\n" << desc << std::endl;
    return false;
  }
  if (vm.count("version")) {
    std::cout << app << " (ordex) " << ORDEX_VERSION << std::endl;
    return false;
  }
  po::notify(vm);
  g_json_indent = -1;
  if (vm.count("json-indent")) {
    const int indent = vm["json-indent"].as<int>();
    if (indent < 0 || indent > 16)
      throw InputError("--json-indent: " + std::to_string(indent) + " is outside [0, 16]");
    g_json_indent = indent;
  }
  return true;
}

std::unique_ptr<System> load_any_model(const CommonOptions& c, const ParameterOverrides& overrides) {
  if (!is_nonlinear_model_file(c.model)) return load_model(c.model, overrides);
  // A nonlinear model: every app works on its linearization about the nominal, which is
  // integrated to the run's tolerances.
  PropagationOptions o;
  o.method = parse_method(c.method);
  o.rtol = c.rtol;
  o.atol = c.atol;
  o.validate();
  return load_linearized_model(c.model, overrides, o);
}

NonlinearSetup nonlinear_setup_from_common(const CommonOptions& c) {
  if (c.model.empty()) throw InputError("--model PATH is required");
  if (!is_nonlinear_model_file(c.model))
    throw InputError(c.model + ": not a nonlinear model (it has no [dynamics] section; docs/nonlinear.md)");
  ParameterOverrides overrides;
  for (const std::string& s : c.sets) {
    auto kv = parse_override(s);
    overrides[kv.first] = kv.second;
  }
  NonlinearSetup s;
  s.propagation.method = parse_method(c.method);
  s.propagation.rtol = c.rtol;
  s.propagation.atol = c.atol;
  s.propagation.validate();
  s.model = load_nonlinear_model(c.model, overrides, s.propagation);
  s.t0 = c.from.empty() ? s.model.nominal->first_time() : evaluate_constant(c.from, "--from");
  s.t1 = c.to.empty() ? s.model.nominal->last_time() : evaluate_constant(c.to, "--to");
  if (!(s.t1 > s.t0) || s.t0 < s.model.nominal->first_time() || s.t1 > s.model.nominal->last_time())
    throw InputError("--from/--to: [" + format_number(s.t0) + ", " + format_number(s.t1) +
                     "] must run forward inside the nominal's window [" + format_number(s.model.nominal->first_time()) +
                     ", " + format_number(s.model.nominal->last_time()) + "]");
  return s;
}

AppSetup setup_from_common(const CommonOptions& c, bool need_window) {
  if (c.model.empty()) throw InputError("--model PATH is required");
  ParameterOverrides overrides;
  for (const std::string& s : c.sets) {
    auto kv = parse_override(s);
    overrides[kv.first] = kv.second;
  }
  AppSetup s;
  s.system = load_any_model(c, overrides);
  const SystemInfo& info = s.system->info();
  std::optional<double> from, to;
  if (!c.from.empty()) from = evaluate_constant(c.from, "--from");
  if (!c.to.empty()) to = evaluate_constant(c.to, "--to");
  if (info.window) {
    if (!from) from = info.window->first;
    if (!to) to = info.window->second;
  }
  if (need_window) {
    if (!from || !to)
      throw InputError(c.model + ": no window: give --from and --to, or a [window] in the model");
    if (*from == *to) throw InputError("--from and --to are equal: the window is empty");
  }
  s.t0 = from.value_or(0.0);
  s.t1 = to.value_or(0.0);
  if (from && to) s.system->require_defined_on(s.t0, s.t1, "--from/--to");
  s.propagation.method = parse_method(c.method);
  s.propagation.rtol = c.rtol;
  s.propagation.atol = c.atol;
  s.propagation.validate();
  if (c.samples < 2) throw InputError("--samples: " + std::to_string(c.samples) + " is fewer than 2");
  if (c.samples > 10000000) throw InputError("--samples: at most 10000000");
  s.samples = linspace(s.t0, s.t1, c.samples);
  return s;
}

void check_output_paths(const std::vector<std::string>& outputs, const std::vector<std::string>& inputs) {
  check_outputs(outputs, inputs);
}

SummaryOutput::SummaryOutput(const std::string& path, std::optional<int> indent)
    : indent_(indent.value_or(g_json_indent)) {
  if (!path.empty()) file_ = std::make_unique<OutputFile>(path);
}

void SummaryOutput::write(const Json& summary) {
  if (file_) file_->stream() << dump_json(summary, indent_) << "\n";
}

void SummaryOutput::commit() {
  if (file_) file_->commit();
}

std::unique_ptr<CsvWriter> open_matrix_csv(const std::string& path, const std::string& prefix, int rows, int cols) {
  if (path.empty()) return nullptr;
  std::vector<std::string> header = matrix_column_names(prefix, rows, cols);
  header.insert(header.begin(), "t");
  return std::make_unique<CsvWriter>(path, header);
}

void write_matrix_row(CsvWriter& csv, double t, const Eigen::MatrixXd& m) {
  std::vector<double> row;
  row.reserve(static_cast<std::size_t>(m.size()) + 1);
  row.push_back(t);
  append_row_major(row, m);
  csv.row(row);
}

std::vector<std::string> run_inputs(const System& sys, const std::vector<std::string>& extra) {
  std::vector<std::string> files = sys.info().files_read;
  for (const std::string& f : extra)
    if (!f.empty()) files.push_back(f);
  return files;
}

void require_forward_window(const AppSetup& s) {
  if (!(s.t1 > s.t0))
    throw InputError("--from/--to: the window must run forward, t1 > t0 (got [" + format_number(s.t0) + ", " +
                     format_number(s.t1) + "])");
}

Eigen::VectorXd parse_vector(const std::string& text, int expected, const std::string& option,
                             const std::string& what) {
  std::vector<double> v;
  std::stringstream in(text);
  std::string item;
  while (std::getline(in, item, ',')) v.push_back(evaluate_constant(item, option));
  if (!text.empty() && text.back() == ',') throw InputError(option + ": trailing comma in '" + text + "'");
  if (v.empty()) throw InputError(option + ": empty vector");
  if (expected >= 0 && static_cast<int>(v.size()) != expected)
    throw InputError(option + ": " + std::to_string(v.size()) + " entries, the model has " +
                     std::to_string(expected) + " " + what);
  return Eigen::Map<Eigen::VectorXd>(v.data(), static_cast<Eigen::Index>(v.size()));
}

std::function<void(double)> progress_reporter(const std::string& app) {
  return progress_reporter(app, std::cerr, ::isatty(STDERR_FILENO) != 0, 5.0);
}

std::function<void(double)> progress_reporter(const std::string& app, std::ostream& out, bool terminal, double every) {
  using Clock = std::chrono::steady_clock;
  struct State {
    Clock::time_point start = Clock::now(), last;
    bool shown = false;
  };
  auto st = std::make_shared<State>();
  const bool to_stderr = &out == &std::cerr;
  return [app, st, &out, terminal, every, to_stderr](double fraction) {
    const Clock::time_point now = Clock::now();
    const double f = std::min(std::max(std::isfinite(fraction) ? fraction : 0.0, 0.0), 1.0);
    const double elapsed = std::chrono::duration<double>(now - st->start).count();
    const double since_last = std::chrono::duration<double>(now - st->last).count();
    const int percent = static_cast<int>(std::floor(100 * f));
    if (terminal) {
      const bool done = f >= 1.0;
      if (elapsed < every / 5 || (!done && st->shown && since_last < every / 25)) return;
      if (done && !st->shown) return;  // a run that ends before the bar would start shows nothing
      st->last = now;
      constexpr int kWidth = 30;
      const int filled = static_cast<int>(f * kWidth);
      out << "\r" << app << " [" << std::string(static_cast<std::size_t>(filled), '#')
          << std::string(static_cast<std::size_t>(kWidth - filled), '.') << "] " << std::setw(3) << percent << "%  "
          << static_cast<long>(elapsed) << " s " << std::flush;
      st->shown = true;
      if (to_stderr) g_bar_open = !done;
      if (done) out << "\n" << std::flush;
      return;
    }
    // Off a terminal (a log, a pipe): a plain line every few seconds, nothing for short runs.
    if (elapsed < every || (st->shown && since_last < every)) return;
    st->last = now;
    st->shown = true;
    out << app << ": " << percent << "% after " << static_cast<long>(elapsed) << " s" << std::endl;
  };
}

}  // namespace ordex
