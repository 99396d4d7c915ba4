#include "sweep/sweep_jobs.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "io/errors.hpp"
#include "model/expression_system.hpp"
#include "nonlinear/nominal.hpp"
#include "propagation/generator.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/propagator.hpp"
#include "propagation/propagate_report.hpp"

namespace ordex {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::vector<std::string> prefixed(const std::string& prefix, const std::vector<std::string>& names) {
  std::vector<std::string> out;
  for (const std::string& n : names) out.push_back(prefix + n);
  return out;
}

Json engine_json(const PropagationOptions& p) {
  Json j;
  j["method"] = method_name(p.method);
  j["rtol"] = p.rtol;
  j["atol"] = p.atol;
  return j;
}

class FloquetJob : public SweepJob {
 public:
  FloquetJob(double t0, double t1, PropagationOptions p) : t0_(t0), t1_(t1) {
    o_.propagation = std::move(p);
    o_.propagation.progress = {};
    o_.floquet = true;
    o_.liouville = false;
    o_.samples = 0;
    o_.validate();
  }
  std::string name() const override { return "floquet"; }
  double t0() const override { return t0_; }
  double t1() const override { return t1_; }
  std::vector<std::string> figure_names(const System&) const override { return {"max_abs_multiplier", "stable"}; }
  std::vector<double> figures(const System& sys) const override {
    const PropagateReport r = propagate(sys, t0_, t1_, o_);
    return {r.floquet->largest_modulus, r.floquet->stable ? 1.0 : 0.0};
  }
  Json settings() const override {
    Json j = engine_json(o_.propagation);
    j["period"] = t1_ - t0_;
    return j;
  }
  std::string method(const System& sys) const override {
    const Method m = o_.propagation.method;
    return method_name(m == Method::Auto ? resolve_auto_method() : m);
  }

 private:
  double t0_, t1_;
  PropagateOptions o_;
};

class GramianJob : public SweepJob {
 public:
  GramianJob(double t0, double t1, GramianJobOptions o) : t0_(t0), t1_(t1), o_(std::move(o)) {
    o_.gramian.threads = 1;
    o_.gramian.propagation.progress = {};
    o_.transfer.reset();
    o_.profile.reset();
    o_.validate();
  }
  std::string name() const override { return "gramian"; }
  double t0() const override { return t0_; }
  double t1() const override { return t1_; }
  std::vector<std::string> figure_names(const System& sys) const override {
    std::vector<std::string> n = {"rank", "lambda_min", "lambda_max", "condition"};
    for (const std::string& s : prefixed("weakest_", sys.info().state_names)) n.push_back(s);
    return n;
  }
  std::vector<double> figures(const System& sys) const override {
    const GramianReport r = gramian(sys, t0_, t1_, o_);
    const GramianSpectrum& s = r.spectrum;
    std::vector<double> f = {static_cast<double>(s.rank), s.eigenvalues.minCoeff(), s.eigenvalues.maxCoeff(), s.condition};
    for (Eigen::Index i = 0; i < s.weakest_direction.size(); ++i) f.push_back(s.weakest_direction(i));
    return f;
  }
  Json settings() const override {
    Json j = engine_json(o_.gramian.propagation);
    j["kind"] = kind_name(o_.gramian.kind);
    j["route"] = route_name(o_.gramian.route);
    j["rank_tol"] = o_.rank_tol;
    j["samples"] = o_.samples;
    return j;
  }

 private:
  double t0_, t1_;
  GramianJobOptions o_;
};

class RegulateJob : public SweepJob {
 public:
  RegulateJob(const System& sys, double t0, double t1, RegulatorOptions o) : t0_(t0), t1_(t1), o_(std::move(o)) {
    o_.riccati.propagation.progress = {};
    o_.validate();
    periodic_ = o_.check_closed_loop && sys.info().period.has_value();
  }
  std::string name() const override { return "regulate"; }
  double t0() const override { return t0_; }
  double t1() const override { return t1_; }
  std::vector<std::string> figure_names(const System&) const override {
    std::vector<std::string> n = {"p0_max_eigenvalue"};
    if (o_.x0) n.push_back("cost");
    if (o_.check_closed_loop) n.push_back("closed_loop_ok");
    if (periodic_) n.push_back("closed_loop_max_abs_multiplier");
    return n;
  }
  std::vector<double> figures(const System& sys) const override {
    const RegulatorReport r = regulate(sys, t0_, t1_, o_);
    std::vector<double> f = {r.P0_eigenvalues.size() ? r.P0_eigenvalues.maxCoeff() : kNaN};
    if (o_.x0) f.push_back(r.cost_predicted.value_or(kNaN));
    if (o_.check_closed_loop) f.push_back(r.closed_loop.status == ClosedLoopCheck::Status::Done ? 1.0 : 0.0);
    if (periodic_) f.push_back(r.closed_loop.floquet ? r.closed_loop.floquet->floquet.largest_modulus : kNaN);
    return f;
  }
  Json settings() const override {
    Json j = engine_json(o_.riccati.propagation);
    j["weights"] = o_.weights ? o_.weights->source : "defaults";
    j["closed_loop_check"] = o_.check_closed_loop;
    if (o_.x0) j["x0"] = vector_to_json(*o_.x0);
    return j;
  }

 private:
  double t0_, t1_;
  RegulatorOptions o_;
  bool periodic_ = false;
};

class RespondJob : public SweepJob {
 public:
  RespondJob(double t0, double t1, std::optional<InputHistory> h, RespondOptions o)
      : t0_(t0), t1_(t1), o_(std::move(o)) {
    if (h) histories_.push_back(std::move(*h));
    o_.t0 = t0;
    o_.t1 = t1;
    o_.progress = {};
    o_.samples = 2;  // only the final state is kept
  }
  std::string name() const override { return "respond"; }
  double t0() const override { return t0_; }
  double t1() const override { return t1_; }
  std::vector<std::string> figure_names(const System& sys) const override {
    return prefixed("final_", sys.info().state_names);
  }
  std::vector<double> figures(const System& sys) const override {
    const RespondReport r = respond(sys, histories_, o_);
    const Eigen::VectorXd& x = r.runs.at(0).x_final;
    return std::vector<double>(x.data(), x.data() + x.size());
  }
  Json settings() const override {
    Json j = engine_json(o_.propagation);
    j["hold"] = hold_name(o_.hold);
    j["input"] = histories_.empty() ? Json(nullptr) : Json(histories_[0].source);
    if (o_.x0.size()) j["x0"] = vector_to_json(o_.x0);
    return j;
  }

 private:
  double t0_, t1_;
  std::vector<InputHistory> histories_;
  RespondOptions o_;
};

class SimulateJob : public SweepJob {
 public:
  SimulateJob(std::shared_ptr<const NonlinearModel> model, std::vector<int> swept, SimulateOptions o, std::uint64_t seed)
      : model_(std::move(model)), swept_(std::move(swept)), o_(std::move(o)), seed_(seed) {
    o_.threads = 1;
    o_.keep_histories = false;
    const SystemInfo& info = model_->info();
    o_.validate(static_cast<int>(info.state_names.size()), static_cast<int>(info.input_names.size()));
    t0_ = o_.from.value_or(info.window->first);
    t1_ = o_.to.value_or(info.window->second);
  }
  std::string name() const override { return "simulate"; }
  double t0() const override { return t0_; }
  double t1() const override { return t1_; }
  std::vector<std::string> figure_names(const System&) const override {
    std::vector<std::string> n = {"runs_completed", "runs_failed"};
    for (const std::string& s : prefixed("final_mean_", model_->info().state_names)) n.push_back(s);
    for (const char* s : {"final_deviation_mean", "final_deviation_max", "peak_deviation_max", "peak_input_max", "cost_mean"})
      n.push_back(s);
    return n;
  }
  /// The batch on the model as loaded (its own parameter values).
  std::vector<double> figures(const System&) const override { return batch(*model_, seed_); }
  std::vector<double> point_figures(System&, const std::vector<double>& values, std::size_t k) const override {
    // The point's model: the definition with the point's values; the evaluators simulate makes
    // from it (and the linearization) start at them, and so does the nominal input.
    auto def = std::make_shared<PlantDefinition>(*model_->plant);
    for (std::size_t i = 0; i < swept_.size(); ++i) def->info.parameters[static_cast<std::size_t>(swept_[i])].second = values.at(i);
    NonlinearModel m = *model_;
    m.plant = def;
    if (m.nominal_integrated) {
      // The nominal is a solution of the plant: with other parameters it is another curve.
      PlantEvaluator plant(def);
      m.nominal = NominalStates::integrate(plant, m.nominal_x0, def->info.window->first, def->info.window->second,
                                           ode_options(o_.propagation, OdeScheme::Adams), def->info.breakpoints);
    }
    return batch(m, point_seed(seed_, k));
  }
  Json settings() const override {
    Json j = engine_json(o_.propagation);
    j["runs"] = o_.runs;
    j["seed"] = seed_;
    j["closed_loop"] = o_.gains != nullptr;
    j["samples"] = o_.samples;
    if (o_.dx0.size()) j["dx0"] = vector_to_json(o_.dx0);
    j["dispersions"] = !o_.dispersions.empty();
    return j;
  }

 private:
  std::vector<double> batch(const NonlinearModel& m, std::uint64_t seed) const {
    SimulateOptions o = o_;
    o.seed = seed;
    const SimulateReport r = simulate(m, o);
    const RunStatistics& s = r.statistics;
    if (s.completed == 0) throw NumericalError("every run failed; run 1: " + r.runs.at(0).failure);
    const Eigen::Index n = r.nominal_final.size();
    Eigen::VectorXd mean = Eigen::VectorXd::Zero(n);
    double dev_mean = 0, dev_max = 0;
    for (const RunSummary& run : r.runs) {
      if (!run.ok) continue;
      mean += run.x_final;
      const double d = run.dx_final.norm();
      dev_mean += d;
      dev_max = std::max(dev_max, d);
    }
    mean /= s.completed;
    dev_mean /= s.completed;
    std::vector<double> f = {static_cast<double>(s.completed), static_cast<double>(s.failed)};
    f.insert(f.end(), mean.data(), mean.data() + n);
    for (double v : {dev_mean, dev_max, s.peak_deviation_max, s.peak_input_max, s.cost_mean}) f.push_back(v);
    return f;
  }

  std::shared_ptr<const NonlinearModel> model_;
  std::vector<int> swept_;
  SimulateOptions o_;
  std::uint64_t seed_;
  double t0_ = 0, t1_ = 0;
};

}  // namespace

std::vector<double> SweepJob::point_figures(System& sys, const std::vector<double>& values, std::size_t) const {
  auto* model = dynamic_cast<ExpressionSystem*>(&sys);
  if (!model) throw std::logic_error("the " + name() + " job needs a system from make_sweep_system");
  model->set_parameters(values);
  return figures(sys);
}

std::string SweepJob::method(const System&) const { return settings().value("method", std::string("auto")); }

std::uint64_t point_seed(std::uint64_t seed, std::size_t k) {
  // splitmix64 of the seed, mixed with k and mixed again: nearby (seed, k) give unrelated seeds.
  auto mix = [](std::uint64_t z) {
    z += 0x9e3779b97f4a7c15ULL;
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
  };
  return mix(mix(seed) ^ static_cast<std::uint64_t>(k));
}

std::unique_ptr<SweepJob> make_simulate_job(std::shared_ptr<const NonlinearModel> model,
                                            const std::vector<std::string>& swept, SimulateOptions options,
                                            std::uint64_t seed) {
  const SystemInfo& info = model->info();
  std::vector<int> indices;
  for (const std::string& name : swept) {
    auto it = std::find_if(info.parameters.begin(), info.parameters.end(), [&](const auto& p) { return p.first == name; });
    if (it == info.parameters.end()) throw InputError(model->plant->path + ": the model has no parameter '" + name + "'");
    const auto& used = model->nominal_x0_parameters;
    if (std::find(used.begin(), used.end(), name) != used.end())
      throw InputError(model->plant->path + ": nominal.x0 uses parameter '" + name +
                       "', which the sweep varies: the nominal's initial state is computed once, at load; write "
                       "nominal.x0 without it (or give the deviation with --dx0) to sweep it");
    indices.push_back(static_cast<int>(it - info.parameters.begin()));
  }
  return std::make_unique<SimulateJob>(std::move(model), std::move(indices), std::move(options), seed);
}

std::unique_ptr<SweepJob> make_floquet_job(const System& sys, double t0, const PropagationOptions& propagation) {
  return std::make_unique<FloquetJob>(t0, floquet_window_end(sys, t0), propagation);
}

std::unique_ptr<SweepJob> make_gramian_job(double t0, double t1, GramianJobOptions options) {
  return std::make_unique<GramianJob>(t0, t1, std::move(options));
}

std::unique_ptr<SweepJob> make_regulate_job(const System& sys, double t0, double t1, RegulatorOptions options) {
  return std::make_unique<RegulateJob>(sys, t0, t1, std::move(options));
}

std::unique_ptr<SweepJob> make_respond_job(double t0, double t1, std::optional<InputHistory> history, RespondOptions options) {
  return std::make_unique<RespondJob>(t0, t1, std::move(history), std::move(options));
}

}  // namespace ordex
