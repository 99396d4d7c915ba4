#pragma once
// Gramians of x' = A(t) x + B(t) u, y = C(t) x over a window [t0, t1] (METHODS.md "Gramians"):
//   controllability W_c = int Phi(t0, s) B B' Phi(t0, s)' ds
//   reachability    W_r = int Phi(t1, s) B B' Phi(t1, s)' ds = Phi(t1, t0) W_c Phi(t1, t0)'
//   observability   M   = int Phi(s, t0)' C' C Phi(s, t0) ds
// Observability is the controllability Gramian of the dual pair (-A', C'), so every route works
// on one "weighted pair" (a(t), q(t)) with q = B B' or q = C' C.
//
// Two routes, each a check on the other:
//   Block:    Van Loan's block generator [[a, q], [0, -a']] handed to the engine one grid interval
//             at a time; the interval's transition matrix gives the step transition matrix and the
//             step Gramian, which are composed (gramian_sweep.hpp).
//   Lyapunov: the Lyapunov differential equation on the n(n+1)/2 entries of W, integrated by
//             CVODE (OdeIntegrator): forward for W_r, backward in t0 for W_c and M.
#include <Eigen/Dense>
#include <functional>
#include <string>
#include <vector>

#include "gramian/spectrum.hpp"
#include "model/system.hpp"
#include "propagation/options.hpp"

namespace ordex {

enum class GramianKind { Controllability, Reachability, Observability };
/// "controllability", "reachability", "observability".
std::string kind_name(GramianKind k);
/// Inverse of kind_name; throws InputError "GramianOptions::kind: unknown kind 'x' (choose ...)".
GramianKind parse_kind(const std::string& text);

enum class GramianRoute { Block, Lyapunov };
/// "block", "lyapunov".
std::string route_name(GramianRoute r);
/// Inverse of route_name; throws InputError naming GramianOptions::route.
GramianRoute parse_route(const std::string& text);

/// The pair a Gramian integrates: the state matrix a(t) and the weight q(t) (n x n, symmetric
/// positive semidefinite): (A, B B') for controllability and reachability, (-A', C' C) for
/// observability. The functions own their scratch space and do not allocate per call; like a
/// System, a pair is not thread-safe (build one per thread from a clone()).
struct WeightedPair {
  int n = 0;
  std::function<void(double t, MatrixRef out)> a;  ///< n x n
  std::function<void(double t, MatrixRef out)> q;  ///< n x n
  std::vector<double> breakpoints;                 ///< the model's
  std::string label;                               ///< names the pair in messages
};

/// (A, B B') of SYS (which must outlive the pair). Throws InputError naming the model file when
/// the model declares no inputs.
WeightedPair input_pair(const System& sys);
/// (-A', C' C) of SYS. Throws InputError naming the model file when it declares no outputs.
WeightedPair dual_output_pair(const System& sys);
/// The pair of KIND (input_pair or dual_output_pair).
WeightedPair pair_for_kind(const System& sys, GramianKind kind);

struct GramianOptions {
  /// Which Gramian; default controllability.
  GramianKind kind = GramianKind::Controllability;
  /// How it is computed; default Block (the engine on Van Loan's block generator).
  GramianRoute route = GramianRoute::Block;
  /// Engine options for the Block route; for the Lyapunov route their rtol/atol become CVODE's
  /// and method Bdf selects CVODE BDF with the exact Lyapunov preconditioner (anything else:
  /// Adams). Default: the engine's defaults (rtol 1e-8, atol 1e-10).
  PropagationOptions propagation;
  /// Parallel threads for the Block route's grid intervals (each thread its own model copy and
  /// engine); default 2. Must be in [1, 64].
  int threads = 2;
  /// How states are scaled when the rank is judged (spectrum.hpp); default: balanced.
  StateScaling scaling;
  /// Throws InputError naming the field ("GramianOptions::threads = 0 is outside [1, 64]").
  void validate() const;
};


/// What one Gramian computation returns.
struct GramianResult {
  GramianKind kind = GramianKind::Controllability;
  double t0 = 0, t1 = 0;
  Eigen::MatrixXd gramian;   ///< n x n, symmetric positive semidefinite: factor.L factor.L'
  GramianFactor factor;      ///< the square-root form W = L L' with its error bounds
  PropagationStats stats;    ///< engine counts (Block) or CVODE steps (Lyapunov, in steps)
  std::string route;         ///< "block" or "lyapunov"
};

/// The Gramian of OPTIONS.kind over [t0, t1] (t1 > t0). GRID optionally gives the interval
/// ends for the Block route (ascending, from t0 to t1); empty means the single interval.
/// Throws InputError for a bad window or a model without B (C), NumericalError on failure.
GramianResult compute_gramian(const System& sys, double t0, double t1, const GramianOptions& options,
                              const std::vector<double>& grid = {});

struct GramianSweep;  // gramian_sweep.hpp

/// The Gramian of KIND over the whole grid of SWEEP (a sweep of KIND's pair), in square-root
/// form: what compute_gramian's Block route returns, for callers that keep the sweep.
GramianResult gramian_from_sweep(const GramianSweep& sweep, GramianKind kind);

/// W symmetrized: (W + W') / 2.
Eigen::MatrixXd symmetrized(const Eigen::MatrixXd& w);

}  // namespace ordex
