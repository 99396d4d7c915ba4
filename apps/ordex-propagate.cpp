// ordex-propagate: the transition matrix Phi(t, t0) of a model over a window, with its error
// estimate, the Liouville check and, for a periodic model, Floquet analysis (the propagate job).
#include <algorithm>
#include <cmath>
#include <iostream>
#include <thread>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "io/errors.hpp"
#include "propagation/propagate_report.hpp"

using namespace ordex;

int main(int argc, char** argv) {
  return run_app("ordex-propagate", [&] {
    CommonOptions common;
    bool floquet = false;
    int threads = 0;
    std::string hdf5;
    po::options_description desc("Options");
    add_common_options(desc, common);
    add_hdf5_option(desc, hdf5, "t (samples) and phi (samples x n x n) at the --samples times");
    desc.add_options()("floquet", po::bool_switch(&floquet),
                       "Floquet analysis over one period of the model from t0 (--to may be left out)");
    desc.add_options()("threads", po::value(&threads)->value_name("N")->default_value(0),
                       "threads for Phi(t1, t0) without --csv/--hdf5: the window is integrated in N "
                       "pieces at once and their transition matrices multiplied (0: the machine's "
                       "cores, at most 4; 1: one thread)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-propagate",
                            "ordex-propagate --model PATH [--from T0 --to T1] [options]",
                            "Computes the transition matrix Phi(t, t0) of x' = A(t) x over the window, "
                            "with an estimate of its error and Liouville's check det Phi = exp(int trace A).\n"
                            "With --floquet (a model with a period) it propagates one period from t0 and "
                            "reports the monodromy matrix, the Floquet multipliers and exponents, and "
                            "whether the system is asymptotically stable.\n"
                            "--csv writes t,phi_1_1,...,phi_n_n (row-major) at the --samples times, each "
                            "row as it is computed.\n"
                            "Exit status: 0 done, 2 bad input, 3 numerical failure."))
      return 0;
    AppSetup setup = setup_from_common(common, /*need_window=*/!floquet);
    const System& sys = *setup.system;
    check_output_paths({common.json, common.csv, hdf5}, run_inputs(sys));
    PropagateOptions options;
    options.propagation = setup.propagation;
    options.propagation.progress = progress_reporter("ordex-propagate");
    options.propagation.threads =
        threads != 0 ? threads : static_cast<int>(std::clamp(std::thread::hardware_concurrency(), 1u, 4u));
    options.floquet = floquet;
    // Without --csv only Phi(t1, t0) is wanted: no grid, so steps need not stop at samples.
    options.samples = common.csv.empty() && hdf5.empty() ? 0 : common.samples;
    if (floquet) {
      if (common.from.empty() && !sys.info().window) setup.t0 = 0;
      const double t1 = floquet_window_end(sys, setup.t0);
      if (!common.to.empty() && std::abs(setup.t1 - t1) > 1e-9 * std::max(1.0, std::abs(t1)))
        throw InputError("--to: with --floquet the window is one period from t0 (t1 = " + format_number(t1) + ")");
      setup.t1 = t1;
    }
    // Outputs are opened (as temporaries) before the work; the CSV receives each sample as it
    // is computed, and both are put in place together at the end.
    SummaryOutput json(common.json);
    std::unique_ptr<CsvWriter> csv = open_matrix_csv(common.csv, "phi", sys.states(), sys.states());
    Hdf5Output h5(hdf5);
    const int h5_t = h5.series("t"), h5_phi = h5.series("phi", sys.states(), sys.states());
    PhiSink sink;
    if (csv || h5)
      sink = [&](std::size_t, double t, const Eigen::MatrixXd& phi) {
        if (csv) write_matrix_row(*csv, t, phi);
        h5.append_value(h5_t, t);
        h5.append(h5_phi, phi);
      };
    const PropagateReport report = propagate(sys, setup.t0, setup.t1, options, sink);
    const Json summary = with_app("ordex-propagate", report.to_json());
    json.write(summary);
    h5.attributes(summary, "/", {"phi"});  // phi(t1, t0) is the dataset's last sample
    if (csv) csv->commit();
    h5.commit();
    json.commit();
    if (report_to_stdout(common)) std::cout << report.brief();
    return 0;
  }, {{"PropagateOptions::samples", "--samples"}, {"PropagateOptions::floquet", "--floquet"},
      {"PropagationOptions::threads", "--threads"}});
}
