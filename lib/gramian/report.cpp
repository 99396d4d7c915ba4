#include "gramian/report.hpp"

#include <algorithm>
#include <iomanip>


namespace ordex {

namespace {

/// The window of the profile with the smallest lambda_min (the hardest stretch).
const ProfileWindow* weakest_window(const ProfileReport& p) {
  const ProfileWindow* best = nullptr;
  for (const auto& w : p.windows)
    if (!best || w.spectrum.lambda_min < best->spectrum.lambda_min) best = &w;
  return best;
}

Json window_json(const ProfileWindow& w) {
  Json j;
  j["t_start"] = w.t_start;
  j["t_end"] = w.t_end;
  j["lambda_min"] = w.spectrum.lambda_min;
  j["lambda_max"] = w.spectrum.lambda_max;
  j["condition"] = number_to_json(w.spectrum.condition);
  j["rank"] = w.spectrum.rank;
  return j;
}

}  // namespace

Json GramianReport::to_json() const {
  Json j;
  j["app"] = "ordex-gramian";
  j["model"] = model;
  j["kind"] = kind_name(result.kind);
  j["t0"] = result.t0;
  j["t1"] = result.t1;
  j["states"] = state_names;
  j["gramian"] = ordex::to_json(result.gramian);
  j["eigenvalues"] = vector_to_json(spectrum.eigenvalues);
  j["condition"] = number_to_json(spectrum.condition);
  j["rank"] = spectrum.rank;
  j["full_rank"] = spectrum.full_rank;
  j["weakest_direction"] = vector_to_json(spectrum.weakest_direction);
  {
    Json missing = Json::array();
    for (Eigen::Index c = 0; c < spectrum.missing_directions.cols(); ++c)
      missing.push_back(vector_to_json(Eigen::VectorXd(spectrum.missing_directions.col(c))));
    j["missing_directions"] = missing;
  }
  j["rank_tol"] = spectrum.rank_tol;
  j["rank_threshold"] = spectrum.threshold;
  j["route"] = result.route;
  j["method"] = method;
  j["steps"] = result.stats.steps;
  j["matrix_evaluations"] = result.stats.evaluations;
  if (transfer) {
    const TransferReport& t = *transfer;
    Json tr;
    tr["energy"] = t.energy;
    tr["final_error"] = t.final_error;
    tr["peak_input"] = t.peak_input;
    tr["energy_replayed"] = t.energy_replayed;
    tr["final_error_sampled_input"] = t.final_error_sampled;
    tr["x_final"] = vector_to_json(t.x_final);
    tr["free_final"] = vector_to_json(t.free_final);
    tr["costate"] = vector_to_json(t.costate);
    tr["inputs"] = input_names;
    tr["samples"] = t.times.size();
    tr["reachability_condition"] = number_to_json(t.reachability.condition);
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
    std::size_t full = 0;
    for (const auto& w : profile->windows) full += w.spectrum.rank == static_cast<int>(state_names.size()) ? 1 : 0;
    p["full_rank_windows"] = full;
    j["profile"] = p;
  }
  return j;
}

void GramianReport::print(std::ostream& out) const {
  const auto old = out.precision();
  out << std::setprecision(6);
  const int n = static_cast<int>(state_names.size());
  out << kind_name(result.kind) << " Gramian of " << model << " over [" << result.t0 << ", " << result.t1 << "]\n";
  out << "  rank " << spectrum.rank << " of " << n << (spectrum.full_rank ? " (full rank)" : " (NOT full rank)")
      << " at relative tolerance " << spectrum.rank_tol << "\n";
  out << "  eigenvalues:";
  for (Eigen::Index i = 0; i < spectrum.eigenvalues.size(); ++i) out << " " << spectrum.eigenvalues[i];
  out << "\n  condition number: " << spectrum.condition << "\n";
  out << "  weakest direction: " << describe_direction(spectrum.weakest_direction, state_names) << "\n";
  for (Eigen::Index c = 1; c < spectrum.missing_directions.cols(); ++c)
    out << "  also missing: " << describe_direction(spectrum.missing_directions.col(c), state_names) << "\n";
  out << "  route " << result.route << ", method " << method << ", " << result.stats.steps << " steps\n";
  if (transfer) {
    const TransferReport& t = *transfer;
    out << "minimum-energy transfer over " << t.times.size() << " samples\n";
    out << "  energy (integral of |u|^2): " << t.energy << " (replay: " << t.energy_replayed << ")\n";
    out << "  peak input: " << t.peak_input << "\n";
    out << "  final error of the replayed input law: " << t.final_error
        << "; of the sampled history, linearly interpolated: " << t.final_error_sampled << "\n";
  }
  if (profile) {
    out << "sliding windows: " << profile->windows.size() << " of length " << profile_options.window_length
        << " from " << profile->grid_points << " grid times (" << profile->recomposed << " recomposed)\n";
    if (const ProfileWindow* w = weakest_window(*profile))
      out << "  weakest window [" << w->t_start << ", " << w->t_end << "]: lambda_min " << w->spectrum.lambda_min
          << ", rank " << w->spectrum.rank << "\n";
  }
  out.precision(old);
}

}  // namespace ordex
