#pragma once
// The engine's service for symmetric matrix differential equations
//
//   dX/dt = F(t) X + X F(t)' + S(t) - X R(t) X,   R(t) = G(t) W(t) G(t)'
//
// (a Lyapunov equation when R = 0, a Riccati equation otherwise), forward or backward in time
// from an initial or terminal value, on the n(n+1)/2 entries of X (symmetric_packing.hpp), by
// CVODE. With BDF the Newton matrices act on X as
//   (I - gamma J) V = (I/2 - gamma Fc) V + V (I/2 - gamma Fc)',   Fc = F - X R,
// a Lyapunov equation solved exactly in O(n^3) by Bartels-Stewart (lyapunov_solver.hpp): GMRES
// converges in about one iteration and no n(n+1)/2-square Jacobian is ever formed.
//
// Its users, each a choice of F, S, G, W:
//   reachability Gramian   dW/dt = A W + W A' + B B'          F = A,   S = B B',  no R
//   regulator (backward)   dP/dt = -(A~'P + P A~ + Q~ - P B R^-1 B' P)
//                                                              F = -A~', S = -Q~, G = B, W = -R^-1
//   Kalman-Bucy (forward)  dP/dt = A P + P A' + G Qn G' - P C' Rn^-1 C P
//                                                              F = A, S = G Qn G', G = C', W = Rn^-1
// R is given by a factor so that X R X costs O(n^2 k) for k inputs or measurements; a dense R
// is G = I, W = R.
//
// Threads: a SymmetricMatrixOdeSolver and its callbacks are used from one thread; build one per
// thread (over a clone() of the model) to integrate concurrently.
#include <Eigen/Dense>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "model/system.hpp"
#include "propagation/ode_integrator.hpp"
#include "propagation/scheme_probe.hpp"

namespace ordex {

/// The equation. Callbacks write into caller-owned matrices already of the right size and must
/// not allocate in the inner loop; each is called once per distinct t.
struct SymmetricMatrixOde {
  int n = 0;  ///< X is n x n
  /// F(t) (n x n); required.
  std::function<void(double t, MatrixRef F)> F;
  /// S(t) (n x n, symmetric); empty means zero.
  std::function<void(double t, MatrixRef S)> S;
  /// k, the columns of G; 0 (default) means R = 0, a Lyapunov equation.
  int quadratic_rank = 0;
  /// G(t) (n x k); required when quadratic_rank > 0.
  std::function<void(double t, MatrixRef G)> G;
  /// W(t) (k x k, symmetric); required when quadratic_rank > 0.
  std::function<void(double t, MatrixRef W)> W;
  /// Times where a coefficient may jump: the integration restarts there, and coefficients
  /// asked at one are taken from the side being integrated.
  std::vector<double> breakpoints;
  /// Optional: called after every accepted step with t and X(t).
  std::function<void(double t, const Eigen::MatrixXd& X)> on_step;
  /// Names the equation in messages.
  std::string label = "symmetric matrix equation";
  /// The unknown's symbol in messages ("P[1][0] is not finite at t = ...").
  std::string symbol = "X";
  /// Throws InputError naming the field when the description is incomplete.
  void validate() const;
};

struct SymmetricOdeStats : OdeStats {
  long factorizations = 0;  ///< Schur factorizations of Fc by the preconditioner
};

class SymmetricMatrixOdeSolver {
 public:
  /// OPTIONS.scheme picks Adams (non-stiff, no linear solves) or Bdf (stiff, preconditioned).
  SymmetricMatrixOdeSolver(SymmetricMatrixOde equation, OdeOptions options);
  ~SymmetricMatrixOdeSolver();
  SymmetricMatrixOdeSolver(const SymmetricMatrixOdeSolver&) = delete;
  SymmetricMatrixOdeSolver& operator=(const SymmetricMatrixOdeSolver&) = delete;

  /// Starts at T from X (n x n; its upper triangle is used): an initial value for a forward
  /// integration, a terminal value for a backward one.
  void start(double t, const Eigen::MatrixXd& x);
  /// X at T, integrating from the current time toward T (dense output: CVODE interpolates
  /// between its steps, except across breakpoints, where it lands). The direction must not
  /// change until the next start(). Throws NumericalError naming the entry and t when X or its
  /// derivative stops being finite, or the exception a coefficient callback threw.
  void advance(double t, Eigen::MatrixXd& x);
  double time() const;
  SymmetricOdeStats stats() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The scheme the probe (scheme_probe.hpp) picks for EQUATION integrated from X_FROM at T_FROM
/// toward T_TO: from F at T_FROM, the middle and T_TO; when that says RungeKutta, Fc = F - X G W G'
/// at T_FROM (with X_FROM) may still veto it by a stiff decay (at most four small eigenvalue
/// problems). Calls the coefficient callbacks; throws what they throw.
SchemeProbe probe_symmetric_ode(const SymmetricMatrixOde& equation, double t_from, const Eigen::MatrixXd& x_from,
                                double t_to);

/// X(T_TO) from X(T_FROM) = X_FROM in one call (either direction). STATS may be null.
Eigen::MatrixXd solve_symmetric_ode(const SymmetricMatrixOde& equation, const OdeOptions& options, double t_from,
                                    const Eigen::MatrixXd& x_from, double t_to, SymmetricOdeStats* stats = nullptr);

}  // namespace ordex
