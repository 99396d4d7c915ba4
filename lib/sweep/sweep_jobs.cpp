#include "sweep/sweep_jobs.hpp"

#include <cmath>
#include <limits>

#include "io/errors.hpp"
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

}  // namespace

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
