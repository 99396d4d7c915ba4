// ordex-gramian: controllability, reachability and observability Gramians over a window, the
// minimum-energy transfer between two states, and a sliding-window profile (the gramian job).
#include <iostream>

#include "common/front_end.hpp"
#include "common/job_options.hpp"
#include "gramian/report.hpp"
#include "io/errors.hpp"
#include "model/input_selection.hpp"

namespace {

const char* const kAbout =
    "Computes the Gramian of the model over the window [--from, --to]: controllability\n"
    "W_c = int Phi(t0,s) B B' Phi(t0,s)' ds, reachability W_r = Phi(t1,t0) W_c Phi(t1,t0)', or\n"
    "observability M = int Phi(s,t0)' C' C Phi(s,t0) ds. It reports the eigenvalues, condition\n"
    "number, rank (eigenvalues above --rank-tol times the largest) and the weakest direction.\n"
    "With --xf (and --x0) it designs the minimum-energy input from x0 to xf, replays it by\n"
    "simulation and reports its energy, peak and final error; --input-out writes the input on\n"
    "the --samples grid as CSV 't,<inputs>' for ordex-respond --input. With --window-length it\n"
    "profiles every window [a, a+L], a = t0, t0+S, ..., from one sweep; --csv writes one row a\n"
    "window: t_start,t_end,lambda_min,lambda_max,condition,rank. Without --window-length --csv\n"
    "writes the running Gramian W(t0, t) at the sample times: t,W_1_1,...,W_n_n.\n"
    "Exit status: 0 done, 2 bad input, 3 numerical failure (including a Gramian too\n"
    "ill-conditioned to invert for a transfer).";

ordex::FlagNames all_flags() {
  ordex::FlagNames f = ordex::gramian_flag_names();
  f.insert(f.end(), {{"TransferOptions::x0", "--x0"},
                     {"TransferOptions::xf", "--xf"},           {"ProfileOptions::window_length", "--window-length"},
                     {"ProfileOptions::stride", "--stride"},    {"ProfileOptions::check_fraction", "--profile-check"}});
  return f;
}
const ordex::FlagNames kFlags = all_flags();

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app("ordex-gramian", [&]() -> int {
    using namespace ordex;
    CommonOptions common;
    GramianFlags flags;
    std::string x0, xf, input_out, controls;
    GramianJobOptions o;
    ProfileOptions profile;
    po::options_description desc("Options");
    add_common_options(desc, common, "equally spaced times in the window, both ends included: the grid of the block "
                                     "route, of the transfer input and of --csv without --window-length");
    add_gramian_options(desc, flags, o);
    desc.add_options()
        ("x0", po::value(&x0)->value_name("V"), "start state of the transfer (default zero; needs --xf)")
        ("xf", po::value(&xf)->value_name("V"), "target state of the minimum-energy transfer")
        ("input-out", po::value(&input_out)->value_name("PATH"),
         "write the transfer's input history (CSV t,<inputs>) for ordex-respond --input")
        ("window-length", po::value(&profile.window_length)->value_name("L"), "sliding-window profile: length of each window")
        ("stride", po::value(&profile.stride)->value_name("S"), "distance between window starts (default L/10)")
        ("profile-check", po::value(&profile.check_fraction)->value_name("F")->default_value(profile.check_fraction, "1e-3"),
         "largest estimated relative error of a window read off by difference before it is recomposed from its steps")
        ("controls", po::value(&controls)->value_name("NAMES"), "comma-separated input names that are controls: the "
         "Gramian and the transfer use only these columns of B (default: all inputs)")
        ("threads", po::value(&o.gramian.threads)->value_name("N")->default_value(o.gramian.threads),
         "threads for the block sweep and the windows");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-gramian",
                            "ordex-gramian --model PATH [--kind K] [--xf V [--x0 V]] [--window-length L] [options]", kAbout))
      return 0;
    if (vm.count("x0") && !vm.count("xf")) throw InputError("--x0: needs --xf (the target state)");
    if (!input_out.empty() && !vm.count("xf")) throw InputError("--input-out: needs --xf (a transfer to write)");
    if (vm.count("stride") && !vm.count("window-length")) throw InputError("--stride: needs --window-length");
    apply_gramian_flags(flags, o);
    AppSetup setup = setup_from_common(common);
    require_forward_window(setup);
    // --controls: the job sees only the named inputs (the others are not controls).
    std::unique_ptr<InputSelection> selection;
    if (vm.count("controls"))
      selection = std::make_unique<InputSelection>(*setup.system, parse_input_names(*setup.system, controls, "--controls"));
    const System& sys = selection ? static_cast<const System&>(*selection) : *setup.system;
    check_output_paths({common.json, common.csv, input_out}, run_inputs(sys));
    const int n = sys.states();
    o.gramian.propagation = setup.propagation;
    o.gramian.propagation.progress = progress_reporter("ordex-gramian");
    o.samples = common.samples;
    if (vm.count("xf")) {
      o.transfer = TransferOptions{};
      o.transfer->xf = parse_vector(xf, n, "--xf");
      o.transfer->x0 = vm.count("x0") ? parse_vector(x0, n, "--x0") : Eigen::VectorXd::Zero(n);
    }
    if (vm.count("window-length")) o.profile = profile;
    o.validate();
    // Outputs are opened (as temporaries) before the work and put in place together at the end.
    SummaryOutput json(common.json);
    std::unique_ptr<CsvWriter> csv, inputs_csv;
    if (o.profile && !common.csv.empty())
      csv = std::make_unique<CsvWriter>(common.csv, std::vector<std::string>{"t_start", "t_end", "lambda_min",
                                                                             "lambda_max", "condition", "rank"});
    else
      csv = open_matrix_csv(common.csv, "W", n, n);
    if (!input_out.empty()) {
      std::vector<std::string> header = sys.info().input_names;
      header.insert(header.begin(), "t");
      inputs_csv = std::make_unique<CsvWriter>(input_out, header);
    }
    GramianSink running;
    if (csv && !o.profile) running = [&](double t, const Eigen::MatrixXd& w) { write_matrix_row(*csv, t, w); };
    const GramianReport report = gramian(sys, setup.t0, setup.t1, o, running);
    if (csv && o.profile)
      for (const ProfileWindow& w : report.profile->windows)
        csv->row({w.t_start, w.t_end, w.spectrum.lambda_min, w.spectrum.lambda_max, w.spectrum.condition,
                  static_cast<double>(w.spectrum.rank)});
    if (inputs_csv)
      for (std::size_t k = 0; k < report.transfer->times.size(); ++k)
        inputs_csv->row(report.transfer->times[k], report.transfer->inputs.row(static_cast<Eigen::Index>(k)).transpose());
    Json summary = with_app("ordex-gramian", report.to_json());
    if (selection) summary["controls"] = sys.info().input_names;
    if (report.transfer) summary["caution"] = kHardwareCaution;  // steering inputs can drive hardware
    json.write(summary);
    if (csv) csv->commit();
    if (inputs_csv) inputs_csv->commit();
    json.commit();
    if (report_to_stdout(common) && input_out != "-") {
      std::cout << report.brief();
      if (report.transfer) std::cout << kHardwareCaution << "\n";
    }
    return 0;
  }, kFlags);
}
