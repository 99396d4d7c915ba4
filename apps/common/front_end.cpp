#include "common/front_end.hpp"

#include <chrono>
#include <filesystem>
#include <set>
#include <cmath>
#include <iostream>
#include <sstream>
#include <unistd.h>

#include "io/errors.hpp"
#include "model/model_file.hpp"

namespace ordex {

const char* const kHardwareCaution =
    "Caution: these results are analysis aids. Validate them on the full nonlinear plant with "
    "margins, and have them reviewed by qualified engineers under the applicable codes and "
    "standards before they drive real hardware.";

int run_app(const std::string& app, const std::function<int()>& body) {
  try {
    return body();
  } catch (const InputError& e) {
    std::cerr << app << ": error: " << e.what() << std::endl;
    return kExitInput;
  } catch (const po::error& e) {
    std::cerr << app << ": error: " << e.what() << " (see --help)" << std::endl;
    return kExitInput;
  } catch (const NumericalError& e) {
    std::cerr << app << ": error: " << e.what() << std::endl;
    return kExitNumerical;
  } catch (const std::bad_alloc&) {
    std::cerr << app << ": error: out of memory" << std::endl;
    return kExitNumerical;
  } catch (const std::exception& e) {
    std::cerr << app << ": error: " << e.what() << std::endl;
    return kExitNumerical;
  } catch (...) {
    std::cerr << app << ": error: unexpected failure" << std::endl;
    return kExitNumerical;
  }
}

void add_common_options(po::options_description& desc, CommonOptions& c,
                        const std::string& samples_help) {
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
       "auto, magnus4, magnus6, adams or bdf (README: Choosing a method)")
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
      ("csv", po::value(&c.csv)->value_name("PATH"), "write the time series, a header row first");
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
  return true;
}

AppSetup setup_from_common(const CommonOptions& c, bool need_window) {
  if (c.model.empty()) throw InputError("--model PATH is required");
  ParameterOverrides overrides;
  for (const std::string& s : c.sets) {
    auto kv = parse_override(s);
    overrides[kv.first] = kv.second;
  }
  AppSetup s;
  s.system = load_model(c.model, overrides);
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

void check_output_paths(const std::vector<std::string>& paths) {
  int to_stdout = 0;
  std::set<std::string> seen;
  for (const std::string& out : paths) {
    if (out.empty()) continue;
    if (out == "-") {
      if (++to_stdout > 1)
        throw InputError("'-' (standard output) given to two outputs; at most one can use it");
      continue;
    }
    if (std::filesystem::is_directory(out)) throw InputError(out + ": is a folder, not an output file");
    std::error_code ec;
    const std::string key = std::filesystem::weakly_canonical(out, ec).string();
    if (!seen.insert(ec ? out : key).second)
      throw InputError(out + ": named by two outputs; give each output its own file");
  }
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

std::function<void(double)> terminal_progress(const std::string& app) {
  if (!::isatty(STDERR_FILENO)) return {};
  auto last = std::make_shared<std::chrono::steady_clock::time_point>(std::chrono::steady_clock::now());
  auto start = *last;
  return [app, last, start](double fraction) {
    auto now = std::chrono::steady_clock::now();
    if (now - start < std::chrono::seconds(1) || now - *last < std::chrono::milliseconds(500)) return;
    *last = now;
    std::cerr << "\r" << app << ": " << static_cast<int>(std::floor(100 * fraction)) << "%   " << std::flush;
    if (fraction >= 1.0) std::cerr << "\n";
  };
}

}  // namespace ordex
