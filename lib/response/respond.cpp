#include "response/respond.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "response/direct_path.hpp"
#include "response/step_matrices.hpp"

namespace ordex {
namespace {

// One history's share of the work: its window and the knots (sample times of the input inside
// the window, output times and the window's ends), with which knots are output times.
struct RunPlan {
  const InputHistory* history = nullptr;
  double t0 = 0, t1 = 0;
  std::vector<double> knots;
  std::vector<std::size_t> output_knots;  // indices into knots, one per output time
};

RunPlan plan_run(const InputHistory& h, const RespondOptions& o) {
  RunPlan p;
  p.history = &h;
  p.t0 = o.window ? o.window->first : h.times.front();
  p.t1 = o.window ? o.window->second : h.times.back();
  if (p.t0 < h.times.front())
    throw InputError(h.where(0) + ": the window starts at t = " + format_number(p.t0) +
                     ", before the first sample (t = " + format_number(h.times.front()) + ")");
  if (p.t1 > h.times.back())
    throw InputError(h.where(h.samples() - 1) + ": the window ends at t = " + format_number(p.t1) +
                     ", after the last sample (t = " + format_number(h.times.back()) + ")");
  std::vector<double> outputs = o.sample_times;
  if (outputs.empty()) {
    outputs.push_back(p.t0);
    for (double t : h.times)
      if (t > p.t0 && t < p.t1) outputs.push_back(t);
    outputs.push_back(p.t1);
  }
  p.knots = outputs;
  p.knots.push_back(p.t0);
  p.knots.push_back(p.t1);
  for (double t : h.times)
    if (t > p.t0 && t < p.t1) p.knots.push_back(t);
  std::sort(p.knots.begin(), p.knots.end());
  p.knots.erase(std::unique(p.knots.begin(), p.knots.end()), p.knots.end());
  for (double t : outputs)
    p.output_knots.push_back(
        static_cast<std::size_t>(std::lower_bound(p.knots.begin(), p.knots.end(), t) - p.knots.begin()));
  return p;
}

// y = C x + D u at the output times of RUN, from its states. With CONSTANT the matrices of t0
// serve every time.
void fill_outputs(const System& sys, const InputHistory& h, Hold hold, bool constant, RunResult& r) {
  const int n = sys.states(), m = sys.inputs(), p = sys.outputs();
  const Eigen::Index N = static_cast<Eigen::Index>(r.times.size());
  r.outputs.resize(N, p);
  Eigen::MatrixXd C(p, n), D(p, m);
  Eigen::VectorXd u(m);
  auto eval = [&](double t) {
    sys.C(t, C);
    if (m > 0) sys.D(t, D);
  };
  if (p > 0) {
    if (constant) eval(r.t0);
    for (Eigen::Index k = 0; k < N; ++k) {
      const double t = r.times[static_cast<std::size_t>(k)];
      if (!constant) eval(t);
      r.outputs.row(k).noalias() = r.states.row(k) * C.transpose();
      if (m > 0) {
        input_at(h, hold, t, u);
        r.outputs.row(k).noalias() += u.transpose() * D.transpose();
      }
    }
  }
  r.y_final.setZero(p);
  if (p > 0) {
    eval(r.t1);
    r.y_final = C * r.x_final;
    if (m > 0) {
      input_at(h, hold, r.t1, u);
      r.y_final += D * u;
    }
  }
}

RunResult result_from_states(const RunPlan& plan, const Eigen::MatrixXd& X) {
  RunResult r;
  r.source = plan.history->source;
  r.t0 = plan.t0;
  r.t1 = plan.t1;
  r.states.resize(static_cast<Eigen::Index>(plan.output_knots.size()), X.cols());
  for (std::size_t i = 0; i < plan.output_knots.size(); ++i) {
    r.times.push_back(plan.knots[plan.output_knots[i]]);
    r.states.row(static_cast<Eigen::Index>(i)) = X.row(static_cast<Eigen::Index>(plan.output_knots[i]));
  }
  r.x_final = X.row(X.rows() - 1).transpose();
  return r;
}

}  // namespace

std::string response_path_name(ResponsePath p) { return p == ResponsePath::Exact ? "exact" : "direct"; }

ResponsePath parse_response_path(const std::string& name) {
  if (name == "exact") return ResponsePath::Exact;
  if (name == "direct") return ResponsePath::Direct;
  throw InputError("--path: unknown path '" + name + "' (choose exact or direct)");
}

void RespondOptions::validate(const System& sys) const {
  propagation.validate();
  if (path == ResponsePath::Direct &&
      (propagation.method == Method::Magnus4 || propagation.method == Method::Magnus6))
    throw InputError("--method: " + method_name(propagation.method) +
                     " is an engine method of the exact path; the direct path takes auto, adams or bdf");
  if (x0.size() != 0 && x0.size() != sys.states())
    throw InputError("--x0: " + std::to_string(x0.size()) + " entries, the model has " +
                     std::to_string(sys.states()) + " states");
  if (x0.size() != 0 && !x0.allFinite()) throw InputError("--x0: entries must be finite");
  if (window) {
    if (!std::isfinite(window->first) || !std::isfinite(window->second))
      throw InputError("--from/--to: the window must be finite");
    if (!(window->first < window->second))
      throw InputError("--from/--to: the window must run forward (from " + format_number(window->first) +
                       " to " + format_number(window->second) + ")");
  }
  for (std::size_t k = 0; k < sample_times.size(); ++k) {
    if (!std::isfinite(sample_times[k])) throw InputError("--samples: output times must be finite");
    if (k > 0 && !(sample_times[k] > sample_times[k - 1]))
      throw InputError("--samples: output times must be strictly increasing");
  }
  if (!sample_times.empty() && window &&
      (sample_times.front() < window->first || sample_times.back() > window->second))
    throw InputError("--samples: output times must lie inside the window");
  if (!sample_times.empty() && !window)
    throw InputError("--samples: output times need an explicit window");
}

InputHistory free_response_history(double t0, double t1) {
  return make_input_history({t0, t1}, Eigen::MatrixXd(2, 0), "");
}

RespondReport respond(const System& sys, const std::vector<InputHistory>& histories,
                      const RespondOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  o.validate(sys);
  const int n = sys.states(), m = sys.inputs();
  RespondReport rep;
  rep.hold = o.hold;
  rep.path = o.path;
  if (histories.empty()) throw InputError("no input history to respond to");
  std::vector<RunPlan> plans;
  for (const InputHistory& h : histories) {
    if (h.inputs() != m)
      throw InputError(h.source + ": " + std::to_string(h.inputs()) + " input columns, the model has " +
                       std::to_string(m) + " inputs");
    plans.push_back(plan_run(h, o));
  }
  const Eigen::VectorXd x0 = o.x0.size() ? o.x0 : Eigen::VectorXd::Zero(n);
  rep.runs.resize(plans.size());
  // Histories on the same knots share one set of step matrices.
  std::vector<std::vector<std::size_t>> groups;
  for (std::size_t i = 0; i < plans.size(); ++i) {
    bool placed = false;
    for (auto& g : groups)
      if (plans[g.front()].knots == plans[i].knots) { g.push_back(i); placed = true; break; }
    if (!placed) groups.push_back({i});
  }
  rep.grids = groups.size();
  std::size_t total = 0, done = 0;
  for (const RunPlan& p : plans) total += p.knots.size() - 1;
  auto report_progress = [&](std::size_t intervals) {
    done += intervals;
    if (o.progress) o.progress(static_cast<double>(done) / static_cast<double>(std::max<std::size_t>(total, 1)));
  };

  if (o.path == ResponsePath::Direct) {
    OdeOptions oo;
    oo.scheme = o.direct_scheme;
    if (o.propagation.method == Method::Bdf) oo.scheme = OdeScheme::Bdf;
    if (o.propagation.method == Method::Adams) oo.scheme = OdeScheme::Adams;
    oo.rtol = o.propagation.rtol;
    oo.atol = o.propagation.atol;
    oo.max_step = o.propagation.max_step;
    oo.max_steps = o.propagation.max_steps;
    rep.method = oo.scheme == OdeScheme::Adams ? Method::Adams : Method::Bdf;
    const bool constant = o.reuse_time_invariant && looks_time_invariant(sys, plans[0].t0, plans[0].t1, plans[0].knots);
    for (std::size_t i = 0; i < plans.size(); ++i) {
      const RunPlan& p = plans[i];
      Eigen::MatrixXd X = direct_states(sys, *p.history, o.hold, p.knots, x0, oo, rep.direct);
      rep.runs[i] = result_from_states(p, X);
      fill_outputs(sys, *p.history, o.hold, constant && plans[i].knots == plans[0].knots, rep.runs[i]);
      report_progress(p.knots.size() - 1);
    }
  } else {
    StepMatrixBuilder builder(sys, o.hold, o.propagation, o.reuse_time_invariant);
    for (const auto& g : groups) {
      const std::vector<double>& knots = plans[g.front()].knots;
      const std::size_t K = knots.size();
      // States of every history of the group at every knot, advanced together.
      std::vector<Eigen::MatrixXd> X(g.size(), Eigen::MatrixXd(static_cast<Eigen::Index>(K), n));
      std::vector<std::size_t> interval(g.size(), 0);  // each history's sample interval
      Eigen::VectorXd x(n), ua(m), ub(m);
      for (auto& Xr : X) Xr.row(0) = x0.transpose();
      builder.for_each_step(knots, [&](std::size_t k, const StepMatrices& st) {
        const double a = knots[k], b = knots[k + 1];
        for (std::size_t r = 0; r < g.size(); ++r) {
          const InputHistory& h = *plans[g[r]].history;
          std::size_t& j = interval[r];
          while (j + 2 < h.times.size() && h.times[j + 1] <= a) ++j;
          x.noalias() = st.phi * X[r].row(static_cast<Eigen::Index>(k)).transpose();
          if (m > 0) {
            input_on_interval(h, o.hold, j, a, ua);
            x.noalias() += st.gamma0 * ua;
            if (o.hold == Hold::Linear) {
              input_on_interval(h, o.hold, j, b, ub);
              x.noalias() += st.gamma1 * ub;
            }
          }
          if (!x.allFinite())
            throw NumericalError(h.source + ": the state is not finite at t = " + format_number(b));
          X[r].row(static_cast<Eigen::Index>(k + 1)) = x.transpose();
        }
        if ((k & 1023) == 1023) report_progress(1024 * g.size());
      });
      done += ((K - 1) % 1024) * g.size();
      for (std::size_t r = 0; r < g.size(); ++r) {
        const RunPlan& p = plans[g[r]];
        rep.runs[g[r]] = result_from_states(p, X[r]);
        fill_outputs(sys, *p.history, o.hold, builder.time_invariant(), rep.runs[g[r]]);
      }
      rep.time_invariant = rep.time_invariant || builder.time_invariant();
    }
    if (o.progress) o.progress(1.0);
    rep.method = builder.method();
    rep.propagation = builder.stats();
    rep.computed_steps = builder.computed_steps();
    rep.reused_steps = builder.reused_steps();
  }
  rep.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return rep;
}

Json run_summary_json(const RunResult& run) {
  Json j;
  j["input"] = run.source;
  j["t0"] = run.t0;
  j["t1"] = run.t1;
  j["samples"] = run.times.size();
  j["x_final"] = vector_to_json(run.x_final);
  j["y_final"] = vector_to_json(run.y_final);
  return j;
}

Json respond_report_json(const RespondReport& rep, const System& sys) {
  Json j;
  j["app"] = "ordex-respond";
  j["hold"] = hold_name(rep.hold);
  j["path"] = response_path_name(rep.path);
  j["method"] = method_name(rep.method);
  j["states"] = sys.info().state_names;
  j["inputs"] = sys.info().input_names;
  j["outputs"] = sys.info().output_names;
  if (rep.runs.size() == 1) {
    const Json one = run_summary_json(rep.runs[0]);
    for (auto it = one.begin(); it != one.end(); ++it) j[it.key()] = it.value();
  }
  Json runs = Json::array();
  for (const RunResult& r : rep.runs) runs.push_back(run_summary_json(r));
  j["runs"] = runs;
  j["grids"] = rep.grids;
  if (rep.path == ResponsePath::Exact) {
    j["steps"] = rep.propagation.steps;
    j["rejected_steps"] = rep.propagation.rejected_steps;
    j["matrix_evaluations"] = rep.propagation.evaluations;
    j["error_estimate"] = number_to_json(rep.propagation.error_estimate);
    j["interval_steps_computed"] = rep.computed_steps;
    j["interval_steps_reused"] = rep.reused_steps;
    j["time_invariant"] = rep.time_invariant;
  } else {
    j["steps"] = rep.direct.steps;
    j["rhs_evaluations"] = rep.direct.rhs_evaluations;
    j["error_test_failures"] = rep.direct.error_test_failures;
  }
  j["seconds"] = rep.seconds;
  return j;
}

void write_run_csv(const std::string& path, const System& sys, const RunResult& run) {
  std::vector<std::string> header{"t"};
  for (const auto& s : sys.info().state_names) header.push_back(s);
  for (const auto& s : sys.info().output_names) header.push_back(s);
  CsvWriter w(path, header);
  Eigen::VectorXd row(run.states.cols() + run.outputs.cols());
  for (Eigen::Index k = 0; k < run.states.rows(); ++k) {
    row << run.states.row(k).transpose(), run.outputs.row(k).transpose();
    w.row(run.times[static_cast<std::size_t>(k)], row);
  }
  w.commit();
}

std::string respond_report_text(const RespondReport& rep, const System& sys) {
  std::ostringstream s;
  s.precision(6);
  s << "forced response: " << rep.runs.size() << (rep.runs.size() == 1 ? " run" : " runs") << ", hold "
    << hold_name(rep.hold) << ", " << response_path_name(rep.path) << " path (" << method_name(rep.method)
    << ")";
  if (rep.path == ResponsePath::Exact)
    s << ", " << rep.computed_steps << " interval steps integrated" << (rep.reused_steps ? ", " + std::to_string(rep.reused_steps) + " reused (time-invariant)" : "")
      << " on " << rep.grids << (rep.grids == 1 ? " grid" : " grids");
  s << ", " << rep.seconds << " s\n";
  auto vec = [&](const Eigen::VectorXd& v, const std::vector<std::string>& names) {
    std::ostringstream o;
    o.precision(6);
    for (Eigen::Index i = 0; i < v.size(); ++i) o << (i ? "  " : "") << names[static_cast<std::size_t>(i)] << "=" << v(i);
    return o.str();
  };
  for (std::size_t i = 0; i < rep.runs.size(); ++i) {
    const RunResult& r = rep.runs[i];
    s << "run " << i + 1 << (r.source.empty() ? " (free response)" : ": " + r.source) << "  t = " << r.t0
      << " .. " << r.t1 << ", " << r.times.size() << " samples\n";
    s << "  x(t1): " << vec(r.x_final, sys.info().state_names) << "\n";
    if (r.y_final.size()) s << "  y(t1): " << vec(r.y_final, sys.info().output_names) << "\n";
  }
  return s.str();
}

}  // namespace ordex
