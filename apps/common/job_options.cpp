#include "common/job_options.hpp"

#include "io/errors.hpp"

namespace ordex {

const FlagNames& gramian_flag_names() {
  static const FlagNames names = {
    {"GramianOptions::kind", "--kind"},        {"GramianOptions::route", "--route"},
    {"GramianOptions::threads", "--threads"},  {"GramianJobOptions::rank_tol", "--rank-tol"},
    {"GramianJobOptions::samples", "--samples"}};
  return names;
}

void add_gramian_options(po::options_description& desc, GramianFlags& f, GramianJobOptions& o) {
  desc.add_options()
      ("kind", po::value(&f.kind)->value_name("K")->default_value(f.kind), "controllability, reachability or observability")
      ("route", po::value(&f.route)->value_name("R")->default_value(f.route),
       "block (Van Loan block generator on the engine) or lyapunov (Lyapunov differential "
       "equation by CVODE; --method bdf selects BDF, otherwise Adams)")
      ("rank-tol", po::value(&o.rank_tol)->value_name("TOL")->default_value(o.rank_tol, "1e-10"),
       "eigenvalues at or below TOL times the largest count as zero for the rank");
}

void apply_gramian_flags(const GramianFlags& f, GramianJobOptions& o) {
  o.gramian.kind = parse_kind(f.kind);
  o.gramian.route = parse_route(f.route);
}

const FlagNames& regulate_flag_names() {
  static const FlagNames names = {{"RegulatorOptions::x0", "--x0"}, {"RegulatorOptions::samples", "--samples"},
                                      {"RegulatorOptions::check_max_steps", "--check-steps"},
                                      {"RiccatiOptions::solver", "--solver"},
                                      {"RiccatiOptions::dense_intervals", "--dense"},
                                      {"PeriodicOptions::periodicity_tolerance", "--periodic-tol"}};
  return names;
}

void add_regulate_options(po::options_description& desc, RegulateFlags& f, RegulatorOptions& o) {
  desc.add_options()
      ("weights", po::value(&f.weights)->value_name("PATH"), "weights file (TOML) with Q, R, Qf and optional N: "
       "lists of rows, or flat lists meaning diagonals; entries numbers or expressions of t and the model's "
       "parameters, definitions and table columns. Default Q = I, R = I, Qf = 0, N = 0. Optional Qy (outputs x "
       "outputs): the cost y'Qy y with y = Cx + Du, added as C'QyC to Q, D'QyD to R and C'QyD to N")
      ("solver", po::value(&f.solver)->value_name("NAME")->default_value(f.solver), "ode: the Riccati equation with "
       "CVODE BDF, or with --method auto an explicit Runge-Kutta 7(8) pair on a lightly damped oscillating plant "
       "(--method adams or bdf forces that CVODE scheme); hamiltonian: the engine (--method) propagates the Hamiltonian one interval at a time")
      ("x0", po::value(&f.x0)->value_name("V"), "initial state (comma-separated): simulate the closed loop "
       "u = -K(t)x and report the predicted and simulated cost and the final state")
      ("dense", po::value(&o.riccati.dense_intervals)->value_name("N")->default_value(2000), "least number of "
       "intervals on which P is stored (K(t) between them from the cubic Hermite interpolant of P)")
      ("check-steps", po::value(&o.check_max_steps)->value_name("N")->default_value(200000), "step budget of "
       "each part of the closed-loop check (a part that needs more is reported failed, never ground through)")
      ("no-check", "skip the closed-loop check (no closed-loop matrix, Floquet multipliers or simulated run)");
}

void apply_regulate_flags(const RegulateFlags& f, const po::variables_map& vm, const System& sys,
                          const AppSetup& setup, RegulatorOptions& o) {
  if (vm.count("weights")) o.weights = load_weights(f.weights, sys);  // entries may use the model's symbols
  o.riccati.solver = parse_solver(f.solver);
  o.riccati.propagation = setup.propagation;
  o.check_closed_loop = !vm.count("no-check");
  if (vm.count("x0")) o.x0 = parse_vector(f.x0, sys.states(), "--x0");
}

const FlagNames& respond_flag_names() {
  static const FlagNames names = {{"RespondOptions::x0", "--x0"}, {"RespondOptions::path", "--path"},
                                     {"RespondOptions::t0/t1", "--from/--to"},
                                     {"RespondOptions::samples", "--samples"}};
  return names;
}

void add_respond_options(po::options_description& desc, RespondFlags& f, bool several) {
  static const std::string one = "input history CSV with header t,<input names in model order>, t strictly increasing";
  static const std::string many = one + "; repeat for several histories (each gets its own result; --csv then names a folder)";
  desc.add_options()
      ("input", po::value(&f.inputs)->value_name("PATH")->composing(), several ? many.c_str() : one.c_str())
      ("hold", po::value(&f.hold)->value_name("zoh|linear")->default_value(f.hold),
       "the input between samples: zoh holds each sample until the next, linear interpolates")
      ("x0", po::value(&f.x0)->value_name("V"), "initial state, comma-separated (default zero)")
      ("path", po::value(&f.path)->value_name("exact|direct")->default_value(f.path), "exact: step matrices of "
       "the held-input block generator, shared by histories on one time grid; direct: CVODE on "
       "x' = A x + B u(t), a cross-check (--method adams or bdf picks its scheme)")
      ("no-reuse", "integrate every interval even when every entry of the model is a constant");
}

void apply_respond_flags(const RespondFlags& f, const po::variables_map& vm, const System& sys,
                         const AppSetup& setup, RespondOptions& o) {
  o.hold = parse_hold(f.hold, "--hold");
  o.path = parse_response_path(f.path);
  o.propagation = setup.propagation;
  o.reuse_time_invariant = !vm.count("no-reuse");
  if (vm.count("x0")) o.x0 = parse_vector(f.x0, sys.states(), "--x0");
}

const FlagNames& simulate_flag_names(bool in_sweep) {
  static const FlagNames app = {{"SimulateOptions::samples", "--samples"}, {"SimulateOptions::runs", "--runs"},
                                {"SimulateOptions::threads", "--threads"}, {"SimulateOptions::dx0", "--dx0"},
                                {"SimulateOptions::u_min", "--u-min"}, {"SimulateOptions::u_max", "--u-max"},
                                {"SimulateOptions::gains", "--gains"}, {"SimulateOptions::from/to", "--from/--to"}};
  static const FlagNames sweep = [] {
    FlagNames f = app;
    for (auto& [field, flag] : f)
      if (flag == "--runs") flag = "--point-runs";
    return f;
  }();
  return in_sweep ? sweep : app;
}

void add_simulate_options(po::options_description& desc, SimulateFlags& f, bool in_sweep) {
  desc.add_options()
      ("dx0", po::value(&f.dx0)->value_name("V"), "initial deviation from the nominal, comma-separated (default zero)")
      ("gains", po::value(&f.gains)->value_name("PATH"), "fly the closed loop u = u_n - K(t) (x - x_n) with the gain "
       "schedule of ordex-regulate (t,K_1_1,...,K_m_n; linear between rows); default open loop (u = u_n)")
      ("disturbance", po::value(&f.disturbance)->value_name("PATH"), "a disturbance input history (CSV: t and "
       "columns named after inputs, any of them; linear between rows, held outside) added to the input after the "
       "limits")
      ("u-min", po::value(&f.u_min)->value_name("V"), "lower input limits (saturation), one per input")
      ("u-max", po::value(&f.u_max)->value_name("V"), "upper input limits (saturation), one per input")
      ("disperse", po::value(&f.disperse)->value_name("PATH"), "dispersions (TOML): [initial_state] and [parameters], "
       "NAME = { sigma = S } (normal) or { half_width = H } (uniform), added to dx0 and the parameter values");
  if (in_sweep) {
    desc.add_options()
        ("point-runs", po::value(&f.runs)->value_name("N")->default_value(1), "runs at every point (with --disperse); "
         "point k's batch is seeded from --seed and k, whatever the threads or ranks");
    return;
  }
  desc.add_options()
      ("runs", po::value(&f.runs)->value_name("N")->default_value(1), "runs (with --disperse)")
      ("seed", po::value(&f.seed)->value_name("S")->default_value(1), "seed of the batch; run k draws from its own "
       "stream of (S, k), whatever the number of threads")
      ("threads", po::value(&f.threads)->value_name("N")->default_value(0), "threads (0: the machine's cores, at most 2)");
}

void apply_simulate_flags(const SimulateFlags& f, const SystemInfo& info, bool in_sweep,
                          SimulateOptions& o, std::vector<std::string>& files) {
  if (f.runs > 1 && f.disperse.empty())
    throw InputError(std::string(in_sweep ? "--point-runs" : "--runs") + ": several runs need --disperse PATH");
  const int n = static_cast<int>(info.state_names.size()), m = static_cast<int>(info.input_names.size());
  if (!f.dx0.empty()) o.dx0 = parse_vector(f.dx0, n, "--dx0");
  if (!f.u_min.empty()) o.u_min = parse_vector(f.u_min, m, "--u-min", "inputs");
  if (!f.u_max.empty()) o.u_max = parse_vector(f.u_max, m, "--u-max", "inputs");
  if (!f.gains.empty()) o.gains = std::make_shared<const GainSchedule>(read_gain_schedule(f.gains, info));
  if (!f.disturbance.empty()) o.disturbance = std::make_shared<const SampledInput>(read_disturbance(f.disturbance, info));
  if (!f.disperse.empty()) o.dispersions = read_dispersions(f.disperse, info);
  for (const std::string& path : {f.gains, f.disturbance, f.disperse})
    if (!path.empty()) files.push_back(path);
  o.runs = f.runs;
  o.seed = f.seed;
  o.threads = f.threads;
}

}  // namespace ordex
