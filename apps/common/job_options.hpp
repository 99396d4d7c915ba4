#pragma once
// The option declarations of the jobs that several apps run (ordex-gramian, ordex-regulate,
// ordex-respond, ordex-simulate and ordex-sweep --job ...): each job's flags declared once, bound to its
// Options, and turned into the Options after parsing.
#include <string>
#include <vector>

#include "common/front_end.hpp"
#include "gramian/report.hpp"
#include "nonlinear/simulate.hpp"
#include "response/respond.hpp"
#include "riccati/regulator.hpp"

namespace ordex {

/// --kind --route --rank-tol of the gramian job.
struct GramianFlags {
  std::string kind = "controllability", route = "block";
};
void add_gramian_options(po::options_description& desc, GramianFlags& f, GramianJobOptions& o);
/// Kind and route from F into O (throws InputError naming the field for an unknown name).
void apply_gramian_flags(const GramianFlags& f, GramianJobOptions& o);
/// The job's Options fields and their flags (a function: apps build their tables from it at start-up).
const FlagNames& gramian_flag_names();

/// --weights --solver --x0 --dense --check-steps --no-check of the regulator job.
struct RegulateFlags {
  std::string weights, solver = "ode", x0;
};
void add_regulate_options(po::options_description& desc, RegulateFlags& f, RegulatorOptions& o);
/// The weights (read from the file), solver, engine, closed-loop switch and x0 of F and VM into O
/// for SYS with the engine options of SETUP.
void apply_regulate_flags(const RegulateFlags& f, const po::variables_map& vm, const System& sys,
                          const AppSetup& setup, RegulatorOptions& o);
/// The job's Options fields and their flags (a function: apps build their tables from it at start-up).
const FlagNames& regulate_flag_names();

/// --input --hold --x0 --path --no-reuse of the response job.
struct RespondFlags {
  std::vector<std::string> inputs;
  std::string hold = "linear", x0, path = "exact";
};
/// SEVERAL: --input may repeat (ordex-respond); otherwise one history (ordex-sweep).
void add_respond_options(po::options_description& desc, RespondFlags& f, bool several);
/// Hold, path, engine, reuse and x0 of F and VM into O for SYS.
void apply_respond_flags(const RespondFlags& f, const po::variables_map& vm, const System& sys,
                         const AppSetup& setup, RespondOptions& o);
/// The job's Options fields and their flags (a function: apps build their tables from it at start-up).
const FlagNames& respond_flag_names();

/// --dx0 --gains --disturbance --u-min --u-max --disperse --runs --seed --threads of the
/// simulate job.
struct SimulateFlags {
  std::string dx0, gains, disturbance, u_min, u_max, disperse;
  int runs = 1, threads = 0;
  unsigned long long seed = 1;
};
/// IN_SWEEP: ordex-sweep's form: each point's runs are --point-runs (--runs counts a sweep's
/// samples), and there is no --seed or --threads (the sweep's own seed the points' batches and
/// spread the points over threads).
void add_simulate_options(po::options_description& desc, SimulateFlags& f, bool in_sweep);
/// The deviation, gain schedule, disturbance, limits, dispersions, runs, seed and threads of F
/// into O for a model with INFO's names (the files are read here; their paths are added to FILES).
void apply_simulate_flags(const SimulateFlags& f, const SystemInfo& info, bool in_sweep,
                          SimulateOptions& o, std::vector<std::string>& files);
/// The job's Options fields and their flags (IN_SWEEP as above).
const FlagNames& simulate_flag_names(bool in_sweep);

}  // namespace ordex
