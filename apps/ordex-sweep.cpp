// ordex-sweep: one job (floquet, gramian, regulate, respond, simulate) over a parameter grid or random
// samples (CONTRACT.md "ordex-sweep", docs/sweep.md), the sweep of lib/sweep/sweep.hpp. The
// model is parsed once per process; points run on threads, or on MPI ranks under mpirun (rank 0
// hands out points and writes the table in point order). The table is byte-identical whatever
// the number of threads or ranks.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>
#include <thread>

#include "common/front_end.hpp"
#include "common/hdf5_output.hpp"
#include "common/job_options.hpp"
#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/model_file.hpp"
#include "propagation/propagate_report.hpp"
#include "sweep/sweep.hpp"

#ifdef ORDEX_WITH_MPI
#include <mpi.h>
#endif

using namespace ordex;
namespace fs = std::filesystem;

namespace {

const char* const kAbout =
    "Runs one job at every point of a parameter grid (--grid NAME=FROM:TO:COUNT, repeatable: the product, the "
    "last name varying fastest) or of random samples (--sample PATH, a TOML of distributions per parameter, "
    "with --runs N --seed S), on a model parsed once whose swept parameters are changed in place.\n"
    "Jobs and their key figures (columns): floquet: max_abs_multiplier, stable (1/0) over one period from "
    "--from; gramian: rank, lambda_min, lambda_max, condition, weakest_<state>; regulate: p0_max_eigenvalue "
    "(with --x0 also cost), closed_loop_ok and, for a periodic model, closed_loop_max_abs_multiplier; "
    "respond: final_<state>; simulate (a nonlinear model: a batch of --point-runs runs, dispersed with --disperse, "
    "seeded from --seed and the point's index): runs_completed, runs_failed, final_mean_<state>, "
    "final_deviation_mean, final_deviation_max, peak_deviation_max, peak_input_max, cost_mean (the nominal is "
    "integrated again with each point's values). Give --job NAME --help for the job's own options.\n"
    "--csv writes one row per point in point order: the parameters, the key figures, then error (empty when "
    "the point succeeded; a failing point is recorded and the sweep goes on). Numbers are printed in their "
    "shortest round-trip form, so the table is the same byte for byte whatever --threads or the number of MPI ranks. Rows go to "
    "PATH.partial as they complete, in order (flushed every half second); PATH appears when the sweep is done. --resume continues an "
    "interrupted sweep from PATH.partial (or PATH) instead of computing its rows again. --hdf5 writes the same "
    "table as HDF5 (one dataset per column, the summary's header as attributes; docs/sweep.md), complete when the "
    "sweep is done.\n"
    "Under mpirun -np N (N > 1) rank 0 hands out points, writes the table and computes points between messages; "
    "the other ranks compute; "
    "otherwise --threads threads compute. Progress (points done of the total) goes to standard error.\n"
    "Exit status: 0 done (also when points failed: see the error column and the summary's failed), 2 bad "
    "input, 3 numerical failure outside the points.";

FlagNames sweep_flag_names() {
  FlagNames f = {{"SweepOptions::grid", "--grid"}, {"SweepOptions::runs", "--runs"},
                 {"SweepOptions::sample", "--sample"}, {"SweepOptions::resume", "--resume"}};
  for (const FlagNames* more : {&gramian_flag_names(), &regulate_flag_names(), &respond_flag_names(),
                                &simulate_flag_names(/*in_sweep=*/true)})
    f.insert(f.end(), more->begin(), more->end());
  return f;
}
const FlagNames kFlags = sweep_flag_names();

/// The --job value as typed, found before parsing so that only that job's options are declared.
std::string job_from_argv(int argc, char** argv) {
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--job" && i + 1 < argc) return argv[i + 1];
    if (a.rfind("--job=", 0) == 0) return a.substr(6);
  }
  return "";
}

/// Everything a process needs to compute points (every rank builds its own).
struct Sweep {
  CommonOptions common;
  std::string job;
  std::vector<std::string> grid;
  std::string sample;
  std::string hdf5;
  long runs = 0;
  unsigned long long seed = 1;
  int threads = 1;
  bool resume = false;
  std::unique_ptr<System> model;
  std::unique_ptr<System> base;  // what each thread clones (an ExpressionSystem but for simulate)
  std::optional<NonlinearModel> nonlinear;  // --job simulate
  std::optional<SweepPoints> points;
  SweepJobFactory make_job;
  std::unique_ptr<SweepJob> job0;  // for names, window and settings
  std::vector<std::string> figures;
  std::vector<std::string> inputs;  // files read besides the model
};

/// Parses the command line and builds the sweep. Returns false when --help or --version was
/// printed. Throws InputError for bad input.
bool build_sweep(int argc, char** argv, Sweep& s) {
  GramianFlags gramian_flags;
  GramianJobOptions gramian_options;
  RegulateFlags regulate_flags;
  RegulatorOptions regulator_options;
  RespondFlags respond_flags;
  SimulateFlags simulate_flags;
  po::options_description desc("Options");
  add_common_options(desc, s.common, "equally spaced times in the window, both ends included (gramian: the grid "
                                     "of the block route; regulate: the gain schedule's grid; simulate: each run's output times)",
                     "write the table: one row per point, the parameters, the key figures, then error");
  s.threads = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  desc.add_options()
      ("job", po::value(&s.job)->value_name("NAME"), "floquet, gramian, regulate, respond or simulate (required)")
      ("grid", po::value(&s.grid)->value_name("NAME=FROM:TO:COUNT")->composing(),
       "COUNT equally spaced values of parameter NAME from FROM to TO; repeatable (the product, the last "
       "name varying fastest)")
      ("sample", po::value(&s.sample)->value_name("PATH"),
       "random points instead of a grid: a TOML with one table per parameter, distribution = \"normal\" "
       "(mean, sd) or \"uniform\" (low, high)")
      ("runs", po::value(&s.runs)->value_name("N"), "with --sample: the number of points")
      ("seed", po::value(&s.seed)->value_name("S")->default_value(1), "with --sample: the seed (point k's values "
       "depend only on the seed and k); with --job simulate also the seed of the points' batches")
      ("threads", po::value(&s.threads)->value_name("K")->default_value(s.threads), "threads computing points "
       "(without mpirun)")
      ("resume", po::bool_switch(&s.resume), "continue from the rows of an interrupted sweep in --csv's "
       "PATH.partial (or PATH) instead of computing them again");
  add_hdf5_option(desc, s.hdf5, "the table: one dataset per column, named as in the CSV (the parameters and key "
                                "figures: numbers, one per point in point order; error: texts)");
  const std::string job = job_from_argv(argc, argv);
  po::options_description job_desc("Options of --job " + job);
  if (job == "gramian") add_gramian_options(job_desc, gramian_flags, gramian_options);
  if (job == "regulate") add_regulate_options(job_desc, regulate_flags, regulator_options);
  if (job == "respond") add_respond_options(job_desc, respond_flags, /*several=*/false);
  if (job == "simulate") add_simulate_options(job_desc, simulate_flags, /*in_sweep=*/true);
  if (!job_desc.options().empty()) desc.add(job_desc);
  po::variables_map vm;
  if (!parse_command_line(argc, argv, desc, vm, "ordex-sweep",
                          "ordex-sweep --model PATH --job NAME (--grid NAME=FROM:TO:COUNT ... | --sample PATH "
                          "--runs N) [--csv PATH] [options]",
                          kAbout))
    return false;
  if (s.job.empty()) throw InputError("--job NAME is required (floquet, gramian, regulate, respond or simulate)");
  if (s.job != "floquet" && s.job != "gramian" && s.job != "regulate" && s.job != "respond" && s.job != "simulate")
    throw InputError("--job: unknown job '" + s.job + "' (choose floquet, gramian, regulate, respond or simulate)");
  if (s.threads < 1 || s.threads > 256) throw InputError("--threads: " + std::to_string(s.threads) + " is outside [1, 256]");
  // The points.
  if (!s.grid.empty() && !s.sample.empty()) throw InputError("--grid and --sample: give one of them");
  if (s.grid.empty() && s.sample.empty()) throw InputError("--grid NAME=FROM:TO:COUNT or --sample PATH is required");
  if (!s.sample.empty()) {
    if (!vm.count("runs")) throw InputError("--runs N is required with --sample");
    if (s.runs < 1) throw InputError("--runs: " + std::to_string(s.runs) + " is not at least 1");
    s.points = SweepPoints::samples(read_sample_plan(s.sample), static_cast<std::size_t>(s.runs), s.seed);
    s.inputs.push_back(s.sample);
  } else {
    if (vm.count("runs")) throw InputError("--runs: only with --sample");
    std::vector<GridAxis> axes;
    for (const std::string& g : s.grid) axes.push_back(parse_grid_axis(g));
    s.points = SweepPoints::grid(std::move(axes));
  }
  for (const std::string& set : s.common.sets) {
    const std::string name = parse_override(set).first;
    const auto& names = s.points->names();
    if (std::find(names.begin(), names.end(), name) != names.end())
      throw InputError("--set " + name + ": the sweep varies '" + name + "' (" + (s.grid.empty() ? "--sample" : "--grid") + ")");
  }
  // The model (parsed here, once) and its copy with the swept parameters free.
  const bool floquet = s.job == "floquet", respond = s.job == "respond", simulate = s.job == "simulate";
  if (floquet && !s.common.to.empty()) throw InputError("--to: the floquet job's window is one period from --from");
  AppSetup setup;
  std::shared_ptr<const NonlinearModel> nonlinear;
  if (simulate) {
    // The nonlinear model itself (its linearization stands for it in names and the summary).
    NonlinearSetup ns = nonlinear_setup_from_common(s.common);
    nonlinear = std::make_shared<const NonlinearModel>(std::move(ns.model));
    s.model = nonlinear->linearization();
    setup.t0 = ns.t0;
    setup.t1 = ns.t1;
    setup.propagation = ns.propagation;
  } else {
    setup = setup_from_common(s.common, /*need_window=*/!floquet && !respond);
    s.model = std::move(setup.system);
  }
  const std::string flag = s.grid.empty() ? "--sample" : "--grid";
  const std::vector<std::pair<std::string, double>> declared = s.model->info().parameters;
  for (const std::string& name : s.points->names())
    if (std::none_of(declared.begin(), declared.end(), [&](const auto& p) { return p.first == name; })) {
      std::string list;
      for (const auto& p : declared) list += (list.empty() ? "" : ", ") + p.first;
      throw InputError(flag + " " + name + ": the model has no parameter '" + name + "' (" +
                       (list.empty() ? std::string("it declares no [parameters]") : "its parameters: " + list) + ")");
    }
  s.base = simulate ? s.model->clone() : make_sweep_system(*s.model, s.points->names());
  const System& sys = *s.base;
  const PropagationOptions engine = setup.propagation;
  if (simulate) {
    SimulateOptions o;
    o.from = setup.t0;
    o.to = setup.t1;
    o.samples = s.common.samples;
    o.propagation = engine;
    apply_simulate_flags(simulate_flags, sys.info(), /*in_sweep=*/true, o, s.inputs);
    const std::uint64_t seed = s.seed;
    const std::vector<std::string> names = s.points->names();
    s.make_job = [nonlinear, names, o, seed] { return make_simulate_job(nonlinear, names, o, seed); };
  } else if (floquet) {
    const double t0 = s.common.from.empty() && !sys.info().window ? 0.0 : setup.t0;
    s.make_job = [&sys, t0, engine] { return make_floquet_job(sys, t0, engine); };
  } else if (s.job == "gramian") {
    require_forward_window(setup);
    apply_gramian_flags(gramian_flags, gramian_options);
    gramian_options.gramian.propagation = engine;
    gramian_options.samples = s.common.samples;
    const double t0 = setup.t0, t1 = setup.t1;
    s.make_job = [t0, t1, gramian_options] { return make_gramian_job(t0, t1, gramian_options); };
  } else if (s.job == "regulate") {
    require_forward_window(setup);
    s.inputs.push_back(regulate_flags.weights);
    regulator_options.samples = s.common.samples;
    apply_regulate_flags(regulate_flags, vm, sys, setup, regulator_options);
    regulator_options.validate();
    // Each thread reads the weights itself: weights with expressions of t keep their variables inside.
    const double t0 = setup.t0, t1 = setup.t1;
    auto flags = regulate_flags;
    auto options = regulator_options;
    auto vm_weights = vm.count("weights") > 0;
    s.make_job = [&sys, t0, t1, flags, options, vm_weights] {
      RegulatorOptions o = options;
      if (vm_weights) o.weights = load_weights(flags.weights, sys.states(), sys.inputs());
      return make_regulate_job(sys, t0, t1, o);
    };
  } else {
    if (respond_flags.inputs.size() > 1) throw InputError("--input: one history in a sweep (give it once)");
    RespondOptions o;
    apply_respond_flags(respond_flags, vm, sys, setup, o);
    std::optional<InputHistory> history;
    if (!respond_flags.inputs.empty()) {
      history = read_input_history(respond_flags.inputs[0], sys);
      s.inputs.push_back(respond_flags.inputs[0]);
    } else if (sys.inputs() > 0) {
      throw InputError("--input PATH is required: the model has inputs");
    }
    double t0 = setup.t0, t1 = setup.t1;
    if (s.common.from.empty() && s.common.to.empty() && !sys.info().window) {
      if (!history) throw InputError(s.common.model + ": no window: give --from and --to, or a [window] in the model");
      t0 = history->times.front();
      t1 = history->times.back();
    }
    if (!(t1 > t0)) throw InputError("--from/--to: the window must run forward (t1 > t0)");
    s.make_job = [t0, t1, history, o] { return make_respond_job(t0, t1, history, o); };
  }
  s.job0 = s.make_job();
  s.figures = s.job0->figure_names(sys);
  return true;
}

/// Progress on standard error: "ordex-sweep: K of N points" at most every 2 seconds, and a
/// last line when the sweep is done.
class Progress {
 public:
  Progress(std::size_t total, std::size_t done) : total_(total), done_(done), start_(clock::now()), last_(start_) {}
  void point() {
    ++done_;
    const auto now = clock::now();
    if (std::chrono::duration<double>(now - last_).count() >= 2.0 && done_ < total_) {
      std::cerr << "ordex-sweep: " << done_ << " of " << total_ << " points" << std::endl;
      last_ = now;
    }
  }
  double seconds() const { return std::chrono::duration<double>(clock::now() - start_).count(); }

 private:
  using clock = std::chrono::steady_clock;
  std::size_t total_, done_;
  clock::time_point start_, last_;
};

/// The table: rows appended to PATH.partial (in point order, flushed every half second) and renamed to PATH at the
/// end; "-" writes standard output; empty writes nothing.
class TableOutput {
 public:
  TableOutput(const std::string& path, const std::string& header, bool resume, const SweepPoints& points)
      : path_(path) {
    if (path_.empty()) return;
    std::vector<std::string> kept;
    if (resume) {
      if (path_ == "-") throw InputError("SweepOptions::resume: needs --csv PATH (a file, not standard output)");
      for (const std::string& from : {partial(), path_}) {
        if (!fs::exists(from)) continue;
        kept = resumable_rows(read_text_file(from, "sweep table", std::size_t(1) << 34), from, header, points);
        break;
      }
    }
    resumed_ = kept.size();
    kept_ = kept;
    if (path_ == "-") {
      out_ = &std::cout;
    } else {
      file_.open(partial(), std::ios::binary | std::ios::trunc);
      if (!file_) throw InputError(partial() + ": cannot be written");
      out_ = &file_;
    }
    *out_ << header << "\n";
    for (const std::string& row : kept) *out_ << row << "\n";
    flush();
  }
  std::size_t resumed() const { return resumed_; }
  /// The rows taken over from the interrupted sweep (points 0, 1, ...).
  const std::vector<std::string>& kept() const { return kept_; }
  void write(const std::string& row) {
    if (!out_) return;
    *out_ << row << "\n";
    // Flushed every kFlushSeconds rather than per row: a write call per row would cost a
    // sizeable part of a short point. An interruption loses at most those rows (and a cut row),
    // which --resume computes again.
    const auto now = std::chrono::steady_clock::now();
    if (std::chrono::duration<double>(now - flushed_).count() >= kFlushSeconds) flush();
  }
  void finish() {
    if (!out_) return;
    flush();
    if (path_ == "-") return;
    file_.close();
    if (!file_) throw InputError(partial() + ": cannot write");
    fs::rename(partial(), path_);
  }

 private:
  std::string partial() const { return path_ + ".partial"; }
  static constexpr double kFlushSeconds = 0.5;
  void flush() {
    flushed_ = std::chrono::steady_clock::now();
    out_->flush();
    if (!*out_) throw InputError((path_ == "-" ? std::string("standard output") : partial()) + ": cannot write");
  }
  std::string path_;
  std::ofstream file_;
  std::ostream* out_ = nullptr;
  std::size_t resumed_ = 0;
  std::vector<std::string> kept_;
  std::chrono::steady_clock::time_point flushed_ = std::chrono::steady_clock::now();
};

/// The table as HDF5 (--hdf5): one dataset per column of the CSV, the numbers appended as the
/// rows come (in point order), the error texts and the summary's attributes written at the end.
class Hdf5Table {
 public:
  Hdf5Table(const std::string& path, const std::vector<std::string>& parameters, const std::vector<std::string>& figures)
      : out_(path), names_(parameters) {
    names_.insert(names_.end(), figures.begin(), figures.end());
    names_.push_back("error");
    if (!out_) return;
    for (const std::string& name : parameters) columns_.push_back(out_.series(name));
    for (const std::string& name : figures) columns_.push_back(out_.series(name));
  }
  void write(const std::vector<double>& values, const PointResult& r) {
    if (!out_) return;
    std::size_t c = 0;
    for (double v : values) out_.append_value(columns_[c++], v);
    for (double f : r.figures) out_.append_value(columns_[c++], f);
    if (!r.error.empty()) failures_.emplace_back(rows_, r.error);
    ++rows_;
  }
  void finish(const Json& summary) {
    if (!out_) return;
    std::vector<std::string> errors(rows_);
    for (auto& [k, message] : failures_) errors[k] = std::move(message);
    out_.strings("error", errors);
    out_.attributes(summary);
    out_.attributes(Json{{"columns", names_}});
    out_.commit();
  }

 private:
  Hdf5Output out_;
  std::vector<std::string> names_;  // the CSV's header, in order (the attribute columns)
  std::vector<int> columns_;
  std::size_t rows_ = 0;
  std::vector<std::pair<std::size_t, std::string>> failures_;  // the error column is mostly empty
};

/// Rank 0's (or the only process's) side: the output, the summary, and the points in order.
struct Collector {
  Sweep& s;
  TableOutput table;
  Hdf5Table h5;
  SummaryOutput json;
  SweepReport report;
  Progress progress;
  std::vector<std::size_t> todo;

  explicit Collector(Sweep& sweep)
      : s(sweep),
        table((check_output_paths({sweep.common.json, sweep.common.csv, sweep.hdf5}, run_inputs(*sweep.model, sweep.inputs)),
               sweep.common.csv),
              sweep_header(sweep.points->names(), sweep.figures), sweep.resume, *sweep.points),
        h5(sweep.hdf5, sweep.points->names(), sweep.figures),
        json(sweep.common.json),
        progress(sweep.points->size(), table.resumed()) {
    for (std::size_t k = 0; k < table.resumed(); ++k)
      h5.write(s.points->values(k), parse_sweep_row(table.kept()[k], s.points->names().size(), s.figures.size()));
    for (std::size_t k = table.resumed(); k < s.points->size(); ++k) todo.push_back(k);
    report.job = s.job;
    report.job_settings = s.job0->settings();
    report.header = report_header(*s.model, s.job0->t0(), s.job0->t1(), s.job0->method(*s.base));
    report.parameters = s.points->names();
    report.figures = s.figures;
    report.points_from = s.points->is_grid() ? "grid" : "samples";
    report.plan = plan_json(*s.points);
    report.points = s.points->size();
    report.resumed = table.resumed();
  }
  void add(std::size_t k, const PointResult& r) {
    const std::vector<double> values = s.points->values(k);
    table.write(sweep_row(values, r));
    h5.write(values, r);
    ++report.computed;
    if (!r.error.empty()) {
      ++report.failed;
      if (report.first_failures.size() < 10) report.first_failures.push_back({k, r.error});
    }
    progress.point();
  }
  int finish() {
    report.seconds = progress.seconds();
    table.finish();
    const Json summary = with_app("ordex-sweep", report.to_json());
    h5.finish(summary);
    json.write(summary);
    json.commit();
    std::cerr << "ordex-sweep: " << report.points << " of " << report.points << " points (" << report.computed
              << " computed, " << report.resumed << " resumed, " << report.failed << " failed)" << std::endl;
    if (s.common.json != "-" && s.common.csv != "-") std::cout << report.brief();
    return 0;
  }
};

int run_threads(Sweep& s) {
  Collector c(s);
  c.report.threads = s.threads;
  run_points_on_threads(*s.base, s.make_job, *s.points, c.todo, s.threads,
                        [&](std::size_t k, const PointResult& r) { c.add(k, r); });
  return c.finish();
}

#ifdef ORDEX_WITH_MPI
// Messages: a worker sends RESULTS (its finished points, possibly none), which also asks for
// more; rank 0 answers each with WORK {first position, count} (count 0: no more). Each worker
// keeps kOpenRequests requests open, so that its next chunk is already waiting when it finishes
// one and it never idles for a round trip; it stops after as many count-0 answers.
constexpr int kTagWork = 1, kTagResults = 2, kOpenRequests = 2;
constexpr double kChunkSeconds = 0.01, kPollSeconds = 0.001;

/// Receives the next WORK message, sleeping between tests rather than spinning on a core that
/// the ranks still computing may need (the answer is usually there already: see kOpenRequests).
void receive_work(std::uint64_t work[2]) {
  MPI_Request request;
  MPI_Irecv(work, 2, MPI_UINT64_T, 0, kTagWork, MPI_COMM_WORLD, &request);
  for (;;) {
    int done = 0;
    MPI_Test(&request, &done, MPI_STATUS_IGNORE);
    if (done) return;
    std::this_thread::sleep_for(std::chrono::microseconds(50));
  }
}

void pack(std::vector<char>& buf, const void* p, std::size_t n) {
  const char* c = static_cast<const char*>(p);
  buf.insert(buf.end(), c, c + n);
}

std::vector<char> pack_results(const std::vector<std::pair<std::uint64_t, PointResult>>& results) {
  std::vector<char> buf;
  for (const auto& [position, r] : results) {
    const std::uint64_t nfig = r.figures.size(), nerr = r.error.size();
    pack(buf, &position, sizeof position);
    pack(buf, &nfig, sizeof nfig);
    pack(buf, r.figures.data(), nfig * sizeof(double));
    pack(buf, &nerr, sizeof nerr);
    pack(buf, r.error.data(), nerr);
  }
  return buf;
}

std::vector<std::pair<std::uint64_t, PointResult>> unpack_results(const std::vector<char>& buf) {
  std::vector<std::pair<std::uint64_t, PointResult>> out;
  std::size_t at = 0;
  auto take = [&](void* p, std::size_t n) {
    if (at + n > buf.size()) throw std::runtime_error("a malformed message from a worker rank");
    std::memcpy(p, buf.data() + at, n);
    at += n;
  };
  while (at < buf.size()) {
    std::uint64_t position, nfig, nerr;
    PointResult r;
    take(&position, sizeof position);
    take(&nfig, sizeof nfig);
    r.figures.resize(nfig);
    take(r.figures.data(), nfig * sizeof(double));
    take(&nerr, sizeof nerr);
    r.error.resize(nerr);
    take(r.error.data(), nerr);
    out.emplace_back(position, std::move(r));
  }
  return out;
}

/// Set once rank 0 has told the workers where to start: a failure after that must abort them.
bool g_workers_started = false;
constexpr std::uint64_t kNoStart = ~std::uint64_t(0);

int run_rank0(Sweep& s, int ranks) {
  std::unique_ptr<Collector> collector;
  std::uint64_t first = kNoStart;
  try {
    collector = std::make_unique<Collector>(s);
    first = collector->table.resumed();
  } catch (...) {
    MPI_Bcast(&first, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);  // the workers stop
    throw;
  }
  MPI_Bcast(&first, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);
  g_workers_started = true;
  Collector& c = *collector;
  c.report.threads = 1;
  c.report.ranks = ranks;
  OrderedResults ordered([&](std::size_t position, const PointResult& r) { c.add(c.todo[position], r); });
  // Rank 0 computes points too, one at a time between the workers' messages (a point is short
  // beside a worker's chunk, so an answer waits at most one point, and the worker's other open
  // request covers that wait): with N ranks, N processes compute.
  const std::unique_ptr<System> sys = s.base->clone();
  const std::unique_ptr<SweepJob> job = s.make_job();
  const std::size_t total = c.todo.size(), computers = static_cast<std::size_t>(ranks);
  std::size_t next = 0, own = 0;
  double own_seconds = 0;  // rank 0's time on its own points: the chunks' size
  int open = kOpenRequests * (ranks - 1);
  auto polled = std::chrono::steady_clock::now();
  while (open > 0) {
    // Messages are looked for at most every kPollSeconds while rank 0 has points of its own:
    // a probe costs little, but Open MPI may give up the core in it on a busy machine.
    int message = 0;
    MPI_Status status;
    const auto now = std::chrono::steady_clock::now();
    if (next >= total || std::chrono::duration<double>(now - polled).count() >= kPollSeconds) {
      MPI_Iprobe(MPI_ANY_SOURCE, kTagResults, MPI_COMM_WORLD, &message, &status);
      if (!message) polled = now;
    }
    if (!message) {
      if (next < total) {
        const std::size_t p = next++;
        const auto start = std::chrono::steady_clock::now();
        PointResult r = evaluate_point(*sys, *job, s.points->values(c.todo[p]), c.todo[p], s.figures.size());
        own_seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
        ++own;
        ordered.add(p, std::move(r));
      } else {
        // Every point handed out: wait for the last results without taking a core from the ranks computing them.
        std::this_thread::sleep_for(std::chrono::microseconds(100));
      }
      continue;
    }
    int bytes = 0;
    MPI_Get_count(&status, MPI_BYTE, &bytes);
    std::vector<char> buf(static_cast<std::size_t>(bytes));
    MPI_Recv(buf.data(), bytes, MPI_BYTE, status.MPI_SOURCE, kTagResults, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    for (auto& [position, r] : unpack_results(buf)) ordered.add(position, std::move(r));
    // Chunks of about kChunkSeconds of work (by rank 0's own points; one point until it has
    // timed one), so that messages stay rare beside the work even when short points share busy
    // cores with other processes, and smaller towards the end, so that slow points do not leave
    // ranks idle.
    const std::size_t left = total - next;
    const double per_point = own > 0 ? own_seconds / static_cast<double>(own) : 0;
    const std::size_t by_time =
        per_point > 0 ? static_cast<std::size_t>(std::clamp(kChunkSeconds / per_point, 1.0, 4096.0)) : 1;
    const std::size_t chunk = std::min(left, std::max<std::size_t>(1, std::min(by_time, left / (4 * computers))));
    const std::uint64_t work[2] = {next, chunk};
    MPI_Send(work, 2, MPI_UINT64_T, status.MPI_SOURCE, kTagWork, MPI_COMM_WORLD);
    next += chunk;
    if (chunk == 0) --open;
  }
  return c.finish();
}

void run_worker(Sweep& s) {
  // The points still to compute are the same on every rank: rank 0 resumes from a prefix of the
  // table, and the positions it hands out count from there.
  std::uint64_t first = kNoStart;
  MPI_Bcast(&first, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);
  if (first == kNoStart) return;
  const std::unique_ptr<System> sys = s.base->clone();
  const std::unique_ptr<SweepJob> job = s.make_job();
  for (int i = 0; i < kOpenRequests; ++i) MPI_Send(nullptr, 0, MPI_BYTE, 0, kTagResults, MPI_COMM_WORLD);
  // The results go without waiting for rank 0 to take them (a chunk's results exceed the size MPI
  // sends at once, and a blocking send would idle this rank until rank 0 next looks): the send is
  // moved along after every point of the next chunk and completed before the one after.
  std::vector<char> sending;
  MPI_Request send = MPI_REQUEST_NULL;
  std::vector<std::pair<std::uint64_t, PointResult>> done;
  for (int stops = 0; stops < kOpenRequests;) {
    std::uint64_t work[2];
    receive_work(work);
    if (work[1] == 0) {
      ++stops;  // answers come in order: after the first stop only stops follow
      continue;
    }
    for (std::uint64_t p = work[0]; p < work[0] + work[1]; ++p) {
      done.emplace_back(p, evaluate_point(*sys, *job, s.points->values(first + p), first + p, s.figures.size()));
      int sent = 0;
      MPI_Test(&send, &sent, MPI_STATUS_IGNORE);
    }
    MPI_Wait(&send, MPI_STATUS_IGNORE);
    sending = pack_results(done);
    MPI_Isend(sending.data(), static_cast<int>(sending.size()), MPI_BYTE, 0, kTagResults, MPI_COMM_WORLD, &send);
    done.clear();
  }
  MPI_Wait(&send, MPI_STATUS_IGNORE);
}

/// True when started by mpirun (or another MPI launcher): then MPI is initialized.
bool launched_by_mpi() {
  for (const char* v : {"OMPI_COMM_WORLD_SIZE", "PMIX_RANK", "PMI_SIZE", "PMI_RANK"})
    if (std::getenv(v)) return true;
  return false;
}
#endif

}  // namespace

int main(int argc, char** argv) {
  int rank = 0, ranks = 1;
#ifdef ORDEX_WITH_MPI
  const bool mpi = launched_by_mpi();
  if (mpi) {
    MPI_Init(&argc, &argv);
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &ranks);
  }
#endif
  Sweep s;
  // Every rank builds the sweep; only rank 0 speaks unless it alone succeeded.
  std::ostringstream quiet_err, quiet_out;
  std::streambuf* err = std::cerr.rdbuf();
  std::streambuf* out = std::cout.rdbuf();
  if (rank != 0) {
    std::cerr.rdbuf(quiet_err.rdbuf());
    std::cout.rdbuf(quiet_out.rdbuf());
  }
  bool go = false;
  int status = run_app("ordex-sweep", [&] {
    go = build_sweep(argc, argv, s);
    return 0;
  }, kFlags);
  std::cerr.rdbuf(err);
  std::cout.rdbuf(out);
  if (ranks > 1) {
#ifdef ORDEX_WITH_MPI
    int worst = status, go_all = go ? 1 : 0;
    MPI_Allreduce(&status, &worst, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    MPI_Allreduce(MPI_IN_PLACE, &go_all, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (worst != 0 || !go_all) {
      int first_bad = status != 0 ? rank : ranks;
      MPI_Allreduce(MPI_IN_PLACE, &first_bad, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
      if (rank != 0 && rank == first_bad) std::cerr << "(rank " << rank << ") " << quiet_err.str() << std::flush;
      MPI_Finalize();
      return worst;
    }
    if (rank == 0) {
      status = run_app("ordex-sweep", [&] { return run_rank0(s, ranks); }, kFlags);
      if (status != 0 && g_workers_started) MPI_Abort(MPI_COMM_WORLD, status);  // workers wait for work
    } else {
      status = run_app("ordex-sweep (rank " + std::to_string(rank) + ")", [&] {
        run_worker(s);
        return 0;
      }, kFlags);
    }
    MPI_Finalize();
    return status;
#endif
  }
  if (status != 0 || !go) {
#ifdef ORDEX_WITH_MPI
    if (mpi) MPI_Finalize();
#endif
    return status;
  }
  status = run_app("ordex-sweep", [&] { return run_threads(s); }, kFlags);
#ifdef ORDEX_WITH_MPI
  if (mpi) MPI_Finalize();
#endif
  return status;
}
