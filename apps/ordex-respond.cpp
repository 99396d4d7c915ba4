// ordex-respond: the forced response of the model to recorded or planned input histories
// (CONTRACT.md "ordex-respond"). The work is in lib/response; this file maps options to it.
#include <algorithm>
#include <filesystem>
#include <iostream>
#include <memory>
#include <set>

#include "common/front_end.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "model/model_file.hpp"
#include "response/respond.hpp"

namespace {

std::string join_names(const std::vector<std::string>& names) {
  std::string s;
  for (std::size_t i = 0; i < names.size(); ++i) s += (i ? ", " : "") + names[i];
  return s;
}

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app("ordex-respond", [&] {
    namespace po = ordex::po;
    ordex::CommonOptions c;
    std::vector<std::string> inputs;
    std::string hold = "linear", x0_text, path = "exact";
    po::options_description desc("Options");
    ordex::add_common_options(desc, c,
                              "output times: N equally spaced in the window, both ends included "
                              "(default: the input's own sample times)");
    desc.add_options()
        ("input", po::value(&inputs)->value_name("PATH")->composing(),
         "input history CSV with header t,<input names in model order>, t strictly increasing; "
         "repeat for several histories (each gets its own result; --csv then names a folder)")
        ("hold", po::value(&hold)->value_name("zoh|linear")->default_value("linear"),
         "the input between samples: zoh holds each sample until the next, linear interpolates")
        ("x0", po::value(&x0_text)->value_name("V"), "initial state, comma-separated (default zero)")
        ("path", po::value(&path)->value_name("exact|direct")->default_value("exact"),
         "exact: step matrices of the held-input block generator from the transition-matrix engine, "
         "shared by histories on one time grid; direct: CVODE on x' = A x + B u(t), a cross-check "
         "(--method adams or bdf picks its scheme)")
        ("no-reuse", "integrate every interval even when every entry of the model is a constant "
                     "(otherwise equal-length intervals share one step)");
    po::variables_map vm;
    if (!ordex::parse_command_line(argc, argv, desc, vm, "ordex-respond",
                                   "ordex-respond --model PATH --input PATH [--input PATH ...] [options]",
                                   "Replays sampled input histories through x' = A(t) x + B(t) u and writes "
                                   "x(t) and y = C x + D u at the output times. The window defaults to the "
                                   "model's [window], else to the input's time span; it must lie inside the "
                                   "samples. --csv writes t,<states>,<outputs>; with several --input it names "
                                   "a folder that gets one STEM.csv per input file. A model without inputs "
                                   "gives its free response over the window (--samples times). Exit status: 0 "
                                   "done, 2 bad input, 3 numerical failure. Details: docs/response.md."))
      return 0;

    ordex::AppSetup s = ordex::setup_from_common(c, false);
    const ordex::System& sys = *s.system;
    const ordex::SystemInfo& info = sys.info();
    ordex::RespondOptions o;
    o.hold = ordex::parse_hold(hold);
    o.path = ordex::parse_response_path(path);
    o.propagation = s.propagation;
    o.reuse_time_invariant = vm.count("no-reuse") == 0;
    if (vm.count("x0") && x0_text.empty()) throw ordex::InputError("--x0: empty vector");
    if (!x0_text.empty()) o.x0 = ordex::parse_vector(x0_text, sys.states(), "--x0");
    o.progress = ordex::terminal_progress("ordex-respond");

    std::vector<ordex::InputHistory> histories;
    if (sys.inputs() == 0) {
      if (!inputs.empty())
        throw ordex::InputError("--input: the model " + c.model + " has no inputs (give none for its free response)");
    } else if (inputs.empty()) {
      throw ordex::InputError("--input PATH is required: the model " + c.model + " has inputs " +
                              join_names(info.input_names));
    }
    for (const std::string& p : inputs) histories.push_back(ordex::read_input_history(p, sys));

    // Window: --from/--to, else [window], else the span the histories share.
    const bool samples_given = vm.count("samples") > 0 && !vm["samples"].defaulted();
    std::optional<double> from, to;
    if (!c.from.empty()) from = ordex::evaluate_constant(c.from, "--from");
    if (!c.to.empty()) to = ordex::evaluate_constant(c.to, "--to");
    if (info.window) {
      if (!from) from = info.window->first;
      if (!to) to = info.window->second;
    }
    if (histories.empty()) {
      if (!from || !to)
        throw ordex::InputError(c.model + ": no window for the free response: give --from and --to, or a [window] in the model");
      if (!(*from < *to)) throw ordex::InputError("--from/--to: the window must run forward");
      histories.push_back(ordex::free_response_history(*from, *to));
      o.window = std::make_pair(*from, *to);
      o.sample_times = ordex::linspace(*from, *to, c.samples);
    } else {
      if (from || to || samples_given) {
        double lo = histories[0].times.front(), hi = histories[0].times.back();
        for (const auto& h : histories) {
          lo = std::max(lo, h.times.front());
          hi = std::min(hi, h.times.back());
        }
        o.window = std::make_pair(from.value_or(lo), to.value_or(hi));
        if (!(o.window->first < o.window->second))
          throw ordex::InputError("--from/--to: the window [" + ordex::format_number(o.window->first) + ", " +
                                  ordex::format_number(o.window->second) + "] is empty or backward");
      }
      if (samples_given) o.sample_times = ordex::linspace(o.window->first, o.window->second, c.samples);
    }
    // A window the model cannot evaluate (a table that does not extrapolate) fails before any work.
    if (o.window)
      s.system->require_defined_on(o.window->first, o.window->second, "--from/--to");
    else
      for (const auto& h : histories)
        s.system->require_defined_on(h.times.front(), h.times.back(), h.source + ": the input's time span");

    // Output names are settled before the computation, so a clash fails fast.
    std::vector<std::string> csv_paths;
    if (!c.csv.empty() && inputs.size() <= 1 && std::filesystem::is_directory(c.csv))
      throw ordex::InputError(c.csv + ": is a folder, not an output file (a folder is for several --input)");
    // With several --input, --csv names a folder: only the JSON is a file to check then.
    ordex::check_output_paths({c.json, inputs.size() <= 1 ? c.csv : std::string()});
    bool create_csv_folder = false;
    if (!c.csv.empty()) {
      if (inputs.size() <= 1) {
        csv_paths.push_back(c.csv);
      } else {
        namespace fs = std::filesystem;
        if (fs::exists(c.csv) && !fs::is_directory(c.csv))
          throw ordex::InputError("--csv: " + c.csv + " is a file; with several --input it names a folder");
        create_csv_folder = !fs::exists(c.csv);
        std::set<std::string> seen;
        for (const std::string& p : inputs) {
          std::string name = fs::path(p).stem().string() + ".csv";
          if (!seen.insert(name).second)
            throw ordex::InputError("--csv: two inputs would both write " + name + " in " + c.csv +
                                    " (give the input files different names)");
          csv_paths.push_back((fs::path(c.csv) / name).string());
        }
      }
    }

    // The JSON temporary is opened before the computation, so an unwritable path fails fast and
    // leaves nothing behind; the folder for several CSVs is created only once the work is done.
    std::unique_ptr<ordex::OutputFile> json_out;
    if (!c.json.empty() && c.json != "-") json_out = std::make_unique<ordex::OutputFile>(c.json);
    ordex::RespondReport rep = ordex::respond(sys, histories, o);
    if (json_out) json_out->stream() << ordex::respond_report_json(rep, sys).dump(2) << "\n";
    if (create_csv_folder) {
      std::error_code ec;
      std::filesystem::create_directories(c.csv, ec);
      if (ec) throw ordex::InputError("--csv: cannot create the folder " + c.csv + " (" + ec.message() + ")");
    }
    for (std::size_t i = 0; i < csv_paths.size(); ++i) ordex::write_run_csv(csv_paths[i], sys, rep.runs[i]);
    if (json_out) json_out->commit();
    if (c.json == "-") ordex::write_json_file(c.json, ordex::respond_report_json(rep, sys));
    if (ordex::report_to_stdout(c)) std::cout << ordex::respond_report_text(rep, sys);
    return 0;
  });
}
