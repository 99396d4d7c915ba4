#include "riccati/weights.hpp"

#include <cmath>
#include <toml++/toml.h>

#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "model/expression_system.hpp"
#include "model/input_selection.hpp"
#include "riccati/time_expression.hpp"
#include "riccati/weight_reading.hpp"

namespace ordex {

WeightMatrix WeightMatrix::constant(const Eigen::MatrixXd& value, const std::string& name) {
  WeightMatrix w;
  w.rows_ = static_cast<int>(value.rows());
  w.cols_ = static_cast<int>(value.cols());
  w.value_ = value;
  w.name_ = name;
  return w;
}

WeightMatrix WeightMatrix::function(int rows, int cols, Fill fill, const std::string& name) {
  WeightMatrix w;
  w.rows_ = rows;
  w.cols_ = cols;
  w.fill_ = std::move(fill);
  w.name_ = name;
  return w;
}

void WeightMatrix::eval(double t, MatrixRef out) const {
  if (fill_)
    fill_(t, out);
  else
    out = value_;
}

Eigen::MatrixXd WeightMatrix::at(double t) const {
  Eigen::MatrixXd m(rows_, cols_);
  eval(t, m);
  return m;
}

Weights default_weights(int n, int m) {
  Weights w;
  w.Q = WeightMatrix::constant(Eigen::MatrixXd::Identity(n, n), "Q (default identity)");
  w.R = WeightMatrix::constant(Eigen::MatrixXd::Identity(m, m), "R (default identity)");
  w.Qf = WeightMatrix::constant(Eigen::MatrixXd::Zero(n, n), "Qf (default zero)");
  w.N = WeightMatrix::constant(Eigen::MatrixXd::Zero(n, m), "N (default zero)");
  return w;
}

namespace {

// One entry of a weights matrix as read: a number, or an expression of t.
struct Entry {
  int row = 0, col = 0;
  std::shared_ptr<TimeExpression> expr;  // null: constant
};

std::string where(const std::string& path, const std::string& key) { return path + ": " + key; }

double entry_value(const toml::node& node, const std::string& what, std::shared_ptr<TimeExpression>& expr,
                   const ExpressionSymbols* symbols) {
  if (auto v = node.as_integer()) return static_cast<double>(v->get());
  if (auto v = node.as_floating_point()) {
    if (!std::isfinite(v->get())) throw InputError(what + ": not a finite number");
    return v->get();
  }
  if (auto v = node.as_string()) {
    auto e = std::make_shared<TimeExpression>(v->get(), what, symbols);
    if (e->uses_t()) {
      expr = e;
      return 0.0;
    }
    return (*e)(0.0);
  }
  throw InputError(what + ": expected a number or an expression string");
}

// Reads KEY as a ROWS x COLS matrix (list of rows) or, when square, a flat list of the diagonal.
WeightMatrix read_matrix(const toml::node& node, const std::string& path, const std::string& key,
                         int rows, int cols, const ExpressionSymbols* symbols) {
  const std::string name = where(path, key);
  const toml::array* arr = node.as_array();
  if (!arr) throw InputError(name + ": expected a matrix (a list of rows) or a flat list (a diagonal)");
  Eigen::MatrixXd value = Eigen::MatrixXd::Zero(rows, cols);
  std::vector<Entry> exprs;
  const bool flat = !arr->empty() && !(*arr)[0].is_array();
  if (flat) {
    if (rows != cols)
      throw InputError(name + ": a flat list means a diagonal, but " + key + " must be " +
                       std::to_string(rows) + " x " + std::to_string(cols));
    if (static_cast<int>(arr->size()) != rows)
      throw InputError(name + ": the diagonal has " + std::to_string(arr->size()) + " entries, expected " +
                       std::to_string(rows));
    for (int i = 0; i < rows; ++i) {
      const std::string what = name + "[" + std::to_string(i + 1) + "]";
      if ((*arr)[i].is_array()) throw InputError(what + ": mixes rows and numbers");
      Entry e{i, i, nullptr};
      value(i, i) = entry_value((*arr)[i], what, e.expr, symbols);
      if (e.expr) exprs.push_back(e);
    }
  } else {
    if (static_cast<int>(arr->size()) != rows)
      throw InputError(name + ": " + std::to_string(arr->size()) + " rows, expected " + std::to_string(rows) +
                       " (" + key + " is " + std::to_string(rows) + " x " + std::to_string(cols) + ")");
    for (int i = 0; i < rows; ++i) {
      const std::string rname = name + "[" + std::to_string(i + 1) + "]";
      const toml::array* row = (*arr)[i].as_array();
      if (!row) throw InputError(rname + ": expected a row (a list)");
      if (static_cast<int>(row->size()) != cols)
        throw InputError(rname + ": " + std::to_string(row->size()) + " entries, expected " + std::to_string(cols));
      for (int j = 0; j < cols; ++j) {
        const std::string what = rname + "[" + std::to_string(j + 1) + "]";
        Entry e{i, j, nullptr};
        value(i, j) = entry_value((*row)[j], what, e.expr, symbols);
        if (e.expr) exprs.push_back(e);
      }
    }
  }
  if (exprs.empty()) return WeightMatrix::constant(value, name);
  // The constant part is kept and the expression entries are written over it at each t.
  auto fill = [value, exprs](double t, MatrixRef out) {
    out = value;
    for (const Entry& e : exprs) out(e.row, e.col) = (*e.expr)(t);
  };
  return WeightMatrix::function(rows, cols, fill, name);
}

// Q += C' Qy C, R += D' Qy D, N += C' Qy D: the cost y'Qy y with y = C x + D u written out.
void add_output_weight(Weights& w, const WeightMatrix& Qy, const System& sys) {
  const int n = sys.states(), m = sys.inputs(), p = sys.outputs();
  struct Parts {
    WeightMatrix Q, R, N, Qy;
    const System* sys;
    Eigen::MatrixXd C, D, Y;
  };
  auto parts = std::make_shared<Parts>(Parts{w.Q, w.R, w.N, Qy, &sys, Eigen::MatrixXd(p, n), Eigen::MatrixXd(p, m),
                                             Eigen::MatrixXd(p, p)});
  // One evaluation of C, D and Qy per call; the plant is fixed, so constants fold once.
  auto load = [](Parts& q, double t) {
    q.sys->C(t, q.C);
    q.sys->D(t, q.D);
    q.Qy.eval(t, q.Y);
  };
  const std::string suffix = " + output weight " + Qy.name();
  auto Q = [parts, load](double t, MatrixRef out) {
    load(*parts, t);
    parts->Q.eval(t, out);
    out.noalias() += parts->C.transpose() * parts->Y * parts->C;
  };
  auto R = [parts, load](double t, MatrixRef out) {
    load(*parts, t);
    parts->R.eval(t, out);
    out.noalias() += parts->D.transpose() * parts->Y * parts->D;
  };
  auto N = [parts, load](double t, MatrixRef out) {
    load(*parts, t);
    parts->N.eval(t, out);
    out.noalias() += parts->C.transpose() * parts->Y * parts->D;
  };
  const bool constant = sys.time_invariant() && Qy.is_constant() && w.Q.is_constant() && w.R.is_constant() &&
                        w.N.is_constant();
  auto make = [constant](int r, int c, WeightMatrix::Fill f, const std::string& name) {
    if (!constant) return WeightMatrix::function(r, c, f, name);
    Eigen::MatrixXd v(r, c);
    f(0.0, v);
    return WeightMatrix::constant(v, name);
  };
  const std::string qn = w.Q.name() + suffix, rn = w.R.name() + suffix, nn = w.N.name() + suffix;
  w.Q = make(n, n, Q, qn);
  w.R = make(m, m, R, rn);
  w.N = make(n, m, N, nn);
  w.has_cross = true;
}

Weights load_weights_from(const std::string& path, int n, int m, const System* sys, const ExpressionSymbols* symbols) {
  const std::string text = read_text_file(path, "weights file", input_limits().max_toml_bytes);
  const toml::table table = weight_detail::parse_toml_text(text, path);
  Weights w = default_weights(n, m);
  w.source = path;
  for (const auto& [k, node] : table) {
    const std::string key(k.str());
    if (key == "Q")
      w.Q = read_matrix(node, path, key, n, n, symbols);
    else if (key == "R")
      w.R = read_matrix(node, path, key, m, m, symbols);
    else if (key == "Qf")
      w.Qf = read_matrix(node, path, key, n, n, symbols);
    else if (key == "N") {
      w.N = read_matrix(node, path, key, n, m, symbols);
      w.has_cross = true;
    } else if (key == "Qy" && sys) {
      if (sys->outputs() < 1) throw InputError(path + ": Qy: the model has no outputs to weigh");
    } else {
      throw InputError(path + ": unknown key " + quote_clipped(key) + " (a weights file has Q, R, Qf, N" +
                       (sys ? " and Qy)" : " and, with the model, Qy)"));
    }
  }
  // Qy after the others, so that it adds to them whatever the order of the keys.
  if (sys && table.contains("Qy")) {
    const int p = sys->outputs();
    add_output_weight(w, read_matrix(*table.get("Qy"), path, "Qy", p, p, symbols), *sys);
  }
  const std::pair<const char*, const char*> defaults[] = {{"Q", "Q = I"}, {"R", "R = I"}, {"Qf", "Qf = 0"}};
  std::string used;
  for (const auto& [key, value] : defaults)
    if (!table.contains(key)) {
      w.defaults_used.push_back(key);
      used += (used.empty() ? "" : ", ") + std::string(value);
    }
  if (table.empty())
    w.note = path + " sets none of Q, R, Qf, N: the defaults " + used + " are used";
  else if (!used.empty())
    w.note = path + ": default" + (w.defaults_used.size() > 1 ? "s " : " ") + used + " used";
  return w;
}

}  // namespace

ExpressionSymbols model_symbols(const System& sys) {
  const System* plant = &sys;
  if (auto sel = dynamic_cast<const InputSelection*>(plant)) plant = &sel->plant();
  ExpressionSymbols s;
  s.constants = plant->info().parameters;
  if (auto es = dynamic_cast<const ExpressionSystem*>(plant)) {
    for (const DefineSpec& d : es->spec().defines) s.varying.push_back(d.name);
    for (const TableSpec& t : es->spec().tables)
      for (const std::string& c : t.table->columns()) s.varying.push_back(c);
    s.value = [es](const std::string& name, double t) { return es->symbol_value(name, t); };
  }
  return s;
}

Weights load_weights(const std::string& path, int n, int m) { return load_weights_from(path, n, m, nullptr, nullptr); }

Weights load_weights(const std::string& path, const System& sys) {
  const ExpressionSymbols symbols = model_symbols(sys);
  return load_weights_from(path, sys.states(), sys.inputs(), &sys, &symbols);
}

void WeightCheckOptions::validate() const {
  if (!(symmetry_tolerance > 0 && symmetry_tolerance <= 1e-2))
    throw InputError("WeightCheckOptions::symmetry_tolerance = " + format_number(symmetry_tolerance) +
                     " is outside (0, 1e-2]");
  if (!(definiteness_tolerance > 0 && definiteness_tolerance <= 1e-2))
    throw InputError("WeightCheckOptions::definiteness_tolerance = " + format_number(definiteness_tolerance) +
                     " is outside (0, 1e-2]");
}

namespace {

void require_size(const WeightMatrix& w, int rows, int cols, const std::string& key) {
  if (w.rows() != rows || w.cols() != cols)
    throw InputError(w.name() + ": " + key + " is " + std::to_string(w.rows()) + " x " + std::to_string(w.cols()) +
                     ", expected " + std::to_string(rows) + " x " + std::to_string(cols));
}

}  // namespace

namespace weight_detail {

WeightMatrix read_weight_matrix(const toml::node& node, const std::string& path, const std::string& key, int rows,
                                int cols) {
  return read_matrix(node, path, key, rows, cols, nullptr);
}

toml::table parse_toml_text(const std::string& text, const std::string& path) {
  try {
    return toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(path + ":" + std::to_string(e.source().begin.line) + ": not valid TOML: " +
                     std::string(e.description()));
  }
}

void require_symmetric(const Eigen::MatrixXd& x, const std::string& name, double t, double tol) {
  const double scale = std::max(1.0, x.cwiseAbs().maxCoeff());
  Eigen::Index i = 0, j = 0;
  const double gap = (x - x.transpose()).cwiseAbs().maxCoeff(&i, &j);
  if (!(gap <= tol * scale))
    throw InputError(name + ": not symmetric at t = " + format_number(t) + " (entry [" + std::to_string(i + 1) +
                     "][" + std::to_string(j + 1) + "] = " + format_number(x(i, j)) + " but [" +
                     std::to_string(j + 1) + "][" + std::to_string(i + 1) + "] = " + format_number(x(j, i)) + ")");
}

std::pair<double, double> eigen_range(const Eigen::MatrixXd& x) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(0.5 * (x + x.transpose()), Eigen::EigenvaluesOnly);
  const Eigen::VectorXd& ev = es.eigenvalues();
  return {ev.minCoeff(), ev.cwiseAbs().maxCoeff()};
}

}  // namespace weight_detail

using weight_detail::eigen_range;
using weight_detail::require_symmetric;

void check_weights(const Weights& w, int n, int m, const std::vector<double>& times, double t_final,
                   const WeightCheckOptions& options) {
  options.validate();
  if (m < 1) throw InputError("the model has no inputs: a regulator needs at least one input (B)");
  require_size(w.Q, n, n, "Q");
  require_size(w.R, m, m, "R");
  require_size(w.Qf, n, n, "Qf");
  require_size(w.N, n, m, "N");
  const double stol = options.symmetry_tolerance, dtol = options.definiteness_tolerance;
  Eigen::MatrixXd Q(n, n), R(m, m), N(n, m), Qf(n, n);
  // Constant weights need only one look; time-varying ones are checked at every grid time.
  const bool all_constant = w.Q.is_constant() && w.R.is_constant() && w.N.is_constant();
  for (double t : times) {
    w.Q.eval(t, Q);
    w.R.eval(t, R);
    w.N.eval(t, N);
    require_symmetric(Q, w.Q.name(), t, stol);
    require_symmetric(R, w.R.name(), t, stol);
    auto [rmin, rmax] = eigen_range(R);
    if (!(rmin > dtol * std::max(1.0, rmax)))
      throw InputError(w.R.name() + ": not positive definite at t = " + format_number(t) +
                       " (smallest eigenvalue " + format_number(rmin) + ")");
    Eigen::MatrixXd Qt = Q;
    if (w.has_cross) Qt -= N * R.llt().solve(N.transpose());
    auto [qmin, qmax] = eigen_range(Qt);
    if (!(qmin >= -dtol * std::max(1.0, qmax))) {
      if (w.has_cross)
        throw InputError(w.Q.name() + ", N: Q - N R^-1 N' is not positive semidefinite at t = " + format_number(t) +
                         " (smallest eigenvalue " + format_number(qmin) + ")");
      throw InputError(w.Q.name() + ": not positive semidefinite at t = " + format_number(t) +
                       " (smallest eigenvalue " + format_number(qmin) + ")");
    }
    if (all_constant) break;
  }
  w.Qf.eval(t_final, Qf);
  require_symmetric(Qf, w.Qf.name(), t_final, stol);
  auto [fmin, fmax] = eigen_range(Qf);
  if (!(fmin >= -dtol * std::max(1.0, fmax)))
    throw InputError(w.Qf.name() + ": not positive semidefinite (smallest eigenvalue " + format_number(fmin) + ")");
}

}  // namespace ordex
