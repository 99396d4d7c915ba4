// ordex-propagate: the transition matrix Phi(t, t0) of a model over a window, with its error
// estimate, the Liouville check and, for a periodic model, Floquet analysis.
#include <cmath>
#include <iomanip>
#include <filesystem>
#include <iostream>
#include <set>
#include <memory>

#include "common/front_end.hpp"
#include "io/csv.hpp"
#include "io/errors.hpp"
#include "io/json.hpp"
#include "io/output_file.hpp"
#include "propagation/floquet.hpp"
#include "propagation/propagate_report.hpp"

using namespace ordex;

int main(int argc, char** argv) {
  return run_app("ordex-propagate", [&] {
    CommonOptions common;
    bool floquet = false;
    po::options_description desc("Options");
    add_common_options(desc, common);
    desc.add_options()("floquet", po::bool_switch(&floquet),
                       "Floquet analysis over one period of the model from t0 (--to may be left out)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-propagate",
                            "ordex-propagate --model PATH [--from T0 --to T1] [options]",
                            "Computes the transition matrix Phi(t, t0) of x' = A(t) x over the window, "
                            "with an estimate of its error and Liouville's check det Phi = exp(int trace A).\n"
                            "With --floquet (a model with a period) it propagates one period from t0 and "
                            "reports the monodromy matrix, the Floquet multipliers and exponents, and "
                            "whether the system is asymptotically stable.\n"
                            "--csv writes t,phi_1_1,...,phi_n_n (row-major) at the --samples times.\n"
                            "Exit status: 0 done, 2 bad input, 3 numerical failure."))
      return 0;
    check_output_paths({common.json, common.csv});
    PropagateRequest req;
    req.floquet = floquet;
    AppSetup setup = setup_from_common(common, /*need_window=*/!floquet);
    if (floquet) {
      const SystemInfo& info = setup.system->info();
      if (!info.period)
        throw InputError(common.model + ": --floquet needs system.period in the model");
      if (common.from.empty() && !info.window) setup.t0 = 0;
      double t1 = setup.t0 + *info.period;
      if (!common.to.empty() && std::abs(setup.t1 - t1) > 1e-9 * std::max(1.0, std::abs(t1)))
        throw InputError("--to: with --floquet the window is one period from t0 (t1 = " +
                         format_number(t1) + ")");
      setup.t1 = t1;
      setup.samples = linspace(setup.t0, setup.t1, common.samples);
    }
    // Without --csv only Phi(t1, t0) is wanted: no grid, so steps need not stop at samples.
    if (common.csv.empty()) setup.samples = {setup.t1};
    setup.propagation.progress = terminal_progress("ordex-propagate");
    // Both outputs are opened (as temporaries) before the work and committed together at the end.
    std::unique_ptr<OutputFile> json_out;
    if (!common.json.empty() && common.json != "-") json_out = std::make_unique<OutputFile>(common.json);
    PropagateReport rep = propagate_model(*setup.system, setup.t0, setup.t1, setup.samples,
                                          setup.propagation, req);
    if (!common.csv.empty()) {
      const int n = setup.system->states();
      CsvWriter csv(common.csv, [&] {
        std::vector<std::string> h{"t"};
        for (auto& c : matrix_column_names("phi", n, n)) h.push_back(c);
        return h;
      }());
      for (std::size_t k = 0; k < rep.sample_times.size(); ++k) {
        std::vector<double> row{rep.sample_times[k]};
        append_row_major(row, rep.sample_phi[k]);
        csv.row(row);
      }
      if (json_out) json_out->stream() << propagate_report_json(*setup.system, rep).dump(2) << "\n";
      csv.commit();
    } else if (json_out) {
      json_out->stream() << propagate_report_json(*setup.system, rep).dump(2) << "\n";
    }
    if (json_out) json_out->commit();
    if (common.json == "-") write_json_file(common.json, propagate_report_json(*setup.system, rep));
    if (report_to_stdout(common)) print_propagate_report(std::cout, *setup.system, rep);
    return 0;
  });
}
