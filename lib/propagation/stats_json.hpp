#pragma once
// The engine's counts and error estimate as JSON keys, shared by the apps' summaries.
#include "io/json.hpp"
#include "propagation/options.hpp"

namespace ordex {

/// Adds steps, rejected_steps, matrix_evaluations and error_estimate of S to J.
inline void add_propagation_stats(Json& j, const PropagationStats& s) {
  j["steps"] = s.steps;
  j["rejected_steps"] = s.rejected_steps;
  j["matrix_evaluations"] = s.evaluations;
  j["error_estimate"] = number_to_json(s.error_estimate);
}

}  // namespace ordex
