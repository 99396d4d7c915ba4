#pragma once
// Shared by the two translation units of the extension ordex._ordex: systems.cpp (the module,
// its errors, System and the conversions) and jobs.cpp (one function per job).
//
// The GIL: every library call runs with the GIL released (compute below). A system built from
// Python callables takes it back inside each callback, and says its clones may not run
// concurrently, so the library evaluates it on one thread at a time.
#include <pybind11/eigen.h>
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "ordex.hpp"

namespace ordex_python {

namespace py = pybind11;

/// The first Python exception raised by a callback of a callable system, kept until the library
/// call that met it has returned, so that it reaches the caller as itself.
struct PendingError {
  std::shared_ptr<py::error_already_set> error;
};

/// Implemented by systems whose evaluation calls back into Python.
class CallsPython {
 public:
  virtual ~CallsPython() = default;
  virtual PendingError& pending() const = 0;
};

/// Raises the pending Python exception of SYS, if any (needs the GIL).
void raise_pending(const ordex::System& sys);

/// A progress callback for the library's Options that lets Ctrl-C (a notebook's interrupt)
/// stop a long computation: now and then it takes the GIL and runs Python's signal handlers; on
/// KeyboardInterrupt it records the interruption and throws, ending the library call, and
/// compute() raises KeyboardInterrupt in its place.
std::function<void(double)> interrupt_check();
/// Raises KeyboardInterrupt when interrupt_check recorded one (needs the GIL).
void raise_if_interrupted();

/// The lock of SYS: a System is used by one thread at a time (model/system.hpp), and Python
/// threads may share one System object, so every library call on it holds this (recursive: a
/// callback may evaluate its own system).
std::recursive_mutex& system_lock(const ordex::System& sys);
/// SYS shared with Python; its lock is dropped with it.
std::shared_ptr<ordex::System> share(std::unique_ptr<ordex::System> sys);

/// Runs F (a library call on SYS) with the GIL released and SYS's lock held. A Python exception raised inside a
/// callback during the call is raised in place of what the library made of it (and also when
/// the library absorbed it, as the regulator's closed-loop check absorbs failures).
template <class F>
auto compute(const ordex::System& sys, F&& f) -> decltype(f()) {
  auto run = [&] {
    py::gil_scoped_release release;  // first: a thread waiting for the lock holds no GIL
    std::lock_guard<std::recursive_mutex> lock(system_lock(sys));
    return f();
  };
  try {
    auto result = run();
    raise_pending(sys);
    raise_if_interrupted();
    return result;
  } catch (py::error_already_set&) {
    throw;
  } catch (...) {
    raise_pending(sys);
    raise_if_interrupted();
    throw;
  }
}

/// std::vector<double> as a 1-D numpy array (copied).
py::array_t<double> to_array(const std::vector<double>& v);
/// Matrices of one size as a 3-D numpy array (count, rows, cols); (0, 0, 0) when empty.
py::array_t<double> stack(const std::vector<Eigen::MatrixXd>& ms);
/// An array-like (a scalar, 1-D, or 2-D with one row or column) as a vector, of N entries when
/// N >= 0; InputError naming WHAT otherwise.
Eigen::VectorXd to_vector(const py::handle& h, const std::string& what, long n = -1);
/// An array-like as a 2-D matrix; InputError naming WHAT when it is not 2-D.
Eigen::MatrixXd to_matrix(const py::handle& h, const std::string& what);
/// The result object of ordex.results.CLS from FIELDS, the report's JSON and its brief text.
py::object make_result(const char* cls, py::dict fields, const ordex::Json& json, const std::string& brief);
/// A Record (attribute bag) of ordex.results from FIELDS.
py::object make_record(const char* cls, py::dict fields);

/// The engine options every job takes (PropagationOptions, with interrupt_check as progress).
ordex::PropagationOptions engine(const std::string& method, double rtol, double atol, double max_step,
                                 long max_steps);
/// TEXT followed by the description of the engine options (a job's docstring).
std::string doc(const char* text);
/// The library's engine defaults, for the keyword arguments below.
inline const ordex::PropagationOptions kEngine{};

/// pybind11 argument list of the engine options, with the library's defaults.
#define ORDEX_ENGINE_ARGS                                                                          \
  py::arg("method") = ordex::method_name(kEngine.method), py::arg("rtol") = kEngine.rtol,          \
  py::arg("atol") = kEngine.atol, py::arg("max_step") = kEngine.max_step,                          \
  py::arg("max_steps") = kEngine.max_steps

/// Parameter overrides from a dict {name: number or constant expression} (None: none).
ordex::ParameterOverrides overrides_from(const py::object& set);
/// A sequence of times as a vector; InputError naming WHAT otherwise.
std::vector<double> times_from(const py::object& times, const std::string& what);

void bind_systems(py::module_& m);
void bind_jobs(py::module_& m);
void bind_nonlinear(py::module_& m);

}  // namespace ordex_python
