#include "response/respond.hpp"

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <iterator>
#include <sstream>

#include "io/csv.hpp"
#include "io/errors.hpp"
#include "propagation/stats_json.hpp"
#include "io/output_file.hpp"
#include "model/time_grid.hpp"
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

// WINDOW: the resolved window, or none for the history's own span. OUTPUT_TIMES: explicit output
// times, or empty for the history's sample times.
RunPlan plan_run(const InputHistory& h, const std::optional<std::pair<double, double>>& window,
                 const std::vector<double>& output_times) {
  RunPlan p;
  p.history = &h;
  p.t0 = window ? window->first : h.times.front();
  p.t1 = window ? window->second : h.times.back();
  if (p.t0 < h.times.front())
    throw InputError(h.where(0) + ": the window starts at t = " + format_number(p.t0) +
                     ", before the first sample (t = " + format_number(h.times.front()) + ")");
  if (p.t1 > h.times.back())
    throw InputError(h.where(h.samples() - 1) + ": the window ends at t = " + format_number(p.t1) +
                     ", after the last sample (t = " + format_number(h.times.back()) + ")");
  std::vector<double> outputs = output_times;
  if (outputs.empty()) {
    outputs.push_back(p.t0);
    for (double t : h.times)
      if (t > p.t0 && t < p.t1) outputs.push_back(t);
    outputs.push_back(p.t1);
  }
  // Both lists are sorted: a merge (linear time) instead of a sort.
  std::vector<double> inner{p.t0};
  for (double t : h.times)
    if (t > p.t0 && t < p.t1) inner.push_back(t);
  inner.push_back(p.t1);
  p.knots.reserve(inner.size() + outputs.size());
  std::merge(inner.begin(), inner.end(), outputs.begin(), outputs.end(), std::back_inserter(p.knots));
  p.knots.erase(std::unique(p.knots.begin(), p.knots.end()), p.knots.end());
  for (double t : outputs)
    p.output_knots.push_back(
        static_cast<std::size_t>(std::lower_bound(p.knots.begin(), p.knots.end(), t) - p.knots.begin()));
  return p;
}

// y = C x + D u of the runs of one grid at one time: C(t) and D(t) are evaluated once per time
// for all of them, and with CONSTANT (the model does not depend on t) once for the grid.
class OutputEquation {
 public:
  OutputEquation(const System& sys, Hold hold, bool constant)
      : sys_(sys), hold_(hold), constant_(constant), C_(sys.outputs(), sys.states()),
        D_(sys.outputs(), sys.inputs()), u_(sys.inputs()) {}

  /// Y (p x R) = C(t) X + D(t) U(t), column r of X (n x R) the state of the run of history HS[r].
  void at(double t, const std::vector<const InputHistory*>& hs, const Eigen::MatrixXd& X, Eigen::MatrixXd& Y) {
    const int m = sys_.inputs(), p = sys_.outputs();
    Y.resize(p, X.cols());
    if (p == 0) return;
    if (!constant_ || !evaluated_) {
      sys_.C(t, C_);
      if (m > 0) sys_.D(t, D_);
      evaluated_ = true;
    }
    Y.noalias() = C_ * X;
    if (m == 0) return;
    for (Eigen::Index r = 0; r < X.cols(); ++r) {
      input_at(*hs[static_cast<std::size_t>(r)], hold_, t, u_);
      Y.col(r).noalias() += D_ * u_;
    }
  }

 private:
  const System& sys_;
  Hold hold_;
  bool constant_, evaluated_ = false;
  Eigen::MatrixXd C_, D_;
  Eigen::VectorXd u_;
};

// Where the samples of the runs go: into the report's runs, or to the sink as they come.
class SampleOutlet {
 public:
  SampleOutlet(const ResponseSink& sink, std::vector<RunResult>& runs) : sink_(sink), runs_(runs) {}

  /// Run RUN (of PLAN) starts: its window and, without a sink, room for its samples.
  void begin(std::size_t run, const RunPlan& plan, Eigen::Index n, Eigen::Index p) {
    RunResult& r = runs_[run];
    r.source = plan.history->source;
    r.t0 = plan.t0;
    r.t1 = plan.t1;
    r.samples = plan.output_knots.size();
    if (sink_) return;
    r.times.reserve(r.samples);
    r.states.resize(static_cast<Eigen::Index>(r.samples), n);
    r.outputs.resize(static_cast<Eigen::Index>(r.samples), p);
  }
  /// The K-th sample of run RUN: time T, state X, output Y.
  void put(std::size_t run, std::size_t k, double t, const Eigen::Ref<const Eigen::VectorXd>& x,
           const Eigen::Ref<const Eigen::VectorXd>& y) {
    RunResult& r = runs_[run];
    if (sink_) {
      sample_.run = run;
      sample_.k = k;
      sample_.count = r.samples;
      sample_.t = t;
      sample_.x = x;
      sample_.y = y;
      sink_(sample_);
      return;
    }
    r.times.push_back(t);
    r.states.row(static_cast<Eigen::Index>(k)) = x.transpose();
    r.outputs.row(static_cast<Eigen::Index>(k)) = y.transpose();
  }
  /// The run ends in state X at t1, with output Y.
  void end(std::size_t run, const Eigen::Ref<const Eigen::VectorXd>& x, const Eigen::Ref<const Eigen::VectorXd>& y) {
    runs_[run].x_final = x;
    runs_[run].y_final = y;
  }

 private:
  const ResponseSink& sink_;
  std::vector<RunResult>& runs_;
  ResponseSample sample_;  // reused: no allocation per sample
};

}  // namespace

std::string response_path_name(ResponsePath p) { return p == ResponsePath::Exact ? "exact" : "direct"; }

ResponsePath parse_response_path(const std::string& name) {
  if (name == "exact") return ResponsePath::Exact;
  if (name == "direct") return ResponsePath::Direct;
  throw InputError("RespondOptions::path: unknown path '" + name + "' (choose exact or direct)");
}

void RespondOptions::validate(const System& sys) const {
  propagation.validate();
  if (path == ResponsePath::Direct &&
      (propagation.method == Method::Magnus4 || propagation.method == Method::Magnus6 ||
       propagation.method == Method::Rk8))
    throw InputError("PropagationOptions::method: " + method_name(propagation.method) +
                     " is an engine method of the exact path; the direct path takes auto, adams or bdf");
  if (x0.size() != 0 && x0.size() != sys.states())
    throw InputError("RespondOptions::x0: " + std::to_string(x0.size()) + " entries, the model has " +
                     std::to_string(sys.states()) + " states");
  if (x0.size() != 0 && !x0.allFinite()) throw InputError("RespondOptions::x0: entries must be finite");
  if ((t0 && !std::isfinite(*t0)) || (t1 && !std::isfinite(*t1)))
    throw InputError("RespondOptions::t0/t1: the window must be finite");
  if (t0 && t1 && !(*t0 < *t1))
    throw InputError("RespondOptions::t0/t1: the window must run forward (from " + format_number(*t0) + " to " +
                     format_number(*t1) + ")");
  if (samples != 0 && (samples < 2 || samples > 10000000))
    throw InputError("RespondOptions::samples = " + std::to_string(samples) + " is outside [2, 10000000] (or 0)");
  for (std::size_t k = 0; k < sample_times.size(); ++k) {
    if (!std::isfinite(sample_times[k])) throw InputError("RespondOptions::sample_times: times must be finite");
    if (k > 0 && !(sample_times[k] > sample_times[k - 1]))
      throw InputError("RespondOptions::sample_times: times must be strictly increasing");
  }
  if (!sample_times.empty() && (!t0 || !t1))
    throw InputError("RespondOptions::sample_times: explicit output times need the window (t0 and t1)");
  if (!sample_times.empty() && (sample_times.front() < *t0 || sample_times.back() > *t1))
    throw InputError("RespondOptions::sample_times: output times must lie inside the window");
}

InputHistory free_response_history(double t0, double t1) {
  return make_input_history({t0, t1}, Eigen::MatrixXd(2, 0), "");
}

RespondReport respond(const System& sys, const std::vector<InputHistory>& histories,
                      const RespondOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  o.validate(sys);
  const int n = sys.states(), m = sys.inputs();
  const SystemInfo& info = sys.info();
  RespondReport rep;
  rep.states = info.state_names;
  rep.inputs = info.input_names;
  rep.outputs = info.output_names;
  rep.hold = o.hold;
  rep.path = o.path;
  for (const InputHistory& h : histories) {
    if (h.inputs() != m && m == 0)
      throw InputError(h.source + ": the model has no inputs (give no history for its free response)");
    if (h.inputs() != m)
      throw InputError(h.source + ": " + std::to_string(h.inputs()) + " input columns, the model has " +
                       std::to_string(m) + " inputs");
  }
  // The window: the options, else the model's declared [window], else the histories' span.
  std::optional<double> t0 = o.t0, t1 = o.t1;
  if (info.window && !info.window_from_tables) {
    if (!t0) t0 = info.window->first;
    if (!t1) t1 = info.window->second;
  }
  std::vector<InputHistory> free_run;
  if (histories.empty()) {
    if (m > 0) throw InputError("respond: no input history given, and the model has " + std::to_string(m) + " inputs");
    if (!t0 || !t1)
      throw InputError("RespondOptions::t0/t1: " + info.source +
                       " has no [window]: a free response needs the window");
    free_run.push_back(free_response_history(*t0, *t1));
  }
  const std::vector<InputHistory>& hs = histories.empty() ? free_run : histories;
  std::optional<std::pair<double, double>> window;
  if (t0 || t1 || o.samples || histories.empty()) {
    double lo = hs[0].times.front(), hi = hs[0].times.back();
    for (const InputHistory& h : hs) {
      lo = std::max(lo, h.times.front());
      hi = std::min(hi, h.times.back());
    }
    window = std::make_pair(t0.value_or(lo), t1.value_or(hi));
    if (!(window->first < window->second))
      throw InputError("RespondOptions::t0/t1: the window [" + format_number(window->first) + ", " +
                       format_number(window->second) + "] is empty or backward");
  }
  std::vector<double> output_times = o.sample_times;
  if (output_times.empty() && window && (o.samples || histories.empty()))
    output_times = linspace(window->first, window->second, o.samples ? o.samples : 101);
  std::vector<RunPlan> plans;
  for (const InputHistory& h : hs) {
    plans.push_back(plan_run(h, window, output_times));
    // A window the model cannot evaluate (a table that does not extrapolate) fails before any work.
    sys.require_defined_on(plans.back().t0, plans.back().t1,
                           window ? std::string("RespondOptions::t0/t1") : h.source + ": the input's time span");
    if (!h.source.empty()) {
      const std::string warning = window_fit_warning(h, plans.back().t0, plans.back().t1);
      if (!warning.empty()) rep.warnings.push_back(warning);
    }
  }
  const Eigen::VectorXd x0 = o.x0.size() ? o.x0 : Eigen::VectorXd::Zero(n);
  rep.runs.resize(plans.size());
  SampleOutlet outlet(o.sink, rep.runs);
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
    if (o.progress)
      o.progress(std::min(1.0, static_cast<double>(done) / static_cast<double>(std::max<std::size_t>(total, 1))));
  };

  if (o.path == ResponsePath::Direct) {
    const OdeOptions oo = ode_options(o.propagation, o.direct_scheme);
    rep.method = method_of(oo.scheme);
    // One run at a time: its states on every knot are held for the accuracy check of
    // direct_states, its samples then go out and the states are dropped.
    Eigen::MatrixXd x(n, 1), y;
    for (std::size_t i = 0; i < plans.size(); ++i) {
      const RunPlan& p = plans[i];
      const Eigen::MatrixXd X = direct_states(sys, *p.history, o.hold, p.knots, x0, oo, rep.direct, &rep.direct_accuracy);
      OutputEquation out(sys, o.hold, known_time_invariant(sys, p.t0, p.t1));
      const std::vector<const InputHistory*> h{p.history};
      outlet.begin(i, p, n, sys.outputs());
      for (std::size_t q = 0; q < p.output_knots.size(); ++q) {
        const std::size_t k = p.output_knots[q];
        x = X.row(static_cast<Eigen::Index>(k)).transpose();
        out.at(p.knots[k], h, x, y);
        outlet.put(i, q, p.knots[k], x.col(0), y.col(0));
      }
      x = X.row(X.rows() - 1).transpose();
      out.at(p.t1, h, x, y);
      outlet.end(i, x.col(0), y.col(0));
      report_progress(p.knots.size() - 1);
    }
    if (!rep.direct_accuracy.target_met)
      rep.warnings.push_back("direct path: estimated error " + format_number(rep.direct_accuracy.error_estimate) +
                             " is " + format_number(rep.direct_accuracy.error_ratio) +
                             " times the requested tolerance (PropagationOptions::rtol = " +
                             format_number(o.propagation.rtol) + ") even at rtol 1e-14");
  } else {
    StepMatrixBuilder builder(sys, o.hold, o.propagation, o.reuse_time_invariant);
    for (const auto& g : groups) {
      const std::vector<double>& knots = plans[g.front()].knots;
      const std::size_t K = knots.size();
      // The states of every history of the group, advanced together:
      // the R histories' states are the columns of one n x R matrix, so a step is three
      // matrix products instead of 3R matrix-vector products. Only the current states are
      // held: each output time's samples go out as the step reaches it.
      const Eigen::Index R = static_cast<Eigen::Index>(g.size());
      std::vector<std::size_t> interval(g.size(), 0);  // each history's sample interval
      Eigen::MatrixXd Xa = x0.replicate(1, R), Xb(n, R), Ua(m, R), Ub(m, R), Y;
      const RunPlan& plan = plans[g.front()];  // the group's knots and output times
      std::vector<const InputHistory*> hs;
      for (std::size_t i : g) {
        hs.push_back(plans[i].history);
        outlet.begin(i, plans[i], n, sys.outputs());
      }
      OutputEquation out(sys, o.hold, known_time_invariant(sys, plan.t0, plan.t1));
      std::size_t q = 0;  // the next output time
      auto put_outputs = [&](std::size_t k, const Eigen::MatrixXd& X) {
        for (; q < plan.output_knots.size() && plan.output_knots[q] == k; ++q) {
          out.at(knots[k], hs, X, Y);
          for (Eigen::Index r = 0; r < R; ++r) outlet.put(g[static_cast<std::size_t>(r)], q, knots[k], X.col(r), Y.col(r));
        }
      };
      put_outputs(0, Xa);
      builder.for_each_step(knots, [&](std::size_t k, const StepMatrices& st) {
        const double a = knots[k], b = knots[k + 1];
        for (Eigen::Index r = 0; r < R; ++r) {
          const InputHistory& h = *hs[static_cast<std::size_t>(r)];
          std::size_t& j = interval[static_cast<std::size_t>(r)];
          while (j + 2 < h.times.size() && h.times[j + 1] <= a) ++j;
          if (m > 0) {
            input_on_interval(h, o.hold, j, a, Ua.col(r));
            if (o.hold == Hold::Linear) input_on_interval(h, o.hold, j, b, Ub.col(r));
          }
        }
        Xb.noalias() = st.phi * Xa;
        if (m > 0) {
          Xb.noalias() += st.gamma0 * Ua;
          if (o.hold == Hold::Linear) Xb.noalias() += st.gamma1 * Ub;
        }
        if (!Xb.allFinite())
          throw NumericalError("the state is not finite at t = " + format_number(b) + " (" +
                               plan.history->source + (R > 1 ? " and others" : "") + ")");
        put_outputs(k + 1, Xb);
        Xa.swap(Xb);
        if ((k & 1023) == 1023) report_progress(1024 * g.size());
      });
      done += ((K - 1) % 1024) * g.size();
      out.at(plan.t1, hs, Xa, Y);  // Xa: the states at t1
      for (Eigen::Index r = 0; r < R; ++r) outlet.end(g[static_cast<std::size_t>(r)], Xa.col(r), Y.col(r));
      rep.time_invariant = rep.time_invariant || builder.time_invariant();
    }
    if (o.progress) o.progress(1.0);
    rep.method = builder.method();
    rep.propagation = builder.stats();
    rep.computed_steps = builder.computed_steps();
    rep.reused_steps = builder.reused_steps();
  }
  double t0_all = rep.runs.front().t0, t1_all = rep.runs.front().t1;
  for (const RunResult& r : rep.runs) {
    t0_all = std::min(t0_all, r.t0);
    t1_all = std::max(t1_all, r.t1);
  }
  rep.header = report_header(sys, t0_all, t1_all, method_name(rep.method));
  rep.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return rep;
}

namespace {

Json run_summary_json(const RunResult& run) {
  Json j;
  j["input"] = run.source;
  j["t0"] = run.t0;
  j["t1"] = run.t1;
  j["samples"] = run.samples;
  j["x_final"] = vector_to_json(run.x_final);
  j["y_final"] = vector_to_json(run.y_final);
  return j;
}

}  // namespace

Json RespondReport::to_json() const {
  Json j = header.to_json();
  j["hold"] = hold_name(hold);
  j["path"] = response_path_name(path);
  j["states"] = states;
  j["inputs"] = inputs;
  j["outputs"] = outputs;
  if (runs.size() == 1) {
    const Json one = run_summary_json(runs[0]);
    for (auto it = one.begin(); it != one.end(); ++it) j[it.key()] = it.value();
  }
  Json rs = Json::array();
  for (const RunResult& r : runs) rs.push_back(run_summary_json(r));
  j["runs"] = rs;
  j["grids"] = grids;
  if (path == ResponsePath::Exact) {
    add_propagation_stats(j, propagation);
    j["interval_steps_computed"] = computed_steps;
    j["interval_steps_reused"] = reused_steps;
    j["time_invariant"] = time_invariant;
  } else {
    j["steps"] = direct.steps;
    j["rhs_evaluations"] = direct.rhs_evaluations;
    j["error_test_failures"] = direct.error_test_failures;
    j["error_estimate"] = direct_accuracy.error_estimate;  // tolerance reduction (direct_path.hpp)
    j["tolerance_reached"] = direct_accuracy.target_met;
    j["accuracy_runs"] = direct_accuracy.runs;
  }
  if (!warnings.empty()) j["warnings"] = warnings;
  j["seconds"] = seconds;
  return j;
}

struct RunCsv::Impl {
  explicit Impl(const std::string& p) : path(p), out(p) {}
  std::string path;
  OutputFile out;
  std::string line;
  char buf[32];
  void put(double v) {
    // The shortest form that reads back to the same double (std::to_chars): full precision,
    // and several times faster than stream formatting on long runs.
    auto res = std::to_chars(buf, buf + sizeof buf, v);
    line.append(buf, res.ptr);
  }
};

RunCsv::RunCsv(const std::string& path, const std::vector<std::string>& states, const std::vector<std::string>& outputs)
    : impl_(std::make_unique<Impl>(path)) {
  std::string header = "t";
  for (const auto& s : states) header += "," + s;
  for (const auto& s : outputs) header += "," + s;
  header += "\n";
  impl_->out.stream() << header;
}

RunCsv::~RunCsv() = default;

void RunCsv::row(double t, const Eigen::Ref<const Eigen::VectorXd>& x, const Eigen::Ref<const Eigen::VectorXd>& y) {
  Impl& m = *impl_;
  m.line.clear();
  m.put(t);
  for (Eigen::Index j = 0; j < x.size(); ++j) m.line.push_back(','), m.put(x(j));
  for (Eigen::Index j = 0; j < y.size(); ++j) m.line.push_back(','), m.put(y(j));
  m.line.push_back('\n');
  m.out.stream().write(m.line.data(), static_cast<std::streamsize>(m.line.size()));
}

void RunCsv::commit() {
  if (!impl_->out.stream()) throw InputError(impl_->path + ": writing failed");
  impl_->out.commit();
}

void write_run_csv(const std::string& path, const RespondReport& report, const RunResult& run) {
  RunCsv csv(path, report.states, report.outputs);
  for (Eigen::Index k = 0; k < run.states.rows(); ++k)
    csv.row(run.times[static_cast<std::size_t>(k)], run.states.row(k).transpose(), run.outputs.row(k).transpose());
  csv.commit();
}

std::string RespondReport::brief() const {
  const RespondReport& rep = *this;
  std::ostringstream s;
  s.precision(6);
  s << "forced response: " << rep.runs.size() << (rep.runs.size() == 1 ? " run" : " runs") << ", hold "
    << hold_name(rep.hold) << ", " << response_path_name(rep.path) << " path (" << method_name(rep.method)
    << ")";
  if (rep.path == ResponsePath::Exact)
    s << ", " << rep.computed_steps << " interval steps integrated" << (rep.reused_steps ? ", " + std::to_string(rep.reused_steps) + " reused (time-invariant)" : "")
      << " on " << rep.grids << (rep.grids == 1 ? " grid" : " grids");
  s << ", " << rep.seconds << " s\n";
  // At most the first 8 entries: the files have the rest.
  auto vec = [&](const Eigen::VectorXd& v, const std::vector<std::string>& names) {
    std::ostringstream o;
    o.precision(6);
    const Eigen::Index shown = std::min<Eigen::Index>(v.size(), 8);
    for (Eigen::Index i = 0; i < shown; ++i) o << (i ? "  " : "") << names[static_cast<std::size_t>(i)] << "=" << v(i);
    if (shown < v.size()) o << "  ... (" << v.size() - shown << " more)";
    return o.str();
  };
  for (std::size_t i = 0; i < rep.runs.size(); ++i) {
    const RunResult& r = rep.runs[i];
    s << "run " << i + 1 << (r.source.empty() ? " (free response)" : ": " + r.source) << "  t = " << r.t0
      << " .. " << r.t1 << ", " << r.samples << " samples\n";
    s << "  x(t1): " << vec(r.x_final, states) << "\n";
    if (r.y_final.size()) s << "  y(t1): " << vec(r.y_final, outputs) << "\n";
  }
  return s.str();
}

}  // namespace ordex
