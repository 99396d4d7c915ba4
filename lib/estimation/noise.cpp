#include "estimation/noise.hpp"

#include <algorithm>

#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "riccati/weight_reading.hpp"

namespace ordex {

using namespace weight_detail;

std::string NoiseModel::noise_path() const {
  if (!through.empty()) {
    std::string s = "inputs";
    for (std::size_t i = 0; i < through.size(); ++i) s += (i ? ", " : " ") + through[i];
    return s;
  }
  return G ? "explicit G" : "identity";
}

namespace {

int input_index(const System& sys, const std::string& name, const std::string& what) {
  const auto& names = sys.info().input_names;
  const auto it = std::find(names.begin(), names.end(), name);
  if (it == names.end()) {
    std::string known;
    for (const auto& n : names) known += (known.empty() ? "" : ", ") + n;
    throw InputError(what + ": the model has no input " + quote_clipped(name) +
                     (known.empty() ? " (it has no inputs)" : " (its inputs: " + known + ")"));
  }
  return static_cast<int>(it - names.begin());
}

}  // namespace

NoiseModel load_noise(const std::string& path, const System& sys) {
  const int n = sys.states(), p = sys.outputs();
  const std::string text = read_text_file(path, "noise file", input_limits().max_toml_bytes);
  const toml::table table = parse_toml_text(text, path);
  for (const auto& [k, node] : table) {
    const std::string key(k.str());
    if (key != "Qn" && key != "through" && key != "G" && key != "Rn" && key != "P0")
      throw InputError(path + ": unknown key " + quote_clipped(key) + " (a noise file has Qn, through or G, Rn, P0)");
  }
  NoiseModel noise;
  noise.source = path;
  if (table.contains("through") && table.contains("G"))
    throw InputError(path + ": through and G: give one of them (G is the columns of B for the inputs in through)");
  int q = n;
  if (const toml::node* node = table.get("through")) {
    const toml::array* arr = node->as_array();
    if (!arr || arr->empty()) throw InputError(path + ": through: expected a non-empty list of input names");
    for (std::size_t i = 0; i < arr->size(); ++i) {
      const std::string what = path + ": through[" + std::to_string(i + 1) + "]";
      const auto* name = (*arr)[i].as_string();
      if (!name) throw InputError(what + ": expected an input name (a string)");
      input_index(sys, name->get(), what);
      if (std::count(noise.through.begin(), noise.through.end(), name->get()))
        throw InputError(what + ": input " + quote_clipped(name->get()) + " is named twice");
      noise.through.push_back(name->get());
    }
    q = static_cast<int>(noise.through.size());
  }
  if (const toml::node* node = table.get("G")) {
    const toml::array* arr = node->as_array();
    const toml::array* row = arr && !arr->empty() ? (*arr)[0].as_array() : nullptr;
    if (!row || row->empty()) throw InputError(path + ": G: expected a matrix (a list of " + std::to_string(n) + " rows)");
    q = static_cast<int>(row->size());
    noise.G = read_weight_matrix(*node, path, "G", n, q);
  }
  const toml::node* qn = table.get("Qn");
  if (!qn) throw InputError(path + ": Qn: missing (the process noise intensity, " + std::to_string(q) + " x " +
                            std::to_string(q) + ")");
  noise.Qn = read_weight_matrix(*qn, path, "Qn", q, q);
  if (const toml::node* node = table.get("Rn")) {
    if (p < 1) throw InputError(path + ": Rn: the model has no outputs to measure");
    noise.Rn = read_weight_matrix(*node, path, "Rn", p, p);
  }
  const toml::node* p0 = table.get("P0");
  if (!p0) throw InputError(path + ": P0: missing (the covariance of the initial state, " + std::to_string(n) + " x " +
                            std::to_string(n) + ")");
  const WeightMatrix P0 = read_weight_matrix(*p0, path, "P0", n, n);
  if (!P0.is_constant()) throw InputError(path + ": P0: must be constant (numbers, not expressions of t)");
  noise.P0 = P0.at(0.0);
  return noise;
}

namespace {

void require_size(const WeightMatrix& w, int rows, int cols, const std::string& what) {
  if (w.rows() != rows || w.cols() != cols)
    throw InputError(w.name() + ": " + what + " is " + std::to_string(w.rows()) + " x " + std::to_string(w.cols()) +
                     ", expected " + std::to_string(rows) + " x " + std::to_string(cols));
}

}  // namespace

void check_noise(const NoiseModel& noise, const System& sys, const std::vector<double>& times, bool need_rn,
                 const WeightCheckOptions& tol) {
  tol.validate();
  const int n = sys.states(), p = sys.outputs();
  const std::string src = noise.source;
  for (const std::string& name : noise.through) input_index(sys, name, src + ": through");
  if (!noise.through.empty() && noise.G) throw InputError(src + ": through and G: give one of them");
  const int q = !noise.through.empty() ? static_cast<int>(noise.through.size()) : noise.G ? noise.G->cols() : n;
  if (noise.G) require_size(*noise.G, n, q, "G");
  require_size(noise.Qn, q, q, "Qn");
  if (need_rn) {
    if (p < 1) throw InputError(sys.info().source + ": the model has no outputs; the filter needs C");
    if (!noise.Rn) throw InputError(src + ": Rn: missing (the measurement noise intensity of the outputs, " +
                                    std::to_string(p) + " x " + std::to_string(p) + ")");
    require_size(*noise.Rn, p, p, "Rn");
  }
  if (noise.P0.rows() != n || noise.P0.cols() != n)
    throw InputError(src + ": P0 is " + std::to_string(noise.P0.rows()) + " x " + std::to_string(noise.P0.cols()) +
                     ", expected " + std::to_string(n) + " x " + std::to_string(n));
  if (!noise.P0.allFinite()) throw InputError(src + ": P0: entries must be finite");
  const double stol = tol.symmetry_tolerance, dtol = tol.definiteness_tolerance;
  require_symmetric(noise.P0, src + ": P0", times.empty() ? 0.0 : times.front(), stol);
  auto [pmin, pmax] = eigen_range(noise.P0);
  if (!(pmin >= -dtol * std::max(1.0, pmax)))
    throw InputError(src + ": P0: not positive semidefinite (smallest eigenvalue " + format_number(pmin) + ")");
  Eigen::MatrixXd Qn(q, q), Rn(p, p);
  const bool constant = noise.Qn.is_constant() && (!need_rn || noise.Rn->is_constant());
  for (double t : times) {
    noise.Qn.eval(t, Qn);
    require_symmetric(Qn, noise.Qn.name(), t, stol);
    auto [qmin, qmax] = eigen_range(Qn);
    if (!(qmin >= -dtol * std::max(1.0, qmax)))
      throw InputError(noise.Qn.name() + ": not positive semidefinite at t = " + format_number(t) +
                       " (smallest eigenvalue " + format_number(qmin) + ")");
    if (need_rn) {
      noise.Rn->eval(t, Rn);
      require_symmetric(Rn, noise.Rn->name(), t, stol);
      auto [rmin, rmax] = eigen_range(Rn);
      if (!(rmin > dtol * std::max(1.0, rmax)))
        throw InputError(noise.Rn->name() + ": not positive definite at t = " + format_number(t) +
                         " (smallest eigenvalue " + format_number(rmin) + "; every measured output needs noise)");
    }
    if (constant) break;
  }
}

NoiseTerms::NoiseTerms(const System& sys, const NoiseModel& noise, bool with_rn)
    : sys_(sys), noise_(noise), with_rn_(with_rn) {
  const int n = sys.states(), m = sys.inputs(), p = sys.outputs();
  const int q = noise.Qn.rows();
  A.setZero(n, n);
  B.setZero(n, std::max(m, 0));
  C.setZero(p, n);
  G.setZero(n, q);
  Qn.setZero(q, q);
  S.setZero(n, n);
  Rn.setZero(p, p);
  Rn_inv.setZero(p, p);
  CtWC.setZero(n, n);
  for (const std::string& name : noise.through) columns_.push_back(input_index(sys, name, noise.source + ": through"));
  if (noise.through.empty() && !noise.G) G.setIdentity();
}

void NoiseTerms::at(double t) {
  if (t == t_) return;
  t_ = NAN;
  sys_.A(t, A);
  if (!columns_.empty()) {
    sys_.B(t, B);
    for (std::size_t j = 0; j < columns_.size(); ++j) G.col(static_cast<Eigen::Index>(j)) = B.col(columns_[j]);
  } else if (noise_.G) {
    noise_.G->eval(t, G);
  }
  noise_.Qn.eval(t, Qn);
  S.noalias() = G * Qn * G.transpose();
  S = (0.5 * (S + S.transpose())).eval();
  if (C.rows() > 0) sys_.C(t, C);
  if (with_rn_) {
    noise_.Rn->eval(t, Rn);
    Eigen::LLT<Eigen::MatrixXd> llt(0.5 * (Rn + Rn.transpose()));
    if (llt.info() != Eigen::Success)
      throw NumericalError(noise_.Rn->name() + ": not positive definite at t = " + format_number(t));
    Rn_inv = llt.solve(Eigen::MatrixXd::Identity(Rn.rows(), Rn.cols()));
    CtWC.noalias() = C.transpose() * (Rn_inv * C);
  }
  t_ = t;
}

}  // namespace ordex
