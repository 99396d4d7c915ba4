// One Python function per library job. Options are keyword arguments with the library's names;
// their defaults are read from the library's Options structs, so they cannot drift. Validation
// is the library's (Options::validate), so its message, naming the field, reaches the caller.
//
// To add a job: write a function here that fills the job's Options from keyword arguments,
// runs the job inside compute() (GIL released), and returns make_result("XResult", fields,
// report.to_json(), report.brief()) with a class XResult in python/ordex/results.py.
#include <cmath>
#include <optional>

#include "bindings.hpp"

namespace ordex_python {
namespace {

using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

}  // namespace

ordex::PropagationOptions engine(const std::string& method, double rtol, double atol, double max_step,
                                 long max_steps) {
  ordex::PropagationOptions o;
  o.method = ordex::parse_method(method);
  o.rtol = rtol;
  o.atol = atol;
  o.max_step = max_step;
  o.max_steps = max_steps;
  o.progress = interrupt_check();
  return o;
}

const char* const kEngineDoc = R"doc(
Engine options (PropagationOptions): method "auto" (default), "magnus4", "magnus6", "adams", "bdf" or
"rk8"; rtol (default 1e-8, in [1e-14, 0.1]) and atol (default 1e-10, > 0) of each step; max_step
(0: no limit); max_steps (default 10^7).)doc";

std::string doc(const char* text) { return std::string(text) + kEngineDoc; }

std::vector<double> times_from(const py::object& times, const std::string& what) {
  Eigen::VectorXd t = to_vector(times, what);
  return std::vector<double>(t.data(), t.data() + t.size());
}

namespace {

py::dict stats_fields(const ordex::PropagationStats& s) {
  py::dict d;
  d["method"] = ordex::method_name(s.method);
  d["steps"] = s.steps;
  d["rejected_steps"] = s.rejected_steps;
  d["evaluations"] = s.evaluations;
  d["error_estimate"] = s.error_estimate;
  return d;
}

void merge(py::dict& into, const py::dict& from) {
  for (auto item : from) into[item.first] = item.second;
}

/// A numpy (count, n, n) array filled by a sink while the GIL is released: the memory is taken
/// before the release and only written (never resized) during the computation.
struct MatrixSeries {
  py::array_t<double> times, values;
  double* t = nullptr;
  double* v = nullptr;
  long n = 0;
  MatrixSeries(long count, long n_) : times(count), values({count, n_, n_}), n(n_) {
    t = times.mutable_data();
    v = values.mutable_data();
  }
  void put(std::size_t k, double tk, const Eigen::MatrixXd& m) {
    t[k] = tk;
    Eigen::Map<RowMajor>(v + k * n * n, n, n) = m;
  }
};

// ---- transition, floquet --------------------------------------------------------------------

py::object transition(std::shared_ptr<ordex::System> sys, double t0, double t1, const std::string& method, double rtol,
                      double atol, double max_step, long max_steps, int samples, bool use_period, bool liouville) {
  ordex::PropagateOptions o;
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.propagation.use_period = use_period;
  o.samples = samples;
  o.liouville = liouville;
  o.validate();  // before the grid is allocated
  std::optional<MatrixSeries> grid;
  ordex::PhiSink sink;
  if (samples > 0) {
    grid.emplace(samples, sys->states());
    sink = [&grid](std::size_t k, double t, const Eigen::MatrixXd& phi) { grid->put(k, t, phi); };
  }
  ordex::PropagateReport r = compute(*sys, [&] { return ordex::propagate(*sys, t0, t1, o, sink); });
  py::dict f = stats_fields(r.stats);
  f["t0"] = t0;
  f["t1"] = t1;
  f["states"] = r.states;
  f["phi"] = py::cast(r.phi);
  f["notes"] = r.notes;
  if (grid) {
    f["times"] = grid->times;
    f["phis"] = grid->values;
  } else {
    f["times"] = py::none();
    f["phis"] = py::none();
  }
  if (r.liouville) {
    py::dict l;
    l["det_phi"] = r.liouville->det_phi;
    l["exp_integral_trace"] = r.liouville->exp_integral_trace;
    l["relative_difference"] = r.liouville->relative_difference;
    l["passed"] = r.liouville->passed;
    l["note"] = r.liouville->note;
    f["liouville"] = make_record("Record", l);
  } else {
    f["liouville"] = py::none();
  }
  return make_result("TransitionResult", f, r.to_json(), r.brief());
}

py::object floquet(std::shared_ptr<ordex::System> sys, const py::object& t0_arg, const std::string& method,
                   double rtol, double atol, double max_step, long max_steps) {
  double t0 = 0;
  if (!t0_arg.is_none()) t0 = t0_arg.cast<double>();
  else if (sys->info().window) t0 = sys->info().window->first;
  const double t1 = ordex::floquet_window_end(*sys, t0);
  ordex::PropagateOptions o;
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.floquet = true;
  ordex::PropagateReport r = compute(*sys, [&] { return ordex::propagate(*sys, t0, t1, o); });
  const ordex::FloquetReport& fl = *r.floquet;
  py::dict f = stats_fields(r.stats);
  f["t0"] = t0;
  f["period"] = fl.period;
  f["monodromy"] = py::cast(r.phi);
  f["multipliers"] = py::cast(Eigen::VectorXcd(fl.multipliers));
  f["exponents"] = py::cast(Eigen::VectorXcd(fl.exponents));
  f["stable"] = fl.stable;
  f["largest_modulus"] = fl.largest_modulus;
  f["states"] = r.states;
  return make_result("FloquetResult", f, r.to_json(), r.brief());
}

// ---- gramian ----------------------------------------------------------------------------------

py::object gramian(std::shared_ptr<ordex::System> sys, double t0, double t1, const std::string& kind,
                   const std::string& route, int samples, double rank_tol, const std::string& scaling,
                   const py::object& units, int threads, const py::object& x0, const py::object& xf,
                   const py::object& window_length, double stride, double check_fraction, bool running,
                   const std::string& method, double rtol, double atol, double max_step, long max_steps) {
  ordex::GramianJobOptions o;
  o.gramian.kind = ordex::parse_kind(kind);
  o.gramian.route = ordex::parse_route(route);
  o.gramian.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.gramian.threads = threads;
  o.gramian.scaling.mode = ordex::parse_scaling(scaling);
  const int n = sys->states();
  if (!units.is_none()) o.gramian.scaling.units = to_vector(units, "GramianOptions::scaling.units", n);
  o.rank_tol = rank_tol;
  o.samples = samples;
  if (x0.is_none() != xf.is_none()) throw ordex::InputError("TransferOptions: give both x0 and xf, or neither");
  if (!x0.is_none()) {
    ordex::TransferOptions t;
    t.x0 = to_vector(x0, "TransferOptions::x0", n);
    t.xf = to_vector(xf, "TransferOptions::xf", n);
    o.transfer = t;
  }
  if (!window_length.is_none()) {
    ordex::ProfileOptions p;
    p.window_length = window_length.cast<double>();
    p.stride = stride;
    p.check_fraction = check_fraction;
    o.profile = p;
  }
  o.validate();
  std::optional<MatrixSeries> run;
  ordex::GramianSink sink;
  std::size_t next = 0;
  if (running) {
    run.emplace(samples, n);
    sink = [&run, &next, samples](double t, const Eigen::MatrixXd& w) {
      if (next < static_cast<std::size_t>(samples)) run->put(next++, t, w);
    };
  }
  ordex::GramianReport r = compute(*sys, [&] { return ordex::gramian(*sys, t0, t1, o, sink); });
  py::dict f;
  f["kind"] = ordex::kind_name(r.result.kind);
  f["t0"] = t0;
  f["t1"] = t1;
  f["states"] = r.state_names;
  f["gramian"] = py::cast(r.result.gramian);
  f["factor"] = py::cast(r.result.factor.L);
  f["eigenvalues"] = py::cast(r.spectrum.eigenvalues);
  f["condition"] = r.spectrum.condition;
  f["rank"] = r.spectrum.rank;
  f["full_rank"] = r.spectrum.full_rank;
  f["rank_status"] = ordex::rank_status_name(r.spectrum.verdict.status);
  f["weakest_direction"] = py::cast(r.spectrum.weakest_direction);
  f["missing_directions"] = py::cast(r.spectrum.missing_directions);
  f["route"] = r.result.route;
  merge(f, stats_fields(r.result.stats));
  f["method"] = r.header.method;
  if (run) {
    const py::slice filled(0, static_cast<py::ssize_t>(next), 1);  // every grid time, normally
    f["running_times"] = run->times[filled];
    f["running"] = run->values[filled];
  } else {
    f["running_times"] = py::none();
    f["running"] = py::none();
  }
  if (r.transfer) {
    const ordex::TransferReport& t = *r.transfer;
    py::dict d;
    d["times"] = to_array(t.times);
    d["inputs"] = py::cast(t.inputs);
    d["energy"] = t.energy;
    d["energy_replayed"] = t.energy_replayed;
    d["peak_input"] = t.peak_input;
    d["x_final"] = py::cast(t.x_final);
    d["final_error"] = t.final_error;
    d["final_error_sampled"] = t.final_error_sampled;
    d["costate"] = py::cast(t.costate);
    d["free_final"] = py::cast(t.free_final);
    d["warnings"] = t.warnings;
    f["transfer"] = make_record("Record", d);
  } else {
    f["transfer"] = py::none();
  }
  if (r.profile) {
    const auto& w = r.profile->windows;
    const py::ssize_t k = static_cast<py::ssize_t>(w.size());
    py::array_t<double> a(k), b(k), lo(k), hi(k), cond(k), err(k);
    py::array_t<long> rank(k);
    py::array_t<bool> recomposed(k);
    py::list status;
    for (py::ssize_t i = 0; i < k; ++i) {
      a.mutable_at(i) = w[i].t_start;
      b.mutable_at(i) = w[i].t_end;
      lo.mutable_at(i) = w[i].spectrum.lambda_min;
      hi.mutable_at(i) = w[i].spectrum.lambda_max;
      cond.mutable_at(i) = w[i].spectrum.condition;
      err.mutable_at(i) = w[i].estimated_error;
      rank.mutable_at(i) = w[i].spectrum.rank;
      recomposed.mutable_at(i) = w[i].recomposed;
      status.append(ordex::rank_status_name(w[i].spectrum.status));
    }
    py::dict d;
    d["t_start"] = a;
    d["t_end"] = b;
    d["lambda_min"] = lo;
    d["lambda_max"] = hi;
    d["condition"] = cond;
    d["rank"] = rank;
    d["rank_status"] = status;
    d["recomposed"] = recomposed;
    d["estimated_error"] = err;
    f["profile"] = make_record("Record", d);
  } else {
    f["profile"] = py::none();
  }
  return make_result("GramianResult", f, r.to_json(), r.brief());
}

// ---- regulate ---------------------------------------------------------------------------------

/// A weight from Python: a 2-D array, a 1-D array (the diagonal) or a number (times identity).
Eigen::MatrixXd weight_value(const py::handle& h, int rows, int cols, const std::string& name) {
  Eigen::MatrixXd w;
  py::array a = py::array::ensure(h);
  if (!a) {
    PyErr_Clear();
    throw ordex::InputError(name + ": not an array of numbers");
  }
  if (a.ndim() == 0) w = h.cast<double>() * Eigen::MatrixXd::Identity(rows, cols);
  else if (a.ndim() == 1) w = to_vector(h, name).asDiagonal();
  else w = to_matrix(h, name);
  if (w.rows() != rows || w.cols() != cols)
    throw ordex::InputError(name + ": shape (" + std::to_string(w.rows()) + ", " + std::to_string(w.cols()) +
                            ") where (" + std::to_string(rows) + ", " + std::to_string(cols) + ") is expected");
  if (!w.allFinite()) throw ordex::InputError(name + ": an entry is not finite");
  return w;
}

ordex::WeightMatrix weight(const py::handle& h, int rows, int cols, const std::string& name) {
  return ordex::WeightMatrix::constant(weight_value(h, rows, cols, name), name);
}

ordex::Weights weights_from(const py::object& given, const ordex::System& sys) {
  const int n = sys.states(), m = sys.inputs();
  if (py::isinstance<py::str>(given)) return ordex::load_weights(given.cast<std::string>(), n, m);
  ordex::Weights w = ordex::default_weights(n, m);
  w.source = "code";
  for (auto item : given.cast<py::dict>()) {
    const std::string key = py::str(item.first);
    const std::string name = "weights['" + key + "']";
    if (key == "Q") w.Q = weight(item.second, n, n, name);
    else if (key == "R") w.R = weight(item.second, m, m, name);
    else if (key == "Qf") w.Qf = weight(item.second, n, n, name);
    else if (key == "N") {
      w.N = weight(item.second, n, m, name);
      w.has_cross = true;
    } else {
      throw ordex::InputError("weights: unknown key '" + key + "' (choose Q, R, Qf, N)");
    }
  }
  return w;
}

py::object regulate(std::shared_ptr<ordex::System> sys, double t0, double t1, const py::object& weights,
                    const py::object& x0, int samples, const std::string& solver, int dense_intervals,
                    bool check_closed_loop, long check_max_steps, const std::string& method, double rtol,
                    double atol, double max_step, long max_steps) {
  ordex::RegulatorOptions o;
  if (!weights.is_none()) o.weights = weights_from(weights, *sys);
  o.riccati.solver = ordex::parse_solver(solver);
  o.riccati.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.riccati.dense_intervals = dense_intervals;
  o.samples = samples;
  o.check_closed_loop = check_closed_loop;
  o.check_max_steps = check_max_steps;
  if (!x0.is_none()) o.x0 = to_vector(x0, "RegulatorOptions::x0");
  ordex::RegulatorReport r = compute(*sys, [&] { return ordex::regulate(*sys, t0, t1, o); });
  py::dict f;
  f["t0"] = r.t0;
  f["t1"] = r.t1;
  f["states"] = r.states;
  f["inputs"] = r.inputs;
  f["P0"] = py::cast(r.P0);
  f["K0"] = py::cast(r.K0);
  f["P0_eigenvalues"] = py::cast(r.P0_eigenvalues);
  f["times"] = to_array(r.times);
  f["gains"] = stack(r.gains);
  f["P"] = stack(r.P);
  f["cost_predicted"] = r.cost_predicted ? py::cast(*r.cost_predicted) : py::none();
  const ordex::ClosedLoopCheck& c = r.closed_loop;
  f["closed_loop_status"] = ordex::check_status_name(c.status);
  f["closed_loop_reason"] = c.reason;
  f["closed_loop_phi"] = c.phi ? py::cast(*c.phi) : py::none();
  f["closed_loop_multipliers"] = c.floquet ? py::cast(Eigen::VectorXcd(c.floquet->floquet.multipliers)) : py::none();
  if (c.run) {
    f["cost_simulated"] = c.run->cost_simulated;
    f["x_final"] = py::cast(c.run->x_final);
    f["run_times"] = to_array(c.run->times);
    f["run_states"] = py::cast(c.run->states);
    f["run_inputs"] = py::cast(c.run->inputs);
  } else {
    for (const char* k : {"cost_simulated", "x_final", "run_times", "run_states", "run_inputs"}) f[k] = py::none();
  }
  f["method"] = r.header.method;
  f["weights_note"] = r.weights_note;
  return make_result("RegulatorResult", f, r.to_json(), r.brief());
}

// ---- respond, discretize ----------------------------------------------------------------------


py::object respond(std::shared_ptr<ordex::System> sys, const py::object& times, const py::object& inputs,
                   const py::object& x0, const std::string& hold, const std::string& path, int samples,
                   const py::object& sample_times, const py::object& t0, const py::object& t1,
                   const std::string& method, double rtol, double atol, double max_step, long max_steps) {
  ordex::RespondOptions o;
  o.hold = ordex::parse_hold(hold, "RespondOptions::hold");
  o.path = ordex::parse_response_path(path);
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.samples = samples;
  o.progress = interrupt_check();
  if (!x0.is_none()) o.x0 = to_vector(x0, "RespondOptions::x0");
  if (!t0.is_none()) o.t0 = t0.cast<double>();
  if (!t1.is_none()) o.t1 = t1.cast<double>();
  if (!sample_times.is_none()) o.sample_times = times_from(sample_times, "RespondOptions::sample_times");
  std::vector<double> tv = times_from(times, "respond: times");
  const int m = sys->inputs();
  std::vector<ordex::InputHistory> histories;
  bool batch = false;  // inputs of shape (runs, len(times), m): results stacked over the runs
  if (inputs.is_none()) {
    if (m > 0)
      throw ordex::InputError("respond: inputs: the system has " + std::to_string(m) +
                              " inputs; give their samples (len(times) x " + std::to_string(m) + ")");
    if (tv.size() < 2) throw ordex::InputError("respond: times: at least 2 times are needed");
    histories.push_back(ordex::free_response_history(tv.front(), tv.back()));
    if (o.sample_times.empty() && samples == 0) {
      o.t0 = o.t0.value_or(tv.front());
      o.t1 = o.t1.value_or(tv.back());
      o.sample_times = tv;
    }
  } else {
    py::array a = py::array::ensure(inputs);
    std::vector<Eigen::MatrixXd> us;
    if (a && a.ndim() == 3) {
      batch = true;
      for (py::ssize_t k = 0; k < a.shape(0); ++k)
        us.push_back(to_matrix(a[py::int_(k)], "respond: inputs[" + std::to_string(k) + "]"));
      if (us.empty()) throw ordex::InputError("respond: inputs: no runs (shape (0, ...))");
    } else if (a && a.ndim() == 1 && m == 1) {
      us.push_back(to_vector(inputs, "respond: inputs"));
    } else {
      us.push_back(to_matrix(inputs, "respond: inputs"));
    }
    for (const Eigen::MatrixXd& u : us) {
      if (u.rows() != static_cast<Eigen::Index>(tv.size()) || u.cols() != m)
        throw ordex::InputError("respond: inputs: shape (" + std::to_string(u.rows()) + ", " +
                                std::to_string(u.cols()) + ") where (len(times), inputs) = (" +
                                std::to_string(tv.size()) + ", " + std::to_string(m) + ") is expected");
      histories.push_back(ordex::make_input_history(tv, u, "inputs[" + std::to_string(histories.size()) + "]"));
    }
    // The window defaults to the span of TIMES, which the caller gave, rather than to a
    // [window] the model file may declare (the apps' default, where the input comes from a file).
    if (o.sample_times.empty() && samples == 0 && !o.t0 && !o.t1 && !tv.empty()) {
      o.t0 = tv.front();
      o.t1 = tv.back();
    }
  }
  // Histories on one time grid share their step matrices (computed once for all runs).
  ordex::RespondReport r = compute(*sys, [&] { return ordex::respond(*sys, histories, o); });
  ordex::RunResult& run = r.runs.at(0);
  py::dict f;
  f["t0"] = run.t0;
  f["t1"] = run.t1;
  f["states"] = r.states;
  f["inputs"] = r.inputs;
  f["outputs"] = r.outputs;
  f["runs"] = r.runs.size();
  const ordex::Json json = r.to_json();  // both before the series are moved out
  const std::string brief = r.brief();
  f["times"] = to_array(run.times);
  if (!batch) {
    f["x"] = py::cast(std::move(run.states));  // moved into the array: no copy of a long run
    f["y"] = py::cast(std::move(run.outputs));
    f["x_final"] = py::cast(run.x_final);
    f["y_final"] = py::cast(run.y_final);
  } else {
    std::vector<Eigen::MatrixXd> xs, ys, xf, yf;
    for (const ordex::RunResult& k : r.runs) {
      xs.push_back(k.states);
      ys.push_back(k.outputs);
      xf.push_back(k.x_final.transpose());
      yf.push_back(k.y_final.transpose());
    }
    f["x"] = stack(xs);
    f["y"] = stack(ys);
    f["x_final"] = stack(xf).attr("reshape")(r.runs.size(), r.states.size());
    f["y_final"] = stack(yf).attr("reshape")(r.runs.size(), r.outputs.size());
  }
  f["hold"] = ordex::hold_name(r.hold);
  f["path"] = ordex::response_path_name(r.path);
  f["method"] = r.header.method;
  f["warnings"] = r.warnings;
  return make_result("ResponseResult", f, json, brief);
}

py::object discretize(std::shared_ptr<ordex::System> sys, const py::object& times, const std::string& hold,
                      bool reuse_time_invariant, const py::object& t0, const py::object& t1, double step,
                      int samples, const std::string& method, double rtol, double atol, double max_step,
                      long max_steps) {
  ordex::DiscretizeOptions o;
  o.hold = ordex::parse_hold(hold, "DiscretizeOptions::hold");
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.reuse_time_invariant = reuse_time_invariant;
  o.step = step;
  o.samples = samples;
  if (times.is_none() == (t0.is_none() || t1.is_none()))
    throw ordex::InputError("discretize: give either times or both t0 and t1");
  std::vector<double> tv;
  if (!times.is_none()) tv = times_from(times, "discretize: times");
  const double a = t0.is_none() ? 0.0 : t0.cast<double>(), b = t1.is_none() ? 0.0 : t1.cast<double>();
  const bool by_window = times.is_none();  // decided here: no Python object is touched without the GIL
  ordex::DiscretizeReport r = compute(*sys, [&] {
    return by_window ? ordex::discretize(*sys, a, b, o) : ordex::discretize(*sys, tv, o);
  });
  std::vector<Eigen::MatrixXd> phi, g0, g1;
  for (const ordex::StepMatrices& s : r.model.steps) {
    phi.push_back(s.phi);
    g0.push_back(s.gamma0);
    if (r.model.hold == ordex::Hold::Linear) g1.push_back(s.gamma1);
  }
  py::dict f;
  f["states"] = r.states;
  f["inputs"] = r.inputs;
  f["times"] = to_array(r.model.times);
  f["hold"] = ordex::hold_name(r.model.hold);
  f["phi"] = stack(phi);
  if (r.model.hold == ordex::Hold::Zoh) {
    f["gamma"] = stack(g0);
    f["gamma0"] = f["gamma"];
    f["gamma1"] = py::none();
  } else {
    f["gamma"] = py::none();
    f["gamma0"] = stack(g0);
    f["gamma1"] = stack(g1);
  }
  merge(f, stats_fields(r.propagation));
  f["computed_steps"] = r.computed_steps;
  f["reused_steps"] = r.reused_steps;
  return make_result("DiscreteModelResult", f, r.to_json(), r.brief());
}

// ---- estimate ---------------------------------------------------------------------------------

/// The noise: a noise file's path, or a dict with "Qn" and "P0" (required), "Rn", and "through"
/// (input names) or "G" (n x q); matrices as weights are given (2-D, 1-D diagonal, number).
ordex::NoiseModel noise_from(const py::object& given, const ordex::System& sys) {
  if (py::isinstance<py::str>(given)) return ordex::load_noise(given.cast<std::string>(), sys);
  if (!py::isinstance<py::dict>(given))
    throw ordex::InputError("EstimationOptions::noise: give the path of a noise file or a dict (Qn, Rn, P0)");
  const py::dict d = given.cast<py::dict>();
  for (auto item : d) {
    const std::string key = py::str(item.first);
    if (key != "Qn" && key != "Rn" && key != "P0" && key != "G" && key != "through")
      throw ordex::InputError("noise: unknown key '" + key + "' (choose Qn, Rn, P0, G, through)");
  }
  if (!d.contains("Qn")) throw ordex::InputError("noise['Qn']: required (the process noise intensity)");
  if (!d.contains("P0")) throw ordex::InputError("noise['P0']: required (the initial covariance)");
  if (d.contains("G") && d.contains("through")) throw ordex::InputError("noise: give G or through, not both");
  const int n = sys.states(), p = sys.outputs();
  ordex::NoiseModel noise;
  int q = n;
  if (d.contains("through")) {
    noise.through = d["through"].cast<std::vector<std::string>>();
    q = static_cast<int>(noise.through.size());
  } else if (d.contains("G")) {
    Eigen::MatrixXd g = to_matrix(d["G"], "noise['G']");
    if (g.rows() != n) throw ordex::InputError("noise['G']: " + std::to_string(g.rows()) + " rows for " +
                                               std::to_string(n) + " states");
    q = static_cast<int>(g.cols());
    noise.G = ordex::WeightMatrix::constant(g, "noise['G']");
  }
  noise.Qn = weight(d["Qn"], q, q, "noise['Qn']");
  if (d.contains("Rn")) noise.Rn = weight(d["Rn"], p, p, "noise['Rn']");
  noise.P0 = weight_value(d["P0"], n, n, "noise['P0']");
  return noise;
}

/// The sensor schedule: a schedule file's path, or a list of dicts {"outputs": names, "times":
/// list or "every": spacing (t0, t0 + every, ... up to t1), "Rn": covariance}.
ordex::SensorSchedule schedule_from(const py::object& given, const ordex::System& sys, double t0, double t1) {
  if (py::isinstance<py::str>(given)) return ordex::load_sensor_schedule(given.cast<std::string>(), sys, t0, t1);
  if (!py::isinstance<py::list>(given) && !py::isinstance<py::tuple>(given))
    throw ordex::InputError("EstimationOptions::schedule: give the path of a schedule file or a list of dicts");
  ordex::SensorSchedule schedule;
  for (const py::handle item : given) {
    const std::string name = "measurements[" + std::to_string(schedule.sensors.size()) + "]";
    if (!py::isinstance<py::dict>(item)) throw ordex::InputError(name + ": a dict (outputs, times or every, Rn)");
    const py::dict d = item.cast<py::dict>();
    for (auto kv : d) {
      const std::string key = py::str(kv.first);
      if (key != "outputs" && key != "times" && key != "every" && key != "Rn")
        throw ordex::InputError(name + ": unknown key '" + key + "' (choose outputs, times, every, Rn)");
    }
    if (!d.contains("outputs") || !d.contains("Rn")) throw ordex::InputError(name + ": outputs and Rn are required");
    if (d.contains("times") == d.contains("every")) throw ordex::InputError(name + ": give times or every");
    ordex::Sensor s;
    s.name = name;
    s.outputs = d["outputs"].cast<std::vector<std::string>>();
    const int k = static_cast<int>(s.outputs.size());
    s.Rn = weight(d["Rn"], k, k, name + "['Rn']");
    if (d.contains("times")) {
      s.times = times_from(d["times"], name + "['times']");
    } else {
      s.times = ordex::every_times(d["every"].cast<double>(), t0, t1, name + "['every']");
    }
    schedule.sensors.push_back(std::move(s));
  }
  return schedule;
}

py::object estimate(std::shared_ptr<ordex::System> sys, double t0, double t1, const py::object& noise,
                    const py::object& measurements, const std::string& solver, bool cross_check,
                    int dense_intervals, int samples, const std::string& method, double rtol, double atol,
                    double max_step, long max_steps) {
  ordex::EstimationOptions o;
  o.noise = noise_from(noise, *sys);
  if (!measurements.is_none()) o.schedule = schedule_from(measurements, *sys, t0, t1);
  o.solver = ordex::parse_solver(solver);
  o.cross_check = cross_check;
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  o.dense_intervals = dense_intervals;
  o.samples = samples;
  ordex::EstimationReport r = compute(*sys, [&] { return ordex::estimate(*sys, t0, t1, o); });
  py::dict f;
  f["kind"] = ordex::estimation_kind_name(r.covariance_analysis);
  f["t0"] = r.t0;
  f["t1"] = r.t1;
  f["states"] = r.states;
  f["outputs"] = r.outputs;
  f["P0"] = py::cast(r.P0);
  f["P_final"] = py::cast(r.P_final);
  f["sigma_final"] = py::cast(r.sigma_final);
  f["L0"] = r.gains.empty() ? py::none() : py::cast(r.gains.front());
  f["gain_times"] = to_array(r.gain_times);
  f["L"] = stack(r.gains);
  f["history_times"] = to_array(r.history_times);
  f["P"] = stack(r.P);
  std::vector<Eigen::MatrixXd> sigma;
  for (const Eigen::VectorXd& s : r.sigma) sigma.push_back(s.transpose());
  f["sigma"] = stack(sigma).attr("reshape")(r.sigma.size(), r.states.size());
  f["updates"] = r.updates;
  f["solver"] = ordex::solver_name(r.solver);
  f["engine"] = r.engine;
  f["steps"] = r.steps;
  f["agreement"] = r.agreement ? py::cast(*r.agreement) : py::none();
  f["check_failure"] = r.check_failure;
  f["method"] = r.header.method;
  return make_result("EstimationResult", f, r.to_json(), r.brief());
}

}  // namespace

void bind_jobs(py::module_& m) {
  const ordex::GramianJobOptions gd{};
  const ordex::ProfileOptions pd{};
  const ordex::RegulatorOptions rd{};
  const ordex::RespondOptions sd{};
  const ordex::DiscretizeOptions dd{};

  m.def("transition", &transition, py::arg("system").none(false), py::arg("t0"), py::arg("t1"), ORDEX_ENGINE_ARGS,
        py::arg("samples") = ordex::PropagateOptions{}.samples, py::arg("use_period") = kEngine.use_period,
        py::arg("liouville") = ordex::PropagateOptions{}.liouville,
        doc(R"doc(
The transition matrix Phi(t1, t0) of the system (t1 < t0 propagates backward).

Returns a TransitionResult: phi (n x n), error_estimate (the engine's estimate of the largest
absolute error in phi), method, steps, rejected_steps, evaluations, liouville (det Phi against
exp(integral of trace A)), notes; with samples=N (>= 2) also times (N,) and phis (N, n, n), Phi(t_k, t0) at N
equally spaced times of [t0, t1], written into the array as computed. use_period: for a periodic
system and a window of two periods or more, Phi is composed from the monodromy matrix.
liouville: run Liouville's check (default True).)doc")
            .c_str());

  m.def("floquet", &floquet, py::arg("system").none(false), py::arg("t0") = py::none(), ORDEX_ENGINE_ARGS, doc(R"doc(
Floquet analysis of a periodic system: the monodromy matrix Phi(t0 + T, t0) over one period T
(the system's period) and its eigenvalues.

t0: start of the period; default the model's window start, else 0. Returns a FloquetResult:
monodromy, multipliers (complex, by decreasing modulus), exponents (log(mu) / T), stable (every
|mu| < 1), largest_modulus, period, error_estimate.)doc")
                                                                                       .c_str());

  m.def("gramian", &gramian, py::arg("system").none(false), py::arg("t0"), py::arg("t1"),
        py::arg("kind") = ordex::kind_name(gd.gramian.kind), py::arg("route") = ordex::route_name(gd.gramian.route),
        py::arg("samples") = gd.samples, py::arg("rank_tol") = gd.rank_tol,
        py::arg("scaling") = ordex::scaling_name(gd.gramian.scaling.mode), py::arg("units") = py::none(),
        py::arg("threads") = gd.gramian.threads, py::arg("x0") = py::none(), py::arg("xf") = py::none(),
        py::arg("window_length") = py::none(), py::arg("stride") = pd.stride,
        py::arg("check_fraction") = pd.check_fraction, py::arg("running") = false, ORDEX_ENGINE_ARGS,
        doc(R"doc(
The Gramian of the system over [t0, t1] with its spectrum and rank verdict; optionally the
minimum-energy transfer from x0 to xf and the sliding-window profile.

kind: "controllability" (default), "reachability" or "observability". route: "block" (default;
Van Loan's block generator through the engine) or "lyapunov" (the Lyapunov differential
equation). samples: grid of the block route, the transfer's input history and the running
Gramian (default 101). rank_tol: relative rank tolerance (default 1e-10). scaling: "balance"
(default), "units" (with units, one scale per state) or "none". threads: for the block route
(default 2; a system of Python callables always runs on one thread).
x0, xf: the transfer (controllability or reachability): result.transfer has times, inputs
(samples x m), energy, final_error, peak_input, x_final, costate. window_length (and stride,
default window_length / 10, check_fraction): result.profile has arrays t_start, t_end,
lambda_min, lambda_max, condition, rank per window. running=True: result.running (samples, n, n)
holds W(t0, t_k) at result.running_times.
Returns a GramianResult: gramian, factor (W = L L'), eigenvalues (ascending), condition, rank,
full_rank, rank_status, weakest_direction, missing_directions.)doc")
            .c_str());

  m.def("regulate", &regulate, py::arg("system").none(false), py::arg("t0"), py::arg("t1"), py::arg("weights") = py::none(),
        py::arg("x0") = py::none(), py::arg("samples") = rd.samples,
        py::arg("solver") = ordex::solver_name(rd.riccati.solver),
        py::arg("dense_intervals") = rd.riccati.dense_intervals,
        py::arg("check_closed_loop") = rd.check_closed_loop, py::arg("check_max_steps") = rd.check_max_steps,
        ORDEX_ENGINE_ARGS, doc(R"doc(
The finite-horizon LQR problem over [t0, t1]: the Riccati solution P(t) and the gain schedule
K(t) = R^-1 (B' P + N') for the cost x(t1)' Qf x(t1) + int (x'Qx + 2x'Nu + u'Ru) dt.

weights: None (Q = I, R = I, Qf = 0), a dict with any of "Q", "R", "Qf", "N" (each a 2-D array, a
1-D array meaning the diagonal, or a number meaning that multiple of the identity), or the path
of a weights file (TOML). x0: initial state of the closed-loop run (its cost is simulated).
samples: times of the gain schedule (default 101). solver: "ode" (default) or "hamiltonian".
dense_intervals: the solver's grid (default 2000). check_closed_loop: check the regulator in
closed loop (default True) within check_max_steps steps per part.
Returns a RegulatorResult: P0, K0, times, gains (samples, m, n), P (samples, n, n),
cost_predicted, cost_simulated, x_final, closed_loop_status, closed_loop_phi, and caution.)doc")
                                 .c_str());

  m.def("respond", &respond, py::arg("system").none(false), py::arg("times"), py::arg("inputs") = py::none(),
        py::arg("x0") = py::none(), py::arg("hold") = ordex::hold_name(sd.hold),
        py::arg("path") = ordex::response_path_name(sd.path), py::arg("samples") = sd.samples,
        py::arg("sample_times") = py::none(), py::arg("t0") = py::none(), py::arg("t1") = py::none(),
        ORDEX_ENGINE_ARGS, doc(R"doc(
The forced response to an input history: x(t) and y = C x + D u.

times: the input's sample times (strictly increasing); inputs: array (len(times), m) (1-D when m
is 1), u(times[k]) in row k; None for a system without inputs (its free response at times); or
(runs, len(times), m) for several runs on the same times, which share their step matrices: then
x, y, x_final, y_final gain a leading axis over the runs.
x0: initial state (default zero). hold: "linear" (default) or "zoh" between samples. path:
"exact" (default; step matrices from the engine) or "direct" (CVODE on x' = A x + B u).
Output times: the input's sample times, or samples equally spaced, or sample_times (then give
t0 and t1). The window t0, t1 defaults to the span of times (not to a model file's [window]). Returns a ResponseResult: times, x (T x n), y (T x p),
x_final, y_final.)doc")
                                                     .c_str());

  m.def("discretize", &discretize, py::arg("system").none(false), py::arg("times") = py::none(),
        py::arg("hold") = ordex::hold_name(dd.hold), py::arg("reuse_time_invariant") = dd.reuse_time_invariant,
        py::arg("t0") = py::none(), py::arg("t1") = py::none(), py::arg("step") = dd.step,
        py::arg("samples") = dd.samples, ORDEX_ENGINE_ARGS, doc(R"doc(
The discrete-time model x_{k+1} = Phi_k x_k + Gamma_k u_k on the grid TIMES (strictly
increasing), exact for the input held between samples. Instead of times, t0 and t1 with step
(t0, t0 + step, ..., t1, the last interval shorter when step does not divide the window) or,
with step 0 (default), samples equally spaced times (default 101).

hold: "zoh" (default; result.gamma, K x n x m) or "linear" (x_{k+1} = Phi_k x_k + Gamma0_k u_k
+ Gamma1_k u_{k+1}: result.gamma0 and result.gamma1). reuse_time_invariant: a constant system
reuses the step of equal-length intervals (default True). Returns a DiscreteModelResult: times,
phi (K x n x n), gamma / gamma0, gamma1.)doc")
                                                                                  .c_str());
  const ordex::EstimationOptions ed{};
  m.def("estimate", &estimate, py::arg("system").none(false), py::arg("t0"), py::arg("t1"), py::arg("noise"),
        py::arg("measurements") = py::none(), py::arg("solver") = ordex::solver_name(ed.solver),
        py::arg("cross_check") = ed.cross_check, py::arg("dense_intervals") = ed.dense_intervals,
        py::arg("samples") = ed.samples, ORDEX_ENGINE_ARGS, doc(R"doc(
State estimation over [t0, t1] (t1 > t0) for x' = A x + B u + G w, y = C x + v.

Without measurements: the Kalman-Bucy filter, P' = A P + P A' + G Qn G' - P C' Rn^-1 C P from
P0, and its gain schedule L(t) = P C' Rn^-1. With measurements: a covariance analysis, P
propagated with process noise alone between the scheduled measurements and updated in Joseph
form at them (L then holds the update gains, one per update, zero in the columns of outputs
not measured).
noise: the path of a noise file (TOML, docs/estimation.md) or a dict with "Qn" and "P0"
(required), "Rn" (needed by the filter), and "through" (input names: G = those columns of B)
or "G" (n x q; default the identity); each matrix a 2-D array, a 1-D array meaning the
diagonal, or a number meaning that multiple of the identity.
measurements: the path of a schedule file or a list of dicts {"outputs": [names], "times":
[...] or "every": spacing, "Rn": covariance}.
solver: "ode" (default) or "hamiltonian", the route that gives the results; cross_check
(default True) runs the other route too and reports the agreement. dense_intervals: the
Hamiltonian route's grid (default 2000). samples: times of the gain schedule and history
(default 101).
Returns an EstimationResult: P_final, sigma_final, L0, gain_times and L (k, n, p),
history_times with P (T, n, n) and sigma (T, n), agreement, updates, and caution.)doc")
                                          .c_str());
  (void)sd;
}

}  // namespace ordex_python
