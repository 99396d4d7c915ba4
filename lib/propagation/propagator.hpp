#pragma once
// The engine: transition matrices of a Generator, forward or backward in time.
//
//   ordex::Propagator prop(ordex::state_generator(sys), options);
//   Eigen::MatrixXd phi = prop.transition(t0, t1);                  // Phi(t1, t0)
//   auto grid = prop.transition_on_grid(t0, times);                 // Phi(t_k, t0)
//   auto maps = prop.interval_maps(times);                          // Phi(t_{k+1}, t_k)
//
// Steps never straddle a breakpoint of the generator. Every call adds to stats().
//
// Threads: a Propagator keeps its stepper's work matrices and its statistics, and its generator
// usually evaluates a System, which is not thread-safe; one Propagator serves one thread at a
// time. Parallel work builds one Propagator per thread on its own System::clone() (see
// gramian_sweep.cpp), and only when System::clones_may_run_concurrently() says so.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <vector>

#include "propagation/generator.hpp"
#include "propagation/options.hpp"

namespace ordex {

class StepperBase;  // one per method (magnus.cpp, cvode_phi.cpp)

class Propagator {
 public:
  /// Validates OPTIONS (InputError) and resolves Method::Auto.
  Propagator(Generator generator, PropagationOptions options);
  ~Propagator();
  Propagator(Propagator&&) noexcept;
  Propagator& operator=(Propagator&&) noexcept;

  /// Phi(t1, t0); t1 < t0 integrates backward.
  Eigen::MatrixXd transition(double t0, double t1);

  /// Phi(times[k], t0) for every k. TIMES must be monotone (non-decreasing or non-increasing)
  /// and all on one side of t0; times equal to t0 give the identity.
  std::vector<Eigen::MatrixXd> transition_on_grid(double t0, const std::vector<double>& times);
  /// As transition_on_grid, but hands each Phi(times[k], t0) to VISIT as it is computed instead
  /// of keeping them (a long grid is never held in memory).
  void transition_on_grid(double t0, const std::vector<double>& times,
                          const std::function<void(std::size_t k, const Eigen::MatrixXd& phi)>& visit);

  /// S_k = Phi(times[k+1], times[k]) for k = 0 .. size-2, each integrated from the identity
  /// over its own interval (no inverse is ever taken). TIMES strictly monotone.
  std::vector<Eigen::MatrixXd> interval_maps(const std::vector<double>& times);

  /// As interval_maps, but hands each S_k to VISIT in order instead of keeping them.
  void for_each_interval(const std::vector<double>& times,
                         const std::function<void(std::size_t k, const Eigen::MatrixXd& S)>& visit);

  /// Counts and error estimate accumulated over all calls so far.
  const PropagationStats& stats() const { return stats_; }
  /// The method in use (Auto resolved).
  Method method() const { return stats_.method; }
  const Generator& generator() const { return generator_; }
  const PropagationOptions& options() const { return options_; }

 private:
  /// Integrates X from t_from to t_to in place, legs split at breakpoints. ERROR is the
  /// estimated error matrix of X, carried in and updated.
  void advance(double t_from, double t_to, Eigen::MatrixXd& X, Eigen::MatrixXd& error);
  /// X = Phi(t_to, t_from) and its error matrix, from the identity: the window's pieces on
  /// options().threads threads when the generator can be forked, else advance().
  void advance_from_identity(double t_from, double t_to, Eigen::MatrixXd& X, Eigen::MatrixXd& error);

  Generator generator_;
  PropagationOptions options_;
  PropagationStats stats_;
  std::unique_ptr<StepperBase> stepper_;
  std::vector<Propagator> helpers_;  // one per extra thread, on forked generators
};

/// The method that Method::Auto stands for, by the rule documented in the README (the same for
/// every plant: docs/performance.md, "What `auto` chooses").
Method resolve_auto_method();

}  // namespace ordex
