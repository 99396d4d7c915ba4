#pragma once
// Input histories u(t_k) sampled at strictly increasing times, and how the input is held
// between samples (zero-order hold or linear interpolation).
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

/// How the input behaves between two samples t_k < t_{k+1}.
enum class Hold {
  Zoh,    ///< zero-order hold: u(t) = u_k on [t_k, t_{k+1})
  Linear  ///< first-order hold: u(t) = u_k + (t - t_k) / (t_{k+1} - t_k) (u_{k+1} - u_k)
};

/// "zoh" or "linear".
std::string hold_name(Hold hold);
/// Inverse of hold_name; throws InputError "WHAT: unknown hold 'x' (choose zoh or linear)", WHAT
/// naming the field (or, in an app, the flag) the name came from.
Hold parse_hold(const std::string& name, const std::string& what = "hold");

/// Samples of the input vector: row k of VALUES is u(times[k]).
struct InputHistory {
  std::string source;           ///< the file it came from, or "code"; names it in messages
  std::vector<double> times;    ///< at least 2, strictly increasing
  Eigen::MatrixXd values;       ///< samples x inputs
  std::vector<int> lines;       ///< file line of each sample (empty when not from a file)

  int inputs() const { return static_cast<int>(values.cols()); }
  std::size_t samples() const { return times.size(); }
  /// "SOURCE:LINE" of sample K, or "SOURCE" when lines are unknown (for messages).
  std::string where(std::size_t k) const;
};

/// Reads the CSV of CONTRACT.md: header `t,<input names of SYS in model order>`, then one row
/// a sample. Every mistake (missing, extra or misnamed column, non-numeric or non-finite value,
/// fewer than two rows, t not strictly increasing) throws InputError "PATH:LINE: what".
InputHistory read_input_history(const std::string& path, const System& sys);

/// Builds a history in code; checks sizes and that TIMES is strictly increasing (InputError).
InputHistory make_input_history(std::vector<double> times, Eigen::MatrixXd values,
                                std::string source = "code");

/// Fewer samples than this inside the window, out of more, draw window_fit_warning's line.
constexpr std::size_t kFewSamplesInWindow = 5;

/// Empty, or one line for standard error when fewer than kFewSamplesInWindow of H's samples
/// (and not all of them) fall inside [T0, T1]: the input then barely shapes the run, which
/// usually means its times are in another unit than the model's (milliseconds against seconds).
std::string window_fit_warning(const InputHistory& h, double t0, double t1);

/// The index j of the sample interval [times[j], times[j+1]] that holds T: the last j with
/// times[j] <= T, clamped to 0 .. size-2 (so T == times.back() belongs to the last interval).
std::size_t interval_of(const std::vector<double>& times, double t);

/// u(T) under HOLD, with T inside the sample interval J ([times[J], times[J+1]]). For zoh this
/// is u_J on the whole interval (the value held from its left end), for linear the
/// interpolant, continuous across intervals.
void input_on_interval(const InputHistory& h, Hold hold, std::size_t j, double t,
                       Eigen::Ref<Eigen::VectorXd> u);

/// u(T) as the output equation sees it at a sample time: zoh takes the sample at or just
/// before T (u_N at the last time), linear the interpolant.
void input_at(const InputHistory& h, Hold hold, double t, Eigen::Ref<Eigen::VectorXd> u);

}  // namespace ordex
