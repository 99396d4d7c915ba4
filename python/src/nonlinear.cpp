// The nonlinear module in Python: NonlinearModel (a model file with [dynamics] and [nominal]),
// its linearization on a grid (ordex.linearize) and the flown plant (ordex.simulate), mirroring
// lib/nonlinear (load_nonlinear_model, LinearizeOptions, SimulateOptions).
//
// A NonlinearModel is immutable (the plant's definition and its nominal); every library call
// makes its own evaluators, so no lock is needed and calls run with the GIL released.
#include <cmath>
#include <limits>

#include "bindings.hpp"

namespace ordex_python {
namespace {

using Model = ordex::NonlinearModel;

/// Runs F with the GIL released; Ctrl-C met by the engine's progress callback becomes
/// KeyboardInterrupt (compute() in bindings.hpp does the same for calls on a System).
template <class F>
auto released(F&& f) -> decltype(f()) {
  try {
    auto result = [&] {
      py::gil_scoped_release release;
      return f();
    }();
    raise_if_interrupted();
    return result;
  } catch (py::error_already_set&) {
    throw;
  } catch (...) {
    raise_if_interrupted();
    throw;
  }
}

std::shared_ptr<Model> load_nonlinear(const std::string& path, const py::object& set, const std::string& method,
                                      double rtol, double atol, double max_step, long max_steps) {
  const ordex::ParameterOverrides overrides = overrides_from(set);
  ordex::PropagationOptions o = engine(method, rtol, atol, max_step, max_steps);
  o.validate();
  return released([&] {
    if (!ordex::is_nonlinear_model_file(path))
      throw ordex::InputError(path + ": not a nonlinear model (it has no [dynamics] section; docs/nonlinear.md)");
    return std::make_shared<Model>(ordex::load_nonlinear_model(path, overrides, o));
  });
}

/// The window of a call: T0 and T1 when given, else the model's (the nominal's span).
std::pair<double, double> window_of(const Model& model, const py::object& t0, const py::object& t1) {
  const auto& w = model.info().window;
  const double a = !t0.is_none() ? t0.cast<double>() : w ? w->first : model.nominal->first_time();
  const double b = !t1.is_none() ? t1.cast<double>() : w ? w->second : model.nominal->last_time();
  return {a, b};
}

py::object linearize(std::shared_ptr<Model> model, const py::object& times, const py::object& t0,
                     const py::object& t1, int samples, double step) {
  ordex::LinearizeOptions o;
  o.samples = samples;
  o.step = step;
  if (!times.is_none() && (!t0.is_none() || !t1.is_none()))
    throw ordex::InputError("linearize: give times, or the window t0, t1, not both");
  std::vector<double> grid;
  if (!times.is_none()) grid = times_from(times, "linearize: times");
  const auto [a, b] = window_of(*model, t0, t1);
  ordex::LinearizeReport r = released([&] {
    return grid.empty() ? ordex::linearize(*model, a, b, o) : ordex::linearize(*model, grid);
  });
  std::vector<Eigen::MatrixXd> x, u;
  for (const Eigen::VectorXd& v : r.x) x.push_back(v.transpose());
  for (const Eigen::VectorXd& v : r.u) u.push_back(v.transpose());
  const std::size_t k = r.times.size();
  py::dict f;
  f["t0"] = r.times.front();
  f["t1"] = r.times.back();
  f["states"] = r.state_names;
  f["inputs"] = r.input_names;
  f["outputs"] = r.output_names;
  f["times"] = to_array(r.times);
  f["x"] = stack(x).attr("reshape")(k, r.state_names.size());
  f["u"] = stack(u).attr("reshape")(k, r.input_names.size());
  f["A"] = stack(r.A);
  f["B"] = stack(r.B);
  f["C"] = stack(r.C);
  f["D"] = stack(r.D);
  return make_result("LinearizationResult", f, r.to_json(), r.brief());
}

/// The gain schedule: a CSV path (ordex-regulate's), a result with times and gains (an
/// ordex.regulate result), or a pair (times, gains) with gains of shape (len(times), m, n).
std::shared_ptr<const ordex::GainSchedule> gains_from(const py::object& given, const Model& model) {
  if (py::isinstance<py::str>(given))
    return std::make_shared<const ordex::GainSchedule>(ordex::read_gain_schedule(given.cast<std::string>(), model.info()));
  py::object times, gains;
  if (py::hasattr(given, "times") && py::hasattr(given, "gains")) {
    times = given.attr("times");
    gains = given.attr("gains");
  } else if (py::isinstance<py::tuple>(given) && py::len(given) == 2) {
    times = given[py::int_(0)];
    gains = given[py::int_(1)];
  } else {
    throw ordex::InputError("SimulateOptions::gains: give a gain CSV path, a regulate result, or (times, gains)");
  }
  auto s = std::make_shared<ordex::GainSchedule>();
  s->path = "gains";
  s->times = times_from(times, "SimulateOptions::gains: times");
  const long n = static_cast<long>(model.info().state_names.size()), m = static_cast<long>(model.info().input_names.size());
  py::array a = py::array::ensure(gains);
  if (!a || a.ndim() != 3 || a.shape(0) != static_cast<py::ssize_t>(s->times.size()) || a.shape(1) != m ||
      a.shape(2) != n)
    throw ordex::InputError("SimulateOptions::gains: an array of shape (len(times), " + std::to_string(m) + ", " +
                            std::to_string(n) + ") is expected");
  for (std::size_t i = 0; i < s->times.size(); ++i) {
    if (i > 0 && !(s->times[i] > s->times[i - 1]))
      throw ordex::InputError("SimulateOptions::gains: times must be strictly increasing");
    s->gains.push_back(to_matrix(a[py::int_(i)], "SimulateOptions::gains[" + std::to_string(i) + "]"));
    if (!s->gains.back().allFinite())
      throw ordex::InputError("SimulateOptions::gains[" + std::to_string(i) + "]: an entry is not finite");
  }
  return s;
}

/// The disturbance: a CSV path (t and columns named after inputs) or (times, w) with w of shape
/// (len(times), m) (1-D when m is 1), linear between samples and held outside.
std::shared_ptr<const ordex::SampledInput> disturbance_from(const py::object& given, const Model& model) {
  if (py::isinstance<py::str>(given))
    return std::make_shared<const ordex::SampledInput>(ordex::read_disturbance(given.cast<std::string>(), model.info()));
  if (!py::isinstance<py::tuple>(given) || py::len(given) != 2)
    throw ordex::InputError("SimulateOptions::disturbance: give a CSV path or (times, w)");
  auto d = std::make_shared<ordex::SampledInput>();
  d->times = times_from(given[py::int_(0)], "SimulateOptions::disturbance: times");
  const long m = static_cast<long>(model.info().input_names.size());
  py::array w = py::array::ensure(given[py::int_(1)]);
  if (w && w.ndim() == 1 && m == 1) {
    d->values = to_vector(w, "SimulateOptions::disturbance: w");
  } else {
    d->values = to_matrix(given[py::int_(1)], "SimulateOptions::disturbance: w");
  }
  d->validate(static_cast<int>(m));
  return d;
}

/// Index of NAME in NAMES; InputError naming WHERE otherwise.
int index_of(const std::string& name, const std::vector<std::string>& names, const std::string& where) {
  for (std::size_t i = 0; i < names.size(); ++i)
    if (names[i] == name) return static_cast<int>(i);
  throw ordex::InputError(where + ": unknown name '" + name + "'");
}

/// The dispersions: a TOML path, or a dict {"initial_state": {state: {"sigma": s} or
/// {"half_width": h}}, "parameters": {...}} (the file's layout).
ordex::Dispersions dispersions_from(const py::object& given, const Model& model) {
  if (py::isinstance<py::str>(given)) return ordex::read_dispersions(given.cast<std::string>(), model.info());
  if (!py::isinstance<py::dict>(given))
    throw ordex::InputError("SimulateOptions::dispersions: give a dispersion file path or a dict");
  ordex::Dispersions out;
  out.path = "dispersions";
  std::vector<std::string> parameters;
  for (const auto& p : model.info().parameters) parameters.push_back(p.first);
  for (auto section : given.cast<py::dict>()) {
    const std::string key = py::str(section.first);
    const bool states = key == "initial_state";
    if (!states && key != "parameters")
      throw ordex::InputError("dispersions: unknown key '" + key + "' (choose initial_state, parameters)");
    for (auto item : section.second.cast<py::dict>()) {
      const std::string name = py::str(item.first), where = "dispersions['" + key + "']['" + name + "']";
      ordex::Dispersion d;
      d.index = index_of(name, states ? model.info().state_names : parameters, where);
      const py::dict law = item.second.cast<py::dict>();
      if (py::len(law) != 1 || !(law.contains("sigma") || law.contains("half_width")))
        throw ordex::InputError(where + ": give {'sigma': S} or {'half_width': H}");
      d.law = law.contains("sigma") ? ordex::Dispersion::Law::normal : ordex::Dispersion::Law::uniform;
      d.size = (law.contains("sigma") ? law["sigma"] : law["half_width"]).cast<double>();
      if (!(d.size >= 0) || !std::isfinite(d.size)) throw ordex::InputError(where + ": the size must be >= 0");
      (states ? out.states : out.parameters).push_back(d);
    }
  }
  return out;
}

/// Rows of equal length as a (count, len) array, NaN where a row is empty (a failed run).
py::array_t<double> rows(const std::vector<Eigen::VectorXd>& v, long len) {
  py::array_t<double> a({static_cast<py::ssize_t>(v.size()), static_cast<py::ssize_t>(len)});
  auto w = a.mutable_unchecked<2>();
  for (std::size_t i = 0; i < v.size(); ++i)
    for (long j = 0; j < len; ++j)
      w(i, j) = v[i].size() == len ? v[i](j) : std::numeric_limits<double>::quiet_NaN();
  return a;
}

py::object simulate(std::shared_ptr<Model> model, const py::object& dx0, const py::object& gains, int runs,
                    std::uint64_t seed, const py::object& dispersions, const py::object& t0, const py::object& t1,
                    int samples, const py::object& u_min, const py::object& u_max, const py::object& disturbance,
                    int threads, bool histories,
                    const std::string& method, double rtol, double atol, double max_step, long max_steps) {
  const long n = static_cast<long>(model->info().state_names.size()), m = static_cast<long>(model->info().input_names.size());
  ordex::SimulateOptions o;
  if (!t0.is_none()) o.from = t0.cast<double>();
  if (!t1.is_none()) o.to = t1.cast<double>();
  o.samples = samples;
  if (!dx0.is_none()) o.dx0 = to_vector(dx0, "SimulateOptions::dx0", n);
  if (!gains.is_none()) o.gains = gains_from(gains, *model);
  if (!u_min.is_none()) o.u_min = to_vector(u_min, "SimulateOptions::u_min", m);
  if (!u_max.is_none()) o.u_max = to_vector(u_max, "SimulateOptions::u_max", m);
  if (!dispersions.is_none()) o.dispersions = dispersions_from(dispersions, *model);
  if (!disturbance.is_none()) o.disturbance = disturbance_from(disturbance, *model);
  o.runs = runs;
  o.seed = seed;
  o.threads = threads;
  o.keep_histories = histories;
  o.propagation = engine(method, rtol, atol, max_step, max_steps);
  ordex::SimulateReport r = released([&] { return ordex::simulate(*model, o); });
  const py::ssize_t k = static_cast<py::ssize_t>(r.runs.size());
  py::array_t<bool> ok(k);
  py::array_t<double> peak(k), peak_t(k), peak_u(k), cost(k), gap(k);
  py::list failure;
  std::vector<Eigen::VectorXd> start, xf, dxf;
  for (py::ssize_t i = 0; i < k; ++i) {
    const ordex::RunSummary& s = r.runs[i];
    ok.mutable_at(i) = s.ok;
    failure.append(s.failure);
    peak.mutable_at(i) = s.peak_deviation;
    peak_t.mutable_at(i) = s.peak_deviation_time;
    peak_u.mutable_at(i) = s.peak_input;
    cost.mutable_at(i) = s.cost;
    gap.mutable_at(i) = s.linear_gap;
    start.push_back(s.dx0);
    xf.push_back(s.x_final);
    dxf.push_back(s.dx_final);
  }
  py::dict f;
  f["closed_loop"] = r.closed_loop;
  f["states"] = r.state_names;
  f["inputs"] = r.input_names;
  f["runs"] = r.runs.size();
  f["completed"] = r.statistics.completed;
  f["failed"] = r.statistics.failed;
  f["ok"] = ok;
  f["failure"] = failure;
  f["dx0"] = rows(start, n);
  f["x_final"] = rows(xf, n);
  f["dx_final"] = rows(dxf, n);
  f["peak_deviation"] = peak;
  f["peak_deviation_time"] = peak_t;
  f["peak_input"] = peak_u;
  f["cost"] = cost;
  f["linear_gap"] = gap;
  f["nominal_final"] = py::cast(r.nominal_final);
  f["linear_transition"] = py::cast(r.linear_transition);
  f["threads"] = r.threads;
  const ordex::RunStatistics& st = r.statistics;
  py::dict d;
  d["dx_final_mean"] = py::cast(st.dx_final_mean);
  d["dx_final_std"] = py::cast(st.dx_final_std);
  d["peak_deviation_mean"] = st.peak_deviation_mean;
  d["peak_deviation_max"] = st.peak_deviation_max;
  d["peak_input_max"] = st.peak_input_max;
  d["cost_mean"] = st.cost_mean;
  d["linear_gap_mean"] = st.linear_gap_mean;
  d["linear_gap_max"] = st.linear_gap_max;
  f["statistics"] = make_record("Record", d);
  if (histories) {
    // Every run on the same output times; a run that failed early has NaN rows past its end.
    const std::size_t T = static_cast<std::size_t>(samples);
    py::array_t<double> x({k, static_cast<py::ssize_t>(T), static_cast<py::ssize_t>(n)});
    py::array_t<double> u({k, static_cast<py::ssize_t>(T), static_cast<py::ssize_t>(m)});
    auto xw = x.mutable_unchecked<3>();
    auto uw = u.mutable_unchecked<3>();
    std::vector<double> times;
    for (py::ssize_t i = 0; i < k; ++i) {
      const ordex::RunSummary& s = r.runs[i];
      if (times.empty() && s.times.size() == T) times = s.times;
      for (std::size_t j = 0; j < T; ++j) {
        const bool have = static_cast<Eigen::Index>(j) < s.states.rows();
        for (long c = 0; c < n; ++c) xw(i, j, c) = have ? s.states(j, c) : std::numeric_limits<double>::quiet_NaN();
        const bool have_u = static_cast<Eigen::Index>(j) < s.inputs.rows();
        for (long c = 0; c < m; ++c) uw(i, j, c) = have_u ? s.inputs(j, c) : std::numeric_limits<double>::quiet_NaN();
      }
    }
    f["times"] = to_array(times);
    f["x"] = x;
    f["u"] = u;
  } else {
    f["times"] = py::none();
    f["x"] = py::none();
    f["u"] = py::none();
  }
  f["method"] = r.header.method;
  return make_result("SimulationResult", f, r.to_json(), r.brief());
}

}  // namespace

void bind_nonlinear(py::module_& m) {
  py::class_<Model, std::shared_ptr<Model>> cls(m, "NonlinearModel", R"doc(
A nonlinear plant x' = f(x, u, t), y = h(x, u, t) with its nominal trajectory (x_n(t), u_n(t)),
from a model file with [dynamics] and [nominal] (docs/nonlinear.md). Made by
ordex.load_nonlinear; used by ordex.linearize and ordex.simulate.

Attributes: states, inputs, outputs (names), title, source, window ((from, to) or None),
span (the nominal's (first, last) time), parameters (dict), nominal_x0.
Methods: nominal_state(t) (x_n(t)), linearization() (the System of A, B, C, D about the
nominal, which every job takes).
)doc");
  cls.attr("__module__") = "ordex";
  cls.def_property_readonly("states", [](const Model& s) { return s.info().state_names; }, "State names.")
      .def_property_readonly("inputs", [](const Model& s) { return s.info().input_names; }, "Input names.")
      .def_property_readonly("outputs", [](const Model& s) { return s.info().output_names; }, "Output names.")
      .def_property_readonly("title", [](const Model& s) { return s.info().title; }, "Free text title.")
      .def_property_readonly("source", [](const Model& s) { return s.info().source; }, "The model file.")
      .def_property_readonly("window", [](const Model& s) { return s.info().window; },
                             "The model's window (from, to), or None.")
      .def_property_readonly("span",
                             [](const Model& s) { return std::make_pair(s.nominal->first_time(), s.nominal->last_time()); },
                             "The span (first, last) of the nominal trajectory.")
      .def_property_readonly("parameters",
                             [](const Model& s) {
                               py::dict d;
                               for (const auto& [name, value] : s.info().parameters) d[py::str(name)] = value;
                               return d;
                             },
                             "The parameters with the values in effect (after set=).")
      .def_property_readonly("nominal_x0", [](const Model& s) { return s.nominal_x0; }, "x_n at the window's start.")
      .def("nominal_state",
           [](const Model& s, double t) {
             Eigen::VectorXd x(s.nominal->states());
             s.nominal->state(t, x.data());
             return x;
           },
           py::arg("t"), "x_n(t), the nominal state (t clamped to the span).")
      .def("linearization", [](const Model& s) { return share(s.linearization()); },
           "The linearization about the nominal as a System (a new one each call).")
      .def("__repr__", [](const Model& s) {
        return "<ordex.NonlinearModel " + s.info().source + ": " + std::to_string(s.info().state_names.size()) +
               " states, " + std::to_string(s.info().input_names.size()) + " inputs>";
      });

  m.def("load_nonlinear", &load_nonlinear, py::arg("path"), py::arg("set") = py::none(), ORDEX_ENGINE_ARGS,
        doc(R"doc(
Loads a nonlinear model file (with [dynamics] and [nominal], docs/nonlinear.md) as a
NonlinearModel: the plant, its symbolic Jacobians and the nominal, integrated by CVODE with
tolerances a hundred times tighter than rtol and atol (method "adams" or "bdf" chooses the
scheme; any other means Adams). set: {parameter: value} overrides, as for load_model. A file
without [dynamics] is an InputError (load_model reads it).)doc")
            .c_str());

  const ordex::LinearizeOptions ld{};
  m.def("linearize", &linearize, py::arg("model").none(false), py::arg("times") = py::none(),
        py::arg("t0") = py::none(), py::arg("t1") = py::none(), py::arg("samples") = ld.samples,
        py::arg("step") = ld.step, R"doc(
The linearization of a NonlinearModel about its nominal at TIMES (strictly increasing, inside
the nominal's span) or, without times, on a grid of [t0, t1] (default the model's window):
samples equally spaced times (default 101), or t0, t0 + step, ..., t1 with step > 0. A(t) = df/dx, B = df/du, C = dh/dx, D = dh/du at (x_n(t), u_n(t), t), exact
(symbolic) Jacobians.
Returns a LinearizationResult: times (T,), the nominal x (T, n) and u (T, m), A (T, n, n),
B (T, n, m), C (T, p, n), D (T, p, m).
)doc");

  const ordex::SimulateOptions sd{};
  m.def("simulate", &simulate, py::arg("model").none(false), py::arg("dx0") = py::none(),
        py::arg("gains") = py::none(), py::arg("runs") = sd.runs, py::arg("seed") = sd.seed,
        py::arg("dispersions") = py::none(), py::arg("t0") = py::none(), py::arg("t1") = py::none(),
        py::arg("samples") = sd.samples, py::arg("u_min") = py::none(), py::arg("u_max") = py::none(),
        py::arg("disturbance") = py::none(), py::arg("threads") = sd.threads, py::arg("histories") = sd.keep_histories, ORDEX_ENGINE_ARGS, doc(R"doc(
Flies the nonlinear plant from x_n(t0) + dx0 over [t0, t1] (default the model's window), open
loop (u = u_n) or, with gains, closed loop u = u_n(t) - K(t) (x - x_n(t)), optionally
saturated to [u_min, u_max], plus a disturbance w(t) added after the limits (a CSV path with t
and columns named after inputs, or (times, w) with w of shape (len(times), m), linear between
samples, held outside); each run is compared with the linear prediction Phi_cl(t1, t0) dx0.
dx0: initial deviation (default zero). gains: the path of a gain CSV (ordex-regulate's
--csv), an ordex.regulate result, or (times, K) with K of shape (len(times), m, n), linear
between samples and held outside. runs (default 1), seed (default 1) and dispersions (a
dispersion file's path, or a dict {"initial_state": {state: {"sigma": s} or {"half_width":
h}}, "parameters": {...}}): a seeded Monte Carlo batch; run k draws from its own stream, so the
results do not depend on threads (0: the machine's cores, at most 2). samples: output times
(default 101). histories=True keeps every run's times, x (runs, T, n) and u (runs, T, m).
Returns a SimulationResult: ok, dx0, x_final, dx_final, peak_deviation, peak_input, cost,
linear_gap (one entry per run), statistics, nominal_final, linear_transition; with gains,
caution.)doc")
                                                                                          .c_str());
}

}  // namespace ordex_python
