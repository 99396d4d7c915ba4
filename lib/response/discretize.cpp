#include "response/discretize.hpp"

#include <chrono>
#include <cmath>
#include <fstream>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/time_grid.hpp"
#include "io/input_file.hpp"
#include "propagation/stats_json.hpp"

namespace ordex {

void DiscretizeOptions::validate() const {
  propagation.validate();
  if (!(step >= 0) || !std::isfinite(step))
    throw InputError("DiscretizeOptions::step = " + format_number(step) + " must be 0 or a positive number");
  if (samples < 2 || samples > 10000000)
    throw InputError("DiscretizeOptions::samples = " + std::to_string(samples) + " is outside [2, 10000000]");
  if (threads < 1 || threads > 64)
    throw InputError("DiscretizeOptions::threads = " + std::to_string(threads) + " is outside [1, 64]");
}

namespace {

/// Largest singular value of PHI, as the square root of the largest eigenvalue of PHI' PHI: the
/// symmetric eigenvalue problem costs a fraction of a full SVD, and the largest eigenvalue of
/// PHI' PHI is accurate to a few units of roundoff relative to itself (Weyl's inequality: the
/// rounding of the product is of size u |PHI|^2), so the largest singular value is too.
double largest_singular_value(const Eigen::MatrixXd& phi) {
  const Eigen::MatrixXd g = phi.transpose() * phi;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(g, Eigen::EigenvaluesOnly);
  return std::sqrt(std::max(0.0, es.eigenvalues().maxCoeff()));
}

}  // namespace

DiscretizeReport discretize(const System& sys, const std::vector<double>& times, const DiscretizeOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  o.validate();
  if (times.size() < 2) throw InputError("discretize: the grid needs at least two times");
  for (std::size_t k = 0; k < times.size(); ++k) {
    if (!std::isfinite(times[k])) throw InputError("discretize: grid times must be finite");
    if (k > 0 && !(times[k] > times[k - 1]))
      throw InputError("discretize: grid times must be strictly increasing (time " + std::to_string(k + 1) + ")");
  }
  sys.require_defined_on(times.front(), times.back(), "discretize: the grid [" + format_number(times.front()) +
                         ", " + format_number(times.back()) + "]");
  DiscretizeReport rep;
  rep.states = sys.info().state_names;
  rep.inputs = sys.info().input_names;
  StepMatrixBuilder builder(sys, o.hold, o.propagation, o.reuse_time_invariant, o.threads);
  rep.model.hold = o.hold;
  rep.model.states = sys.states();
  rep.model.inputs = sys.inputs();
  rep.model.times = times;
  if (o.keep_steps) rep.model.steps.reserve(times.size() - 1);
  // The growth over the grid: the product Phi_k ... Phi_0, renormalised as it goes so that an
  // unstable plant does not overflow (its scale kept as a logarithm).
  const Eigen::Index n = sys.states();
  Eigen::MatrixXd product = Eigen::MatrixXd::Identity(n, n), next(n, n), last_phi;
  double log_scale = 0;
  builder.for_each_step(times, [&](std::size_t k, const StepMatrices& step) {
    next.noalias() = step.phi * product;
    product.swap(next);
    const double norm = product.norm();
    if (norm > 0 && std::isfinite(norm)) {
      product /= norm;
      log_scale += std::log(norm);
    }
    // A reused step (time-invariant grid) repeats the previous matrix: its norm is known.
    if (n > 0 && !(k > 0 && step.phi.cwiseEqual(last_phi).all())) {
      last_phi = step.phi;
      rep.largest_step = std::max(rep.largest_step, largest_singular_value(step.phi));
    }
    if (o.on_step) o.on_step(k, step);
    if (o.keep_steps) rep.model.steps.push_back(step);
  });
  rep.growth = n > 0 ? std::exp(log_scale + std::log(Eigen::JacobiSVD<Eigen::MatrixXd>(product).singularValues()(0))) : 0;
  rep.method = builder.method();
  rep.propagation = builder.stats();
  rep.computed_steps = builder.computed_steps();
  rep.reused_steps = builder.reused_steps();
  rep.time_invariant = builder.time_invariant();
  rep.header = report_header(sys, times.front(), times.back(), method_name(rep.method));
  rep.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return rep;
}

DiscretizeReport discretize(const System& sys, double t0, double t1, const DiscretizeOptions& o) {
  o.validate();
  if (!std::isfinite(t0) || !std::isfinite(t1) || !(t0 < t1))
    throw InputError("discretize: the window must run forward (from " + format_number(t0) + " to " +
                     format_number(t1) + ")");
  return discretize(sys, o.step > 0 ? step_grid(t0, t1, o.step) : linspace(t0, t1, o.samples), o);
}

std::vector<double> step_grid(double t0, double t1, double h) {
  if (!(h > 0) || !std::isfinite(h)) throw InputError("DiscretizeOptions::step = " + format_number(h) + " must be a positive number");
  if (!(t0 < t1))
    throw InputError("discretize: the window must run forward (from " + format_number(t0) + " to " + format_number(t1) + ")");
  const double count = (t1 - t0) / h;
  if (count > 1e7)
    throw InputError("DiscretizeOptions::step = " + format_number(h) + " gives more than 10^7 intervals in the window");
  std::vector<double> t;
  // Times as t0 + k h (not by repeated addition, which drifts).
  for (long k = 0;; ++k) {
    const double tk = t0 + static_cast<double>(k) * h;
    if (tk >= t1 - 1e-9 * h) break;
    t.push_back(tk);
  }
  t.push_back(t1);
  return t;
}

std::vector<double> read_time_grid(const std::string& path) {
  LineReader in(path, "times file");  // bounded: a folder or /dev/zero is refused, named
  std::vector<double> t;
  std::string line;
  bool first = true;
  while (in.next(line)) {
    const int lineno = in.line_number();
    std::size_t b = line.find_first_not_of(" \t\r");
    if (b == std::string::npos || line[b] == '#') continue;
    std::size_t e = line.find_last_not_of(" \t\r");
    const std::string f = line.substr(b, e - b + 1);
    if (first && f == "t") { first = false; continue; }
    first = false;
    char* end = nullptr;
    const double v = std::strtod(f.c_str(), &end);
    if (end == f.c_str() || *end != '\0' || !std::isfinite(v))
      throw InputError(path + ":" + std::to_string(lineno) + ": " + quote_clipped(f) +
                       (f.find_first_of(",;\t") != std::string::npos ? " holds several fields" : " is not a finite number") +
                       " (one time a line)");
    if (!t.empty() && !(v > t.back()))
      throw InputError(path + ":" + std::to_string(lineno) + ": t is not strictly increasing");
    t.push_back(v);
  }
  if (t.size() < 2)
    throw InputError(path + ": " + std::to_string(t.size()) + " times, at least 2 are needed");
  return t;
}

Eigen::MatrixXd simulate_discrete(const DiscreteModel& model, const Eigen::VectorXd& x0, const Eigen::MatrixXd& U) {
  const std::size_t K = model.steps.size();
  if (static_cast<Eigen::Index>(K + 1) != U.rows() && model.inputs > 0)
    throw InputError("simulate_discrete: " + std::to_string(U.rows()) + " input rows for " + std::to_string(K + 1) + " grid times");
  Eigen::MatrixXd X(static_cast<Eigen::Index>(K + 1), model.states);
  Eigen::VectorXd x = x0;
  X.row(0) = x.transpose();
  for (std::size_t k = 0; k < K; ++k) {
    const StepMatrices& s = model.steps[k];
    Eigen::VectorXd next = s.phi * x;
    if (model.inputs > 0) {
      next += s.gamma0 * U.row(static_cast<Eigen::Index>(k)).transpose();
      if (model.hold == Hold::Linear) next += s.gamma1 * U.row(static_cast<Eigen::Index>(k + 1)).transpose();
    }
    x = next;
    X.row(static_cast<Eigen::Index>(k + 1)) = x.transpose();
  }
  return X;
}

Json DiscretizeReport::to_json() const {
  const DiscretizeReport& rep = *this;
  const DiscreteModel& m = rep.model;
  Json j = header.to_json();
  j["hold"] = hold_name(m.hold);
  j["states"] = states;
  j["inputs"] = inputs;
  j["intervals"] = m.times.size() - 1;
  j["times"] = vector_to_json(m.times);
  Json phi = Json::array(), g0 = Json::array(), g1 = Json::array();
  for (const StepMatrices& s : m.steps) {
    phi.push_back(ordex::to_json(s.phi));
    g0.push_back(ordex::to_json(s.gamma0));
    if (m.hold == Hold::Linear) g1.push_back(ordex::to_json(s.gamma1));
  }
  j["phi"] = phi;
  if (m.hold == Hold::Zoh) {
    j["gamma"] = g0;
  } else {
    j["gamma0"] = g0;
    j["gamma1"] = g1;
  }
  add_propagation_stats(j, rep.propagation);
  j["interval_steps_computed"] = rep.computed_steps;
  j["interval_steps_reused"] = rep.reused_steps;
  j["time_invariant"] = rep.time_invariant;
  j["growth"] = number_to_json(rep.growth);
  j["largest_step"] = number_to_json(rep.largest_step);
  j["seconds"] = rep.seconds;
  return j;
}

DiscreteModelCsv::DiscreteModelCsv(const std::string& path, int n, int nu, Hold hold) : hold_(hold) {
  std::vector<std::string> header{"k", "t_start", "t_end"};
  auto add = [&](const std::vector<std::string>& names) { header.insert(header.end(), names.begin(), names.end()); };
  add(matrix_column_names("phi", n, n));
  if (hold == Hold::Zoh) {
    add(matrix_column_names("gamma", n, nu));
  } else {
    add(matrix_column_names("gamma0", n, nu));
    add(matrix_column_names("gamma1", n, nu));
  }
  csv_ = std::make_unique<CsvWriter>(path, header);
}

DiscreteModelCsv::~DiscreteModelCsv() = default;

void DiscreteModelCsv::row(std::size_t k, const StepMatrices& s) {
  row_.clear();
  row_.push_back(static_cast<double>(k));
  row_.push_back(s.t_start);
  row_.push_back(s.t_end);
  append_row_major(row_, s.phi);
  append_row_major(row_, s.gamma0);
  if (hold_ == Hold::Linear) append_row_major(row_, s.gamma1);
  csv_->row(row_);
}

void DiscreteModelCsv::commit() { csv_->commit(); }

void write_discrete_model_csv(const std::string& path, const DiscreteModel& m) {
  DiscreteModelCsv w(path, m.states, m.inputs, m.hold);
  for (std::size_t k = 0; k < m.steps.size(); ++k) w.row(k, m.steps[k]);
  w.commit();
}

std::string DiscretizeReport::brief() const {
  const DiscretizeReport& rep = *this;
  const DiscreteModel& m = rep.model;
  std::ostringstream s;
  s.precision(6);
  s << "discrete model: " << m.times.size() - 1 << " intervals from t = " << m.times.front() << " to "
    << m.times.back() << ", " << m.states << " states, " << m.inputs << " inputs, hold " << hold_name(m.hold)
    << " (" << method_name(rep.method) << ", " << rep.computed_steps << " intervals integrated";
  if (rep.reused_steps) s << ", " << rep.reused_steps << " reused: time-invariant";
  s << ", " << rep.seconds << " s)\n";
  if (m.times.size() > 1 && m.states > 0) {
    // For a time-varying plant the eigenvalues of one Phi_k decide nothing about stability;
    // what the grid does to the state is the growth of the product Phi_{N-1} ... Phi_0 =
    // Phi(t_N, t_0), its largest singular value, and the largest gain of a single step.
    s << "growth over the grid: |Phi(t_N, t_0)| = " << rep.growth
      << " (largest singular value), largest single step |Phi_k| = " << rep.largest_step << "\n"
      << "  (eigenvalues of a single Phi_k are no stability verdict for a time-varying plant)\n";
  }
  return s.str();
}

}  // namespace ordex
