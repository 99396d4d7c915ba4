// ordex-gramian: controllability, reachability and observability Gramians over a window, the
// minimum-energy transfer between two states, and a sliding-window profile.
#include <filesystem>
#include <iostream>
#include <set>
#include <memory>
#include <optional>

#include "gramian/gramian.hpp"
#include "gramian/gramian_sweep.hpp"
#include "gramian/profile.hpp"
#include "gramian/report.hpp"
#include "gramian/transfer.hpp"
#include "common/front_end.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"

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

}  // namespace

int main(int argc, char** argv) {
  return ordex::run_app("ordex-gramian", [&]() -> int {
    using namespace ordex;
    CommonOptions common;
    std::string kind_text = "controllability", route_text = "block", x0_text, xf_text, input_out;
    double rank_tol = kDefaultRankTol, window_length = 0, stride = 0, check_fraction = 1e-3;
    int threads = 2;
    po::options_description desc("Options");
    add_common_options(desc, common,
                       "equally spaced times in the window, both ends included: the grid of the block "
                       "route, of the transfer input and of --csv without --window-length");
    desc.add_options()
        ("kind", po::value(&kind_text)->value_name("K")->default_value(kind_text),
         "controllability, reachability or observability")
        ("route", po::value(&route_text)->value_name("R")->default_value(route_text),
         "block (Van Loan block generator on the engine) or lyapunov (Lyapunov differential "
         "equation by CVODE; --method bdf selects BDF, otherwise Adams)")
        ("rank-tol", po::value(&rank_tol)->value_name("TOL")->default_value(rank_tol, "1e-10"),
         "eigenvalues at or below TOL times the largest count as zero for the rank")
        ("x0", po::value(&x0_text)->value_name("V"), "start state of the transfer (default zero; needs --xf)")
        ("xf", po::value(&xf_text)->value_name("V"), "target state of the minimum-energy transfer")
        ("input-out", po::value(&input_out)->value_name("PATH"),
         "write the transfer's input history (CSV t,<inputs>) for ordex-respond --input")
        ("window-length", po::value(&window_length)->value_name("L"),
         "sliding-window profile: length of each window")
        ("stride", po::value(&stride)->value_name("S"), "distance between window starts (default L/10)")
        ("profile-check", po::value(&check_fraction)->value_name("F")->default_value(check_fraction, "1e-3"),
         "largest estimated relative error of a window read off by difference before it is "
         "recomposed from its steps")
        ("threads", po::value(&threads)->value_name("N")->default_value(threads),
         "threads for the block sweep and the windows");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-gramian",
                            "ordex-gramian --model PATH [--kind K] [--xf V [--x0 V]] [--window-length L] [options]",
                            kAbout))
      return 0;

    // Everything is checked before any work is done or any file is opened.
    check_output_paths({common.json, common.csv, input_out});
    if (vm.count("window-length") && !(check_fraction > 0 && check_fraction <= 1))
      throw InputError("--profile-check: " + format_number(check_fraction) + " is not in (0, 1]");
    GramianOptions gopt;
    gopt.kind = parse_kind(kind_text);
    gopt.route = parse_route(route_text);
    gopt.threads = threads;
    if (!(rank_tol > 0 && rank_tol < 1)) throw InputError("--rank-tol: " + format_number(rank_tol) + " is not in (0, 1)");
    AppSetup setup = setup_from_common(common);
    const System& sys = *setup.system;
    const int n = sys.states();
    if (!(setup.t1 > setup.t0))
      throw InputError("--from/--to: a Gramian needs t1 > t0 (got [" + format_number(setup.t0) + ", " +
                       format_number(setup.t1) + "])");
    setup.propagation.progress = terminal_progress("ordex-gramian");
    gopt.propagation = setup.propagation;
    gopt.validate();
    pair_for_kind(sys, gopt.kind);  // a model without B (C) fails here, with its file name

    const bool want_transfer = vm.count("xf") > 0;
    if (vm.count("x0") && !want_transfer) throw InputError("--x0: needs --xf (the target state)");
    if (!input_out.empty() && !want_transfer) throw InputError("--input-out: needs --xf (a transfer to write)");
    TransferOptions topt;
    if (want_transfer) {
      topt.xf = parse_vector(xf_text, n, "--xf");
      topt.x0 = vm.count("x0") ? parse_vector(x0_text, n, "--x0") : Eigen::VectorXd::Zero(n);
      topt.rank_tol = rank_tol;
      topt.validate(n);
      input_pair(sys);  // a transfer needs B whatever --kind says
    }
    const bool want_profile = vm.count("window-length") > 0;
    if (vm.count("stride") && !want_profile) throw InputError("--stride: needs --window-length");
    ProfileOptions popt;
    if (want_profile) {
      popt.window_length = window_length;
      popt.stride = stride;
      if (vm.count("stride") && !(stride > 0)) throw InputError("--stride: " + format_number(stride) + " must be positive");
      popt.rank_tol = rank_tol;
      popt.check_fraction = check_fraction;
      popt.threads = threads;
      popt.validate(setup.t1 - setup.t0);
    }
    // Outputs are opened (as temporaries) now, so an unwritable path fails before the work.
    std::unique_ptr<CsvWriter> csv, inputs_csv;
    if (!common.csv.empty()) {
      csv = std::make_unique<CsvWriter>(
          common.csv, want_profile ? std::vector<std::string>{"t_start", "t_end", "lambda_min", "lambda_max", "condition", "rank"}
                                   : [&] {
                                       auto h = matrix_column_names("W", n, n);
                                       h.insert(h.begin(), "t");
                                       return h;
                                     }());
    }
    if (!input_out.empty()) {
      std::vector<std::string> h = sys.info().input_names;
      h.insert(h.begin(), "t");
      inputs_csv = std::make_unique<CsvWriter>(input_out, h);
    }
    std::unique_ptr<OutputFile> json_out;
    if (!common.json.empty() && common.json != "-") json_out = std::make_unique<OutputFile>(common.json);

    GramianReport rep;
    rep.model = common.model;
    rep.state_names = sys.info().state_names;
    rep.input_names = sys.info().input_names;

    // The block sweep over the sample grid serves the Gramian, the running-Gramian CSV and, for
    // the input pair, the transfer.
    std::optional<GramianSweep> sweep;
    const bool need_sweep = gopt.route == GramianRoute::Block || (csv && !want_profile);
    if (need_sweep) sweep = sweep_gramians(sys, gopt.kind, setup.samples, gopt.propagation, threads);
    if (gopt.route == GramianRoute::Block) {
      rep.result.kind = gopt.kind;
      rep.result.t0 = setup.t0;
      rep.result.t1 = setup.t1;
      rep.result.route = "block";
      rep.result.gramian = gopt.kind == GramianKind::Reachability ? sweep->compose_reachability(0, sweep->intervals())
                                                                  : sweep->running_valid_to == 0 ? sweep->cum_ctrl.back() : sweep->compose_controllability(0, sweep->intervals());
      rep.result.stats = sweep->stats;
      rep.method = method_name(sweep->stats.method);
    } else {
      rep.result = compute_gramian(sys, setup.t0, setup.t1, gopt);
      rep.method = std::string("cvode-") + (rep.result.stats.method == Method::Bdf ? "bdf" : "adams");
    }
    rep.spectrum = analyze_gramian(rep.result.gramian, rank_tol);

    if (want_transfer) {
      if (sweep && gopt.kind != GramianKind::Observability) {
        rep.transfer = design_transfer(sys, *sweep, topt);
      } else {
        GramianSweep input_sweep =
            sweep_gramians(sys, GramianKind::Controllability, setup.samples, gopt.propagation, threads);
        rep.transfer = design_transfer(sys, input_sweep, topt);
      }
    }
    if (want_profile) {
      rep.profile_options = popt;
      rep.profile = sliding_profile(sys, gopt.kind, setup.t0, setup.t1, popt, gopt.propagation);
    }

    // Write everything, then commit everything.
    if (csv) {
      if (want_profile) {
        for (const auto& w : rep.profile->windows)
          csv->row({w.t_start, w.t_end, w.spectrum.lambda_min, w.spectrum.lambda_max, w.spectrum.condition,
                    static_cast<double>(w.spectrum.rank)});
      } else {
        Eigen::MatrixXd running = Eigen::MatrixXd::Zero(n, n);
        for (std::size_t k = 0; k < sweep->times.size(); ++k) {
          Eigen::MatrixXd w;
          if (gopt.kind == GramianKind::Reachability) {
            if (k > 0)
              running = symmetrized(sweep->step_phi[k - 1] * running * sweep->step_phi[k - 1].transpose() +
                                    sweep->step_reach[k - 1]);
            w = running;
          } else {
            w = sweep->cum_ctrl[k];
          }
          std::vector<double> row{sweep->times[k]};
          append_row_major(row, w);
          csv->row(row);
        }
      }
    }
    if (inputs_csv) {
      const TransferReport& t = *rep.transfer;
      for (std::size_t k = 0; k < t.times.size(); ++k)
        inputs_csv->row(t.times[k], t.inputs.row(static_cast<Eigen::Index>(k)).transpose());
    }
    Json j = rep.to_json();
    if (rep.transfer) j["caution"] = kHardwareCaution;  // steering inputs can drive hardware
    if (json_out) json_out->stream() << j.dump(2) << "\n";
    if (csv) csv->commit();
    if (inputs_csv) inputs_csv->commit();
    if (json_out) json_out->commit();
    if (common.json == "-") std::cout << j.dump(2) << std::endl;
    else if (report_to_stdout(common) && input_out != "-") {
      rep.print(std::cout);
      if (rep.transfer) std::cout << kHardwareCaution << "\n";
    }
    return 0;
  });
}
