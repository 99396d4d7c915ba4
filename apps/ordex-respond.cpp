// ordex-respond: the forced response of the model to recorded or planned input histories
// (CONTRACT.md "ordex-respond"), the response job of lib/response/respond.hpp.
#include <filesystem>
#include <iostream>
#include <memory>
#include <set>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "common/job_options.hpp"
#include "io/errors.hpp"
#include "model/model_file.hpp"
#include "model/model_report.hpp"
#include "response/respond.hpp"

using namespace ordex;
namespace fs = std::filesystem;

int main(int argc, char** argv) {
  return run_app("ordex-respond", [&] {
    CommonOptions c;
    RespondFlags flags;
    const std::vector<std::string>& inputs = flags.inputs;
    std::string hdf5;
    po::options_description desc("Options");
    add_common_options(desc, c, "output times: N equally spaced in the window, both ends included (default: the "
                                "input's own sample times)");
    add_respond_options(desc, flags, /*several=*/true);
    add_hdf5_option(desc, hdf5, "each run in a group run_1, run_2, ... (in --input order): t, x (times x states) "
                    "and y (times x outputs)");
    po::variables_map vm;
    if (!parse_command_line(argc, argv, desc, vm, "ordex-respond",
            "ordex-respond --model PATH --input PATH [--input PATH ...] [options]",
            "Replays sampled input histories through x' = A(t) x + B(t) u and writes x(t) and y = C x + D u at the "
            "output times. The window defaults to the model's [window], else to the input's time span; it must lie "
            "inside the samples. --csv writes t,<states>,<outputs>; with several --input it names a folder that "
            "gets one STEM.csv per input file. A model without inputs gives its free response over the window "
            "(--samples times). Exit status: 0 done, 2 bad input, 3 numerical failure. Details: docs/response.md."))
      return 0;
    AppSetup s = setup_from_common(c, false);
    const System& sys = *s.system;
    if (sys.inputs() > 0 && inputs.empty()) throw InputError("--input PATH is required: the model has inputs");
    RespondOptions o;
    apply_respond_flags(flags, vm, sys, s, o);
    if (!c.from.empty()) o.t0 = evaluate_constant(c.from, "--from");
    if (!c.to.empty()) o.t1 = evaluate_constant(c.to, "--to");
    if (vm.count("samples") && !vm["samples"].defaulted()) o.samples = c.samples;
    o.progress = progress_reporter("ordex-respond");
    // With several --input, --csv names a folder of STEM.csv files.
    std::vector<std::string> csvs = inputs.size() > 1 || c.csv.empty() ? std::vector<std::string>{} : std::vector{c.csv};
    std::set<std::string> stems;
    for (std::size_t i = 0; inputs.size() > 1 && !c.csv.empty() && i < inputs.size(); ++i) {
      if (fs::exists(c.csv) && !fs::is_directory(c.csv))
        throw InputError("--csv: " + c.csv + " is a file; with several --input it names a folder");
      const std::string name = fs::path(inputs[i]).stem().string() + ".csv";
      if (!stems.insert(name).second)
        throw InputError("--csv: two inputs would both write " + name + " in " + c.csv + " (rename an input)");
      csvs.push_back((fs::path(c.csv) / name).string());
    }
    if (inputs.size() > 1 && !c.csv.empty()) fs::create_directories(c.csv);  // checked as the CSVs' folder
    std::vector<std::string> outputs = csvs;
    outputs.push_back(c.json);
    outputs.push_back(hdf5);
    check_output_paths(outputs, run_inputs(sys, inputs));
    std::vector<InputHistory> histories;
    for (const std::string& p : inputs) histories.push_back(read_input_history(p, sys));
    SummaryOutput json(c.json);
    // The CSV and HDF5 files take each sample as it is computed (RespondOptions::sink): the
    // report keeps only the runs' summaries, so memory does not grow with the output times.
    std::vector<std::unique_ptr<RunCsv>> csv_files;
    for (const std::string& path : csvs) csv_files.push_back(std::make_unique<RunCsv>(path, sys.info().state_names, sys.info().output_names));
    Hdf5Output h5(hdf5);
    struct RunSeries {
      int t = -1, x = -1, y = -1;
    };
    std::vector<RunSeries> series(std::max<std::size_t>(histories.size(), 1));
    o.sink = [&](const ResponseSample& s) {
      if (s.run < csv_files.size()) csv_files[s.run]->row(s.t, s.x, s.y);
      if (!h5) return;
      RunSeries& h = series.at(s.run);
      if (s.k == 0) {
        const std::string group = "run_" + std::to_string(s.run + 1);
        h.t = h5.series(group + "/t");
        h.x = h5.series(group + "/x", static_cast<int>(s.x.size()));
        if (s.y.size() > 0) h.y = h5.series(group + "/y", static_cast<int>(s.y.size()));  // none without outputs
      }
      h5.append_value(h.t, s.t);
      h5.append(h.x, s.x);
      h5.append(h.y, s.y);
      if (s.k + 1 == s.count)  // the run is complete: its chunks go to the file
        for (int id : {h.t, h.x, h.y}) h5.finish(id);
    };
    const RespondReport rep = respond(sys, histories, o);
    for (const std::string& w : rep.warnings) std::cerr << "ordex-respond: warning: " << w << std::endl;
    const Json summary = with_app("ordex-respond", rep.to_json());
    json.write(summary);
    for (auto& f : csv_files) f->commit();
    for (std::size_t i = 0; h5 && i < rep.runs.size(); ++i) h5.attributes(summary["runs"][i], "run_" + std::to_string(i + 1));
    h5.attributes(summary, "/", {"runs"});
    h5.commit();
    json.commit();
    if (report_to_stdout(c)) std::cout << rep.brief();
    return 0;
  }, respond_flag_names());
}
