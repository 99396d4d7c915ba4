// The extension module ordex._ordex: its errors, the System class (from a model file, from
// Python callables or constant arrays, from sampled arrays) and the shared conversions.
#include <atomic>
#include <cmath>
#include <map>
#include <mutex>
#include <unordered_map>
#include <optional>
#include <sstream>

#include "bindings.hpp"
#include "model/time_table.hpp"

namespace ordex_python {

// ---- conversions ----------------------------------------------------------------------------

using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;

namespace {

std::string shape_text(const py::array& a) {
  std::ostringstream s;
  s << "(";
  for (py::ssize_t i = 0; i < a.ndim(); ++i) s << (i ? ", " : "") << a.shape(i);
  if (a.ndim() == 1) s << ",";
  s << ")";
  return s.str();
}

DoubleArray as_doubles(const py::handle& h, const std::string& what) {
  DoubleArray a = DoubleArray::ensure(h);
  if (!a) {
    PyErr_Clear();
    throw ordex::InputError(what + ": not an array of real numbers (got " +
                            std::string(py::str(py::type::of(h).attr("__name__"))) + ")");
  }
  return a;
}

}  // namespace

ordex::ParameterOverrides overrides_from(const py::object& set) {
  ordex::ParameterOverrides overrides;
  if (set.is_none()) return overrides;
  for (auto item : set.cast<py::dict>()) {
    const std::string name = py::str(item.first);
    if (py::isinstance<py::str>(item.second))
      overrides[name] = ordex::evaluate_constant(item.second.cast<std::string>(), "set[" + name + "]");
    else
      overrides[name] = item.second.cast<double>();
  }
  return overrides;
}

py::array_t<double> to_array(const std::vector<double>& v) {
  return py::array_t<double>(static_cast<py::ssize_t>(v.size()), v.data());
}

py::array_t<double> stack(const std::vector<Eigen::MatrixXd>& ms) {
  const py::ssize_t k = static_cast<py::ssize_t>(ms.size());
  const py::ssize_t r = ms.empty() ? 0 : ms[0].rows(), c = ms.empty() ? 0 : ms[0].cols();
  py::array_t<double> out({k, r, c});
  double* data = out.mutable_data();
  for (py::ssize_t i = 0; i < k; ++i) Eigen::Map<RowMajor>(data + i * r * c, r, c) = ms[i];
  return out;
}

Eigen::VectorXd to_vector(const py::handle& h, const std::string& what, long n) {
  DoubleArray a = as_doubles(h, what);
  // A scalar, a 1-D array, or a 2-D array with one row or one column.
  const bool vector_like = a.ndim() <= 1 || (a.ndim() == 2 && (a.shape(0) == 1 || a.shape(1) == 1));
  if (!vector_like) throw ordex::InputError(what + ": a vector is expected, got shape " + shape_text(a));
  if (n >= 0 && a.size() != n)
    throw ordex::InputError(what + ": " + std::to_string(a.size()) + " entries, " + std::to_string(n) +
                            " expected");
  return Eigen::Map<const Eigen::VectorXd>(a.data(), a.size());
}

Eigen::MatrixXd to_matrix(const py::handle& h, const std::string& what) {
  DoubleArray a = as_doubles(h, what);
  if (a.ndim() != 2) throw ordex::InputError(what + ": a 2-D array is expected, got shape " + shape_text(a));
  return Eigen::Map<const RowMajor>(a.data(), a.shape(0), a.shape(1));
}

py::object make_result(const char* cls, py::dict fields, const ordex::Json& json, const std::string& brief) {
  const std::string text = json.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
  return py::module_::import("ordex.results").attr(cls)(fields, py::str(text), py::str(brief));
}

py::object make_record(const char* cls, py::dict fields) {
  return py::module_::import("ordex.results").attr(cls)(fields);
}

void raise_pending(const ordex::System& sys) {
  const auto* calls = dynamic_cast<const CallsPython*>(&sys);
  if (!calls || !calls->pending().error) return;
  std::shared_ptr<py::error_already_set> e = std::move(calls->pending().error);
  calls->pending().error.reset();
  throw py::error_already_set(*e);
}

namespace {
std::atomic<bool> interrupted{false};

std::mutex locks_guard;
std::unordered_map<const ordex::System*, std::unique_ptr<std::recursive_mutex>> locks;
}  // namespace

std::recursive_mutex& system_lock(const ordex::System& sys) {
  std::lock_guard<std::mutex> guard(locks_guard);
  std::unique_ptr<std::recursive_mutex>& m = locks[&sys];
  if (!m) m = std::make_unique<std::recursive_mutex>();
  return *m;
}

std::shared_ptr<ordex::System> share(std::unique_ptr<ordex::System> sys) {
  return std::shared_ptr<ordex::System>(sys.release(), [](ordex::System* p) {
    {
      std::lock_guard<std::mutex> guard(locks_guard);
      locks.erase(p);
    }
    delete p;
  });
}

std::function<void(double)> interrupt_check() {
  return [](double) {
    if (interrupted.load()) throw ordex::NumericalError("interrupted (KeyboardInterrupt)");
    py::gil_scoped_acquire gil;
    if (PyErr_CheckSignals() != 0) {  // only the main thread runs handlers; it raised
      PyErr_Clear();
      interrupted.store(true);
      throw ordex::NumericalError("interrupted (KeyboardInterrupt)");
    }
  };
}

void raise_if_interrupted() {
  if (!interrupted.exchange(false)) return;
  PyErr_SetNone(PyExc_KeyboardInterrupt);
  throw py::error_already_set();
}

// ---- systems built in Python ----------------------------------------------------------------

namespace {

const char* const kMatrixNames[4] = {"A", "B", "C", "D"};

/// One of A, B, C, D of a callable system: a constant or a Python callable t -> array.
struct Slot {
  bool present = false;
  Eigen::MatrixXd value;  // constant
  py::object function;    // callable (None for a constant)
  int rows = 0, cols = 0;
};

/// What the clones of a callable system share: the slots (Python objects, released with the
/// GIL held) and the pending error.
struct SharedSlots {
  Slot slots[4];
  PendingError pending;
  std::string where;  // "System.from_callables" for messages
  ~SharedSlots() {
    py::gil_scoped_acquire gil;
    for (Slot& s : slots) s.function = py::object();
  }
};

/// A System whose matrices are constants or Python callables. Constants alone make a system the
/// library may run on several threads; any callable makes it single-threaded
/// (clones_may_run_concurrently false), and each call takes the GIL.
class CallableSystem : public ordex::System, public CallsPython {
 public:
  CallableSystem(ordex::SystemInfo info, std::shared_ptr<SharedSlots> shared) : shared_(std::move(shared)) {
    info_ = std::move(info);
    constant_ = true;
    for (const Slot& s : shared_->slots)
      if (s.present && s.function) constant_ = false;
  }
  void A(double t, ordex::MatrixRef out) const override { eval(0, t, out); }
  void B(double t, ordex::MatrixRef out) const override { eval(1, t, out); }
  void C(double t, ordex::MatrixRef out) const override { eval(2, t, out); }
  void D(double t, ordex::MatrixRef out) const override { eval(3, t, out); }
  using System::A;
  using System::B;
  using System::C;
  using System::D;
  std::unique_ptr<System> clone() const override { return std::make_unique<CallableSystem>(info_, shared_); }
  bool clones_may_run_concurrently() const override { return constant_; }
  bool time_invariant() const override { return constant_; }
  PendingError& pending() const override { return shared_->pending; }

 private:
  void eval(int k, double t, ordex::MatrixRef out) const {
    const Slot& s = shared_->slots[k];
    if (!s.present) {
      out.setZero();
      return;
    }
    if (!s.function) {
      out = s.value;
      return;
    }
    py::gil_scoped_acquire gil;
    const std::string call = shared_->where + ": " + kMatrixNames[k] + "(t = " + ordex::format_number(t) + ")";
    try {
      py::object r = s.function(t);
      DoubleArray a = r.is_none() ? DoubleArray() : DoubleArray::ensure(r);
      if (r.is_none() || !a) {
        PyErr_Clear();
        throw ordex::InputError(call + " returned " + std::string(py::str(py::type::of(r).attr("__name__"))) +
                                ", not an array of real numbers");
      }
      const bool scalar_ok = a.size() == 1 && s.rows * s.cols == 1;
      if (!scalar_ok && !(a.ndim() == 2 && a.shape(0) == s.rows && a.shape(1) == s.cols))
        throw ordex::InputError(call + " returned shape " + shape_text(a) + " where (" + std::to_string(s.rows) +
                                ", " + std::to_string(s.cols) + ") is expected");
      out = Eigen::Map<const RowMajor>(a.data(), s.rows, s.cols);
    } catch (py::error_already_set& e) {
      std::string message = call + " raised " + std::string(py::str(e.type().attr("__name__"))) + ": " +
                            std::string(py::str(e.value()));
      if (!shared_->pending.error) shared_->pending.error = std::make_shared<py::error_already_set>(std::move(e));
      throw ordex::InputError(message);
    }
  }

  std::shared_ptr<SharedSlots> shared_;
  bool constant_ = true;
};

/// A System interpolating sampled matrices with the tables of tabulated models (TimeTable):
/// one table per matrix, one column per entry.
class SampledSystem : public ordex::System {
 public:
  SampledSystem(ordex::SystemInfo info, std::vector<std::optional<ordex::TimeTable>> tables, std::vector<int> cols)
      : tables_(std::move(tables)), cols_(std::move(cols)) {
    info_ = std::move(info);
    std::size_t most = 0;
    for (const auto& t : tables_)
      if (t) most = std::max(most, t->columns().size());
    buffer_.resize(most);
  }
  void A(double t, ordex::MatrixRef out) const override { eval(0, t, out); }
  void B(double t, ordex::MatrixRef out) const override { eval(1, t, out); }
  void C(double t, ordex::MatrixRef out) const override { eval(2, t, out); }
  void D(double t, ordex::MatrixRef out) const override { eval(3, t, out); }
  using System::A;
  using System::B;
  using System::C;
  using System::D;
  std::unique_ptr<System> clone() const override { return std::make_unique<SampledSystem>(*this); }

 private:
  void eval(int k, double t, ordex::MatrixRef out) const {
    if (!tables_[k]) {
      out.setZero();
      return;
    }
    tables_[k]->evaluate(t, buffer_.data());
    out = Eigen::Map<const RowMajor>(buffer_.data(), out.rows(), cols_[k]);
  }
  std::vector<std::optional<ordex::TimeTable>> tables_;
  std::vector<int> cols_;
  mutable std::vector<double> buffer_;  // one per clone
};

std::vector<std::string> names_or_default(const py::object& names, long count, const char* prefix,
                                          const std::string& what) {
  std::vector<std::string> out;
  if (!names.is_none()) {
    out = names.cast<std::vector<std::string>>();
    if (count >= 0 && static_cast<long>(out.size()) != count)
      throw ordex::InputError(what + ": " + std::to_string(out.size()) + " names for " + std::to_string(count) +
                              " columns of the matrices");
  } else {
    for (long i = 1; i <= count; ++i) out.push_back(prefix + std::to_string(i));
  }
  return out;
}

/// The SystemInfo common to both Python-built kinds.
ordex::SystemInfo python_info(const std::vector<std::string>& states, const std::string& source,
                              const py::object& period, const py::object& breakpoints, const py::object& title) {
  ordex::SystemInfo info;
  info.title = title.is_none() ? "" : title.cast<std::string>();
  info.source = source;
  info.state_names = states;
  if (states.empty()) throw ordex::InputError(source + ": states: at least one state name is needed");
  if (!period.is_none()) {
    double p = period.cast<double>();
    if (!(p > 0) || !std::isfinite(p))
      throw ordex::InputError(source + ": period = " + ordex::format_number(p) + " must be positive and finite");
    info.period = p;
  }
  if (!breakpoints.is_none()) {
    info.breakpoints = breakpoints.cast<std::vector<double>>();
    for (std::size_t i = 0; i < info.breakpoints.size(); ++i)
      if (!std::isfinite(info.breakpoints[i]) || (i > 0 && !(info.breakpoints[i] > info.breakpoints[i - 1])))
        throw ordex::InputError(source + ": breakpoints must be finite and strictly increasing");
  }
  return info;
}

std::shared_ptr<ordex::System> from_callables(const py::object& states, const py::object& A, const py::object& B,
                                              const py::object& C, const py::object& D, const py::object& inputs,
                                              const py::object& outputs, const py::object& period,
                                              const py::object& breakpoints, const py::object& title) {
  const std::string where = "System.from_callables";
  auto shared = std::make_shared<SharedSlots>();
  shared->where = where;
  const std::vector<std::string> state_names = states.cast<std::vector<std::string>>();
  const int n = static_cast<int>(state_names.size());
  const py::object* given[4] = {&A, &B, &C, &D};
  for (int k = 0; k < 4; ++k) {
    const py::object& g = *given[k];
    Slot& s = shared->slots[k];
    if (g.is_none()) continue;
    s.present = true;
    if (PyCallable_Check(g.ptr())) {
      s.function = g;
      s.rows = s.cols = -1;  // from the names below
    } else {
      s.value = to_matrix(g, where + ": " + kMatrixNames[k]);
      s.rows = static_cast<int>(s.value.rows());
      s.cols = static_cast<int>(s.value.cols());
    }
  }
  if (!shared->slots[0].present) throw ordex::InputError(where + ": A is required");
  if (D.is_none() == false && (B.is_none() || C.is_none()))
    throw ordex::InputError(where + ": D needs B and C");
  // Input and output counts: the names when given, else the constant B (C).
  auto count = [&](const py::object& names, const Slot& s, bool columns, const char* matrix) -> long {
    if (!names.is_none()) return static_cast<long>(py::len(names));
    if (!s.present) return 0;
    if (s.function)
      throw ordex::InputError(where + ": " + (columns ? "inputs" : "outputs") + ": names are needed when " +
                              matrix + " is a callable (they give its size)");
    return columns ? s.cols : s.rows;
  };
  const long m = count(inputs, shared->slots[1], true, "B");
  const long p = count(outputs, shared->slots[2], false, "C");
  ordex::SystemInfo info = python_info(state_names, where, period, breakpoints, title);
  info.input_names = names_or_default(inputs, m, "u", where + ": inputs");
  info.output_names = names_or_default(outputs, p, "y", where + ": outputs");
  if (m > 0 && !shared->slots[1].present) throw ordex::InputError(where + ": inputs are named but B is missing");
  if (p > 0 && !shared->slots[2].present) throw ordex::InputError(where + ": outputs are named but C is missing");
  const int rows[4] = {n, n, static_cast<int>(p), static_cast<int>(p)};
  const int cols[4] = {n, static_cast<int>(m), n, static_cast<int>(m)};
  for (int k = 0; k < 4; ++k) {
    Slot& s = shared->slots[k];
    if (!s.present) continue;
    if (!s.function && (s.rows != rows[k] || s.cols != cols[k]))
      throw ordex::InputError(where + ": " + kMatrixNames[k] + " has shape (" + std::to_string(s.rows) + ", " +
                              std::to_string(s.cols) + ") where (" + std::to_string(rows[k]) + ", " +
                              std::to_string(cols[k]) + ") is expected");
    if (!s.function && !s.value.allFinite())
      throw ordex::InputError(where + ": " + kMatrixNames[k] + " has an entry that is not finite");
    s.rows = rows[k];
    s.cols = cols[k];
  }
  return share(std::make_unique<CallableSystem>(std::move(info), shared));
}

std::shared_ptr<ordex::System> from_samples(const py::object& states, const py::object& times, const py::object& A,
                                            const py::object& B, const py::object& C, const py::object& D,
                                            const py::object& inputs, const py::object& outputs,
                                            const std::string& interpolation, const std::string& outside,
                                            const py::object& period, const py::object& title) {
  const std::string where = "System.from_samples";
  const std::vector<std::string> state_names = states.cast<std::vector<std::string>>();
  const long n = static_cast<long>(state_names.size());
  Eigen::VectorXd t = to_vector(times, where + ": times");
  const std::vector<double> tv(t.data(), t.data() + t.size());
  ordex::TableOptions options;
  options.file = where;
  if (interpolation == "linear") options.interpolation = ordex::Interpolation::linear;
  else if (interpolation == "pchip") options.interpolation = ordex::Interpolation::pchip;
  else throw ordex::InputError(where + ": interpolation: unknown '" + interpolation + "' (choose linear or pchip)");
  if (outside == "error") options.outside = ordex::OutsidePolicy::error;
  else if (outside == "hold") options.outside = ordex::OutsidePolicy::hold;
  else throw ordex::InputError(where + ": outside: unknown '" + outside + "' (choose error or hold)");

  const py::object* given[4] = {&A, &B, &C, &D};
  std::optional<DoubleArray> arrays[4];
  for (int k = 0; k < 4; ++k) {
    if (given[k]->is_none()) continue;
    arrays[k] = as_doubles(*given[k], where + ": " + kMatrixNames[k]);
    if (arrays[k]->ndim() != 3 || arrays[k]->shape(0) != static_cast<py::ssize_t>(tv.size()))
      throw ordex::InputError(where + ": " + kMatrixNames[k] + " has shape " + shape_text(*arrays[k]) +
                              "; (len(times), rows, cols) = (" + std::to_string(tv.size()) +
                              ", rows, cols) is expected");
  }
  if (!arrays[0]) throw ordex::InputError(where + ": A is required");
  if (arrays[3] && (!arrays[1] || !arrays[2])) throw ordex::InputError(where + ": D needs B and C");
  const long m = arrays[1] ? static_cast<long>(arrays[1]->shape(2)) : 0;
  const long p = arrays[2] ? static_cast<long>(arrays[2]->shape(1)) : 0;
  ordex::SystemInfo info = python_info(state_names, where, period, py::none(), title);
  info.input_names = names_or_default(inputs, m, "u", where + ": inputs");
  info.output_names = names_or_default(outputs, p, "y", where + ": outputs");
  const long rows[4] = {n, n, p, p}, cols[4] = {n, m, n, m};
  std::vector<std::optional<ordex::TimeTable>> tables(4);
  std::vector<int> ncols(4, 0);
  std::vector<double> bps;
  for (int k = 0; k < 4; ++k) {
    if (!arrays[k]) continue;
    const DoubleArray& a = *arrays[k];
    if (a.shape(1) != rows[k] || a.shape(2) != cols[k])
      throw ordex::InputError(where + ": " + kMatrixNames[k] + " has shape " + shape_text(a) + " where (" +
                              std::to_string(tv.size()) + ", " + std::to_string(rows[k]) + ", " +
                              std::to_string(cols[k]) + ") is expected");
    std::vector<std::string> names;
    std::vector<std::vector<double>> values;
    const double* d = a.data();
    const long T = static_cast<long>(tv.size());
    for (long i = 0; i < rows[k]; ++i)
      for (long j = 0; j < cols[k]; ++j) {
        names.push_back(std::string(kMatrixNames[k]) + "[" + std::to_string(i + 1) + "][" + std::to_string(j + 1) + "]");
        std::vector<double> column(T);
        for (long s = 0; s < T; ++s) column[s] = d[(s * rows[k] + i) * cols[k] + j];
        values.push_back(std::move(column));
      }
    tables[k].emplace(options, std::move(names), tv, std::move(values));
    ncols[k] = static_cast<int>(cols[k]);
    if (bps.empty()) bps = tables[k]->breakpoints();
  }
  // Breakpoints strictly inside the samples (linear: every sample time; pchip: none inside).
  for (double b : bps)
    if (b > tv.front() && b < tv.back()) info.breakpoints.push_back(b);
  if (options.outside == ordex::OutsidePolicy::error) {
    info.defined_span = std::make_pair(tv.front(), tv.back());
    info.defined_by = where + " (the sample times)";
  }
  return share(std::make_unique<SampledSystem>(std::move(info), std::move(tables), std::move(ncols)));
}

std::shared_ptr<ordex::System> load(const std::string& path, const py::object& set) {
  const ordex::ParameterOverrides overrides = overrides_from(set);
  std::unique_ptr<ordex::System> sys;
  {
    py::gil_scoped_release release;
    // A nonlinear model file (with [dynamics]) gives its linearization about the nominal,
    // integrated with the engine's default tolerances, as the apps do.
    sys = ordex::is_nonlinear_model_file(path) ? ordex::load_linearized_model(path, overrides)
                                               : ordex::load_model(path, overrides);
  }
  return share(std::move(sys));
}

/// sys.A(t) etc.: the matrix at T as a numpy array.
py::object evaluate(const ordex::System& sys, int k, double t) {
  if ((k == 1 || k == 3) && sys.inputs() == 0)
    throw ordex::InputError(sys.info().source + ": the system has no inputs (no " + kMatrixNames[k] + ")");
  if ((k == 2 || k == 3) && sys.outputs() == 0)
    throw ordex::InputError(sys.info().source + ": the system has no outputs (no " + kMatrixNames[k] + ")");
  Eigen::MatrixXd m = compute(sys, [&] {
    switch (k) {
      case 0: return sys.A(t);
      case 1: return sys.B(t);
      case 2: return sys.C(t);
      default: return sys.D(t);
    }
  });
  return py::cast(std::move(m));
}

}  // namespace

void bind_systems(py::module_& m) {
  using ordex::System;
  py::class_<System, std::shared_ptr<System>> cls(m, "System", R"doc(
A linear time-varying plant x' = A(t) x + B(t) u, y = C(t) x + D(t) u.

Made by ordex.load_model (a model file), System.from_callables (Python functions of t or
constant arrays) or System.from_samples (matrices sampled at times, interpolated). Every job
function (ordex.transition, ordex.gramian, ...) takes one.

Attributes: states, inputs, outputs (names), title, source, period (None when not periodic),
breakpoints, window ((from, to) or None), parameters (dict, model files), time_invariant.
Methods A(t), B(t), C(t), D(t) return the matrices at t as numpy arrays.
)doc");
  cls.attr("__module__") = "ordex";  // as users import it (also in the signatures below)
  cls.def_property_readonly("states", [](const System& s) { return s.info().state_names; },
                            "State names, in state order (the rows and columns of A).")
      .def_property_readonly("inputs", [](const System& s) { return s.info().input_names; },
                             "Input names (the columns of B); empty without inputs.")
      .def_property_readonly("outputs", [](const System& s) { return s.info().output_names; },
                             "Output names (the rows of C); empty without outputs.")
      .def_property_readonly("title", [](const System& s) { return s.info().title; }, "Free text title.")
      .def_property_readonly("source", [](const System& s) { return s.info().source; },
                             "The model file, or the constructor that built the system.")
      .def_property_readonly("period", [](const System& s) { return s.info().period; },
                             "The period of A, B, C, D, or None.")
      .def_property_readonly("breakpoints", [](const System& s) { return s.info().breakpoints; },
                             "Times where entries may jump (ascending).")
      .def_property_readonly("window", [](const System& s) { return s.info().window; },
                             "The model's default window (from, to), or None.")
      .def_property_readonly("parameters",
                             [](const System& s) {
                               py::dict d;
                               for (const auto& [name, value] : s.info().parameters) d[py::str(name)] = value;
                               return d;
                             },
                             "The model file's parameters with the values in effect (after set=).")
      .def_property_readonly("time_invariant", &System::time_invariant,
                             "True when A, B, C, D are known not to depend on t (constant entries).")
      .def("A", [](const System& s, double t) { return evaluate(s, 0, t); }, py::arg("t"),
           "A(t), n x n, as a numpy array.")
      .def("B", [](const System& s, double t) { return evaluate(s, 1, t); }, py::arg("t"),
           "B(t), n x m, as a numpy array (InputError without inputs).")
      .def("C", [](const System& s, double t) { return evaluate(s, 2, t); }, py::arg("t"),
           "C(t), p x n, as a numpy array (InputError without outputs).")
      .def("D", [](const System& s, double t) { return evaluate(s, 3, t); }, py::arg("t"),
           "D(t), p x m, as a numpy array (zero when the model has none).")
      .def("__repr__", [](const System& s) {
        std::ostringstream o;
        auto list = [&](const std::vector<std::string>& v) {
          o << "[";
          for (std::size_t i = 0; i < v.size(); ++i) o << (i ? ", " : "") << "'" << v[i] << "'";
          o << "]";
        };
        o << "<ordex.System";
        if (!s.info().title.empty()) o << " '" << s.info().title << "'";
        o << " states=";
        list(s.info().state_names);
        o << " inputs=";
        list(s.info().input_names);
        o << " outputs=";
        list(s.info().output_names);
        if (s.info().period) o << " period=" << ordex::format_number(*s.info().period);
        o << " source='" << s.info().source << "'>";
        return o.str();
      });

  cls.def_static("from_callables", &from_callables, py::arg("states"), py::arg("A"), py::arg("B") = py::none(),
                 py::arg("C") = py::none(), py::arg("D") = py::none(), py::arg("inputs") = py::none(),
                 py::arg("outputs") = py::none(), py::arg("period") = py::none(),
                 py::arg("breakpoints") = py::none(), py::arg("title") = py::none(), R"doc(
A system from Python: each of A, B, C, D is a callable t -> array of its shape, or a constant
array (None: absent; D absent means zero).

states: list of state names (n). inputs / outputs: names; when omitted they are u1..um and
y1..yp with m and p from the constant B and C (a callable B or C needs the names, which give its
size). period: the period of the matrices (for ordex.floquet); breakpoints: ascending times where
entries may jump (steps never straddle them). title: free text.

Callables are evaluated with the GIL held, one call at a time (the library runs such a system on
one thread). An exception raised by a callable reaches the caller as itself; a result of the
wrong shape raises ordex.InputError naming the matrix and t. A system of constants alone is
time-invariant and runs without the GIL.

    sys = ordex.System.from_callables(["x", "v"],
        A=lambda t: np.array([[0, 1], [-(1 - np.cos(2 * t)), 0]]), B=[[0], [1]], period=np.pi)
)doc");
  cls.def_static("from_samples", &from_samples, py::arg("states"), py::arg("times"), py::arg("A"),
                 py::arg("B") = py::none(), py::arg("C") = py::none(), py::arg("D") = py::none(),
                 py::arg("inputs") = py::none(), py::arg("outputs") = py::none(),
                 py::arg("interpolation") = "pchip", py::arg("outside") = "error", py::arg("period") = py::none(),
                 py::arg("title") = py::none(), R"doc(
A system from matrices sampled at times, interpolated between samples as the tables of
tabulated model files are (docs/models.md).

times: strictly increasing, length T (at least 4 for pchip, 2 for linear). A: array of shape
(T, n, n); B (T, n, m), C (T, p, n), D (T, p, m), each optional. interpolation: "pchip"
(default; piecewise cubic Hermite, shape preserving) or "linear". outside: "error" (default; the
system is defined on [times[0], times[-1]] only, and a window outside it is an InputError) or
"hold" (the end values beyond). Input and output names default to u1.., y1...
The arrays are copied; computations on this system run without the GIL.
)doc");

  m.def("load_model", &load, py::arg("path"), py::arg("set") = py::none(), R"doc(
Loads a model file (TOML, docs/models.md) as a System. A nonlinear model file (one with
[dynamics], docs/nonlinear.md) gives its linearization about the nominal (exact Jacobians; the
nominal integrated with the engine's default tolerances): ordex.load_nonlinear keeps the plant.

set: a dict {parameter: value} overriding the file's [parameters] (a value is a number or an
expression of numbers and pi, e.g. "2*pi"); a name the model does not declare is an InputError.
Every mistake in the file raises ordex.InputError naming the file and key.
)doc");
}

}  // namespace ordex_python

PYBIND11_MODULE(_ordex, m) {
  namespace py = pybind11;
  m.doc() = "The compiled part of the ordex package; use `import ordex` (help(ordex)).";
  m.attr("__version__") = ORDEX_VERSION;
  static py::exception<ordex::InputError> input_error(m, "InputError", PyExc_ValueError);
  static py::exception<ordex::NumericalError> numerical_error(m, "NumericalError", PyExc_ArithmeticError);
  input_error.attr("__module__") = "ordex";
  numerical_error.attr("__module__") = "ordex";
  input_error.doc() = "Bad input: a model file mistake, an option out of range, wrong sizes (a ValueError).\n"
                      "The message is the library's, naming the file and key or the option.";
  numerical_error.doc() = "A numerical failure: integrator failure, non-finite values, a singular matrix\n"
                          "(an ArithmeticError). The message says what failed and at which t.";
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const ordex::InputError& e) {
      PyErr_SetString(input_error.ptr(), e.what());
    } catch (const ordex::NumericalError& e) {
      PyErr_SetString(numerical_error.ptr(), e.what());
    } catch (const ordex::Error& e) {
      PyErr_SetString(PyExc_RuntimeError, e.what());
    }
  });
  ordex_python::bind_systems(m);
  ordex_python::bind_jobs(m);
  ordex_python::bind_nonlinear(m);
}
