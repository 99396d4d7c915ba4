#include "gramian/report.hpp"

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <sstream>

#include "gramian/gramian_sweep.hpp"
#include "io/errors.hpp"
#include "model/report_text.hpp"
#include "model/time_grid.hpp"

namespace ordex {

void GramianJobOptions::validate() const {
  gramian.validate();
  if (!(rank_tol > 0 && rank_tol < 1))
    throw InputError("GramianJobOptions::rank_tol = " + format_number(rank_tol) + " is outside (0, 1)");
  if (samples < 2 || samples > kMaxGramianSamples)
    throw InputError("GramianJobOptions::samples = " + std::to_string(samples) + " is outside [2, " +
                     std::to_string(kMaxGramianSamples) + "]");
}

namespace {

/// The part K of PARTS of one progress callback: fractions f of the part map to (K + f) / PARTS,
/// so the user's bar runs once from 0 to 1 over the whole job.
std::function<void(double)> part_progress(const std::function<void(double)>& user, int k, int parts) {
  if (!user) return {};
  return [user, k, parts](double f) { user((k + std::min(std::max(f, 0.0), 1.0)) / parts); };
}

/// W_r(t0, t_k) by the recurrence W <- S_k W S_k' + W_r(t_k, t_k+1), or W_c(t0, t_k) (the
/// sweep's running sum), handed to SINK at every grid time.
void deliver_running(const GramianSweep& sw, GramianKind kind, const GramianSink& sink) {
  const int n = sw.n();
  if (kind != GramianKind::Reachability) {
    for (std::size_t k = 0; k < sw.times.size(); ++k) sink(sw.times[k], sw.cum_ctrl[k]);
    return;
  }
  Eigen::MatrixXd w = Eigen::MatrixXd::Zero(n, n);
  sink(sw.times[0], w);
  for (std::size_t k = 0; k < sw.intervals(); ++k) {
    w = symmetrized(sw.step_phi[k] * w * sw.step_phi[k].transpose() + sw.step_reach[k]);
    sink(sw.times[k + 1], w);
  }
}

const ProfileWindow* weakest_window(const ProfileReport& p) {
  const ProfileWindow* best = nullptr;
  for (const auto& w : p.windows)
    if (!best || w.spectrum.lambda_min < best->spectrum.lambda_min) best = &w;
  return best;
}

}  // namespace

GramianReport gramian(const System& sys, double t0, double t1, const GramianJobOptions& options,
                      const GramianSink& running) {
  options.validate();
  const int n = sys.states();
  const GramianOptions& g = options.gramian;
  if (!std::isfinite(t0) || !std::isfinite(t1) || !(t1 > t0))
    throw InputError("Gramian window [" + format_number(t0) + ", " + format_number(t1) + "]: t1 must be after t0");
  g.scaling.validate(n);
  pair_for_kind(sys, g.kind);  // a model without B (C) fails here, naming its file
  std::optional<TransferOptions> topt = options.transfer;
  if (topt) {
    topt->rank_tol = options.rank_tol;
    topt->scaling = g.scaling;
    topt->validate(n);
    input_pair(sys);  // a transfer needs B whatever the kind
  }
  std::optional<ProfileOptions> popt = options.profile;
  if (popt) {
    popt->rank_tol = options.rank_tol;
    popt->scaling = g.scaling;
    popt->threads = g.threads;
    popt->validate(t1 - t0);
  }
  sys.require_defined_on(t0, t1, "window");

  // The parts of the job, for one progress bar: the Gramian (or its sweep), a separate sweep of
  // the input pair when the transfer cannot share it, and the profile's own sweep.
  const bool need_sweep = g.route == GramianRoute::Block || static_cast<bool>(running);
  const bool shared_transfer = need_sweep && g.kind != GramianKind::Observability;
  const int parts = 1 + (topt && !shared_transfer ? 1 : 0) + (popt ? 1 : 0);
  int part = 0;
  const std::function<void(double)> user = g.propagation.progress;
  PropagationOptions engine = g.propagation;

  GramianReport rep;
  rep.state_names = sys.info().state_names;
  rep.input_names = sys.info().input_names;
  const std::vector<double> times = linspace(t0, t1, options.samples);
  std::optional<GramianSweep> sweep;
  engine.progress = part_progress(user, part++, parts);
  if (need_sweep) sweep = sweep_gramians(sys, g.kind, times, engine, g.threads);
  if (g.route == GramianRoute::Block) {
    rep.result = gramian_from_sweep(*sweep, g.kind);
  } else {
    GramianOptions lyap = g;
    lyap.propagation = engine;
    rep.result = compute_gramian(sys, t0, t1, lyap);
  }
  if (!rep.result.gramian.allFinite())
    throw NumericalError("Gramian over [" + format_number(t0) + ", " + format_number(t1) + "] is not finite");
  rep.spectrum = rep.result.factor.L.size() ? analyze_factor(rep.result.factor, options.rank_tol, g.scaling)
                                             : analyze_gramian(rep.result.gramian, options.rank_tol, g.scaling);
  const std::string method = g.route == GramianRoute::Block
                                 ? method_name(rep.result.stats.method)
                                 : std::string("cvode-") + (rep.result.stats.method == Method::Bdf ? "bdf" : "adams");
  rep.header = report_header(sys, t0, t1, method);
  if (running) deliver_running(*sweep, g.kind, running);

  if (topt) {
    if (shared_transfer) {
      rep.transfer = design_transfer(sys, *sweep, *topt);
    } else {
      engine.progress = part_progress(user, part++, parts);
      const GramianSweep input_sweep = sweep_gramians(sys, GramianKind::Controllability, times, engine, g.threads);
      rep.transfer = design_transfer(sys, input_sweep, *topt);
    }
  }
  if (popt) {
    engine.progress = part_progress(user, part++, parts);
    rep.profile_options = *popt;
    rep.profile = sliding_profile(sys, g.kind, t0, t1, *popt, engine);
  }
  if (user) user(1.0);
  return rep;
}

namespace {

Json window_json(const ProfileWindow& w) {
  Json j;
  j["t_start"] = w.t_start;
  j["t_end"] = w.t_end;
  j["lambda_min"] = w.spectrum.lambda_min;
  j["lambda_max"] = w.spectrum.lambda_max;
  j["condition"] = number_to_json(w.spectrum.condition);
  j["rank"] = w.spectrum.rank;
  j["rank_status"] = rank_status_name(w.spectrum.status);
  return j;
}

Json verdict_json(const RankVerdict& v) {
  Json j;
  j["status"] = rank_status_name(v.status);
  j["rank_low"] = v.rank_low;
  j["rank_high"] = v.rank_high;
  j["scaling"] = v.scaling;
  j["scaled_eigenvalues"] = vector_to_json(v.scaled_eigenvalues);
  j["threshold"] = number_to_json(v.threshold);
  j["error_floor"] = number_to_json(v.error_floor);
  j["reason"] = v.reason;
  j["remedy"] = v.remedy;
  return j;
}

}  // namespace

Json GramianReport::to_json() const {
  Json j = header.to_json();
  j["kind"] = kind_name(result.kind);
  j["states"] = state_names;
  j["gramian"] = ordex::to_json(result.gramian);
  j["eigenvalues"] = vector_to_json(spectrum.eigenvalues);
  j["condition"] = number_to_json(spectrum.condition);
  j["rank"] = spectrum.rank;
  j["full_rank"] = spectrum.full_rank;
  j["rank_verdict"] = verdict_json(spectrum.verdict);
  j["weakest_direction"] = vector_to_json(spectrum.weakest_direction);
  Json missing = Json::array();
  for (Eigen::Index c = 0; c < spectrum.missing_directions.cols(); ++c)
    missing.push_back(vector_to_json(Eigen::VectorXd(spectrum.missing_directions.col(c))));
  j["missing_directions"] = missing;
  j["rank_tol"] = spectrum.rank_tol;
  j["rank_threshold"] = number_to_json(spectrum.threshold);
  j["route"] = result.route;
  j["steps"] = result.stats.steps;
  j["matrix_evaluations"] = result.stats.evaluations;
  if (transfer) {
    const TransferReport& t = *transfer;
    Json tr;
    tr["energy"] = number_to_json(t.energy);
    tr["final_error"] = number_to_json(t.final_error);
    tr["peak_input"] = number_to_json(t.peak_input);
    tr["energy_replayed"] = number_to_json(t.energy_replayed);
    tr["final_error_sampled_input"] = number_to_json(t.final_error_sampled);
    tr["x_final"] = vector_to_json(t.x_final);
    tr["free_final"] = vector_to_json(t.free_final);
    tr["costate"] = vector_to_json(t.costate);
    tr["inputs"] = input_names;
    tr["samples"] = t.times.size();
    tr["reachability_condition"] = number_to_json(t.reachability.condition);
    tr["warnings"] = t.warnings;
    j["transfer"] = tr;
  }
  if (profile) {
    Json p;
    p["window_length"] = profile_options.window_length;
    p["stride"] = profile_options.stride > 0 ? profile_options.stride : profile_options.window_length / 10;
    p["windows"] = profile->windows.size();
    p["grid_points"] = profile->grid_points;
    p["recomposed_windows"] = profile->recomposed;
    p["check_fraction"] = profile_options.check_fraction;
    if (const ProfileWindow* w = weakest_window(*profile)) p["weakest_window"] = window_json(*w);
    std::size_t full = 0, undetermined = 0;
    for (const auto& w : profile->windows) {
      full += w.spectrum.status == RankStatus::FullRank ? 1 : 0;
      undetermined += w.spectrum.status == RankStatus::Undetermined ? 1 : 0;
    }
    p["full_rank_windows"] = full;
    p["undetermined_windows"] = undetermined;
    j["profile"] = p;
  }
  return j;
}

std::string GramianReport::brief() const {
  std::ostringstream out;
  out << std::setprecision(6);
  const int n = static_cast<int>(state_names.size());
  const RankVerdict& v = spectrum.verdict;
  out << kind_name(result.kind) << " Gramian of " << (header.title.empty() ? header.source : header.title)
      << " over [" << result.t0 << ", " << result.t1 << "]\n";
  out << "  rank verdict: ";
  if (v.status == RankStatus::FullRank)
    out << "full rank (" << n << " of " << n << ")";
  else if (v.status == RankStatus::RankDeficient)
    out << "rank " << spectrum.rank << " of " << n << " (NOT full rank)";
  else
    out << "undetermined (rank " << v.rank_low << " to " << v.rank_high << " of " << n << ")";
  out << " at relative tolerance " << spectrum.rank_tol << ", states scaled: " << v.scaling << "\n";
  if (v.status == RankStatus::Undetermined || !v.reason.empty()) {
    if (!v.reason.empty()) out << "  why: " << v.reason << "\n";
    if (!v.remedy.empty()) out << "  what would settle it: " << v.remedy << "\n";
  }
  out << "  eigenvalues: " << values_brief(spectrum.eigenvalues) << "\n";
  out << "  condition number: " << spectrum.condition << "\n";
  out << "  weakest direction: " << direction_brief(spectrum.weakest_direction, state_names) << "\n";
  const Eigen::Index missing = spectrum.missing_directions.cols();
  if (n <= kBriefMaxStates) {
    for (Eigen::Index c = 1; c < missing; ++c)
      out << "  also missing: " << direction_brief(spectrum.missing_directions.col(c), state_names) << "\n";
  } else if (missing > 1) {
    out << "  " << missing - 1 << " more directions counted as zero (missing_directions in the JSON summary)\n";
  }
  out << "  route " << result.route << ", method " << header.method << ", " << result.stats.steps << " steps\n";
  if (transfer) {
    const TransferReport& t = *transfer;
    out << "minimum-energy transfer over " << t.times.size() << " samples\n";
    out << "  energy (integral of |u|^2): " << t.energy << " (replay: " << t.energy_replayed << ")\n";
    out << "  peak input: " << t.peak_input << "\n";
    out << "  final error of the replayed input law: " << t.final_error
        << "; of the sampled history, linearly interpolated: " << t.final_error_sampled << "\n";
    for (const std::string& w : t.warnings) out << "  warning: " << w << "\n";
  }
  if (profile) {
    out << "sliding windows: " << profile->windows.size() << " of length " << profile_options.window_length
        << " from " << profile->grid_points << " grid times (" << profile->recomposed << " recomposed)\n";
    if (const ProfileWindow* w = weakest_window(*profile))
      out << "  weakest window [" << w->t_start << ", " << w->t_end << "]: lambda_min " << w->spectrum.lambda_min
          << ", rank " << w->spectrum.rank << " (" << rank_status_name(w->spectrum.status) << ")\n";
  }
  return out.str();
}

}  // namespace ordex
