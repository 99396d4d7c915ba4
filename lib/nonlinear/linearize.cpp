#include "nonlinear/linearize.hpp"

#include <filesystem>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "model/time_grid.hpp"

namespace ordex {

void LinearizeOptions::validate() const {
  if (step == 0 && samples < 2) throw InputError("LinearizeOptions::samples = " + std::to_string(samples) + " is fewer than 2");
  if (samples > 10000000) throw InputError("LinearizeOptions::samples: at most 10000000");
  if (step < 0 || !std::isfinite(step)) throw InputError("LinearizeOptions::step = " + format_number(step) + " is not positive");
}

LinearizeReport linearize(const NonlinearModel& model, double t0, double t1, const LinearizeOptions& o) {
  o.validate();
  std::vector<double> times;
  if (o.step > 0) {
    if ((t1 - t0) / o.step > 1e7) throw InputError("LinearizeOptions::step: more than 10000000 samples");
    for (double t = t0; t < t1 - 1e-12 * (t1 - t0); t += o.step) times.push_back(t);
    times.push_back(t1);
  } else {
    times = linspace(t0, t1, o.samples);
  }
  return linearize(model, times);
}

LinearizeReport linearize(const NonlinearModel& model, const std::vector<double>& times) {
  if (times.empty()) throw InputError("linearize: times: at least one time is needed");
  for (std::size_t k = 0; k < times.size(); ++k)
    if (!std::isfinite(times[k]) || (k > 0 && !(times[k] > times[k - 1])))
      throw InputError("linearize: times must be finite and strictly increasing (at index " + std::to_string(k) + ")");
  const double t0 = times.front(), t1 = times.back();
  std::unique_ptr<System> lin = model.linearization();
  lin->require_defined_on(t0, t1, "the window");
  LinearizeReport r;
  r.header = report_header(*lin, t0, t1, "exact Jacobians");
  r.state_names = lin->info().state_names;
  r.input_names = lin->info().input_names;
  r.output_names = lin->info().output_names;
  r.times = times;
  auto& sys = static_cast<const LinearizedSystem&>(*lin);
  const int n = lin->states(), m = lin->inputs();
  for (double t : r.times) {
    Eigen::VectorXd x(n), u(std::max(m, 1));
    sys.nominal(t, x.data(), u.data());
    r.x.push_back(x);
    r.u.push_back(u.head(m));
    r.A.push_back(lin->A(t));
    r.B.push_back(lin->B(t));
    r.C.push_back(lin->C(t));
    r.D.push_back(lin->D(t));
    if (!r.A.back().allFinite() || !r.B.back().allFinite() || !r.C.back().allFinite() || !r.D.back().allFinite())
      throw NumericalError(lin->info().source + ": a Jacobian is not finite on the nominal at t = " + format_number(t));
  }
  return r;
}

std::vector<std::string> LinearizeReport::csv_header() const {
  std::vector<std::string> h{"t"};
  h.insert(h.end(), state_names.begin(), state_names.end());
  h.insert(h.end(), input_names.begin(), input_names.end());
  const int n = static_cast<int>(state_names.size()), m = static_cast<int>(input_names.size()),
            p = static_cast<int>(output_names.size());
  for (auto part : {matrix_column_names("A", n, n), matrix_column_names("B", n, m), matrix_column_names("C", p, n),
                    matrix_column_names("D", p, m)})
    h.insert(h.end(), part.begin(), part.end());
  return h;
}

void write_linearization_csv(const std::string& csv_path, const LinearizeReport& r) {
  CsvWriter csv(csv_path, r.csv_header());
  for (std::size_t k = 0; k < r.times.size(); ++k) {
    std::vector<double> row{r.times[k]};
    row.insert(row.end(), r.x[k].data(), r.x[k].data() + r.x[k].size());
    row.insert(row.end(), r.u[k].data(), r.u[k].data() + r.u[k].size());
    for (const Eigen::MatrixXd* M : {&r.A[k], &r.B[k], &r.C[k], &r.D[k]}) append_row_major(row, *M);
    csv.row(row);
  }
  csv.commit();
}

namespace {
std::string name_list(const std::vector<std::string>& v) {
  std::string s = "[";
  for (std::size_t i = 0; i < v.size(); ++i) s += (i ? ", \"" : "\"") + v[i] + "\"";
  return s + "]";
}
}  // namespace

std::string tabulated_model_text(const LinearizeReport& r, const std::string& csv_path, const std::string& model_dir) {
  std::string file = csv_path;
  std::error_code ec;
  const std::filesystem::path rel = std::filesystem::relative(std::filesystem::absolute(csv_path, ec),
                                                              std::filesystem::absolute(model_dir.empty() ? "." : model_dir, ec), ec);
  if (!ec && !rel.empty()) file = rel.generic_string();
  std::ostringstream s;
  s.precision(17);
  s << "# The linearization of " << r.header.source << " about its nominal, tabulated on " << r.times.size()
    << " times (written by ordex-linearize; linear between the samples).\n";
  s << "[system]\ntitle = \"Tabulated linearization of " << r.header.source << "\"\n";
  s << "states = " << name_list(r.state_names) << "\n";
  if (!r.input_names.empty()) s << "inputs = " << name_list(r.input_names) << "\n";
  if (!r.output_names.empty()) s << "outputs = " << name_list(r.output_names) << "\n";
  s << "\n[window]\nfrom = " << r.times.front() << "\nto = " << r.times.back() << "\n";
  s << "\n[table]\nfile = \"" << file << "\"\ninterpolation = \"linear\"\n";
  s << "\n[matrices]\nA = { table = \"A\" }\n";
  if (!r.input_names.empty()) s << "B = { table = \"B\" }\n";
  if (!r.output_names.empty()) s << "C = { table = \"C\" }\n";
  if (!r.input_names.empty() && !r.output_names.empty()) s << "D = { table = \"D\" }\n";
  return s.str();
}

Json LinearizeReport::to_json() const {
  Json j = header.to_json();
  j["samples"] = times.size();
  j["times"] = vector_to_json(times);
  auto largest = [](const std::vector<Eigen::MatrixXd>& v) {
    double x = 0;
    for (const auto& M : v)
      if (M.size()) x = std::max(x, M.cwiseAbs().maxCoeff());
    return number_to_json(x);
  };
  j["largest_entry"] = {{"A", largest(A)}, {"B", largest(B)}, {"C", largest(C)}, {"D", largest(D)}};
  return j;
}

std::string LinearizeReport::brief() const {
  std::ostringstream s;
  s << "Linearization of " << header.source << " about its nominal (exact Jacobians) on " << times.size()
    << " times in [" << format_number(header.t0) << ", " << format_number(header.t1) << "]: "
    << state_names.size() << " states, " << input_names.size() << " inputs, " << output_names.size() << " outputs\n";
  return s.str();
}

}  // namespace ordex
