#pragma once
// The gramian job: the Gramian of a System over a window with its spectrum and rank verdict,
// and on request the minimum-energy transfer between two states and the sliding-window profile,
// all from one block-generator sweep where they can share it. Its Report has a brief text form
// and the JSON summary of CONTRACT.md.
//
//   ordex::GramianJobOptions o;                      // controllability, block route, 101 samples
//   o.transfer = ordex::TransferOptions{};           // optional: x0 and xf
//   o.transfer->x0 = x0;  o.transfer->xf = xf;
//   ordex::GramianReport r = ordex::gramian(sys, 0.0, 2.0, o);
//   std::cout << r.brief();  r.result.gramian;  r.spectrum.rank;  r.transfer->inputs;
#include <Eigen/Dense>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "gramian/gramian.hpp"
#include "gramian/profile.hpp"
#include "gramian/spectrum.hpp"
#include "gramian/transfer.hpp"
#include "io/json.hpp"
#include "model/model_report.hpp"

namespace ordex {

/// Largest sample grid of a gramian job (GramianJobOptions::samples).
constexpr int kMaxGramianSamples = 10000000;

struct GramianJobOptions {
  /// Kind, route, engine options, threads and state scaling of the Gramian (gramian.hpp);
  /// default: controllability by the Block route with the engine's defaults on 2 threads.
  GramianOptions gramian;
  /// Relative rank tolerance (spectrum.hpp) of the Gramian's verdict; the job also uses it for
  /// the transfer's W_r and the profile's windows. Default kDefaultRankTol (1e-10); in (0, 1).
  double rank_tol = kDefaultRankTol;
  /// Equally spaced times of [t0, t1], both ends included: the grid of the Block route, of the
  /// transfer's input history and of the running Gramian. Default 101; in [2, kMaxGramianSamples].
  int samples = 101;
  /// Minimum-energy transfer from x0 to xf (transfer.hpp); default none. Its rank_tol and
  /// scaling are taken from this struct.
  std::optional<TransferOptions> transfer;
  /// Sliding-window profile (profile.hpp); default none. Its rank_tol, scaling and threads are
  /// taken from this struct.
  std::optional<ProfileOptions> profile;
  /// Throws InputError naming the field ("GramianJobOptions::rank_tol = 0 is outside (0, 1)").
  void validate() const;
};

/// Receives the running Gramian W(t0, t_k) of the job's kind at every grid time t_k, in order;
/// W is only valid during the call.
using GramianSink = std::function<void(double t, const Eigen::MatrixXd& w)>;

struct GramianReport {
  ReportHeader header;                     ///< model, parameters, window, method actually used
  std::vector<std::string> state_names;    ///< for the directions
  std::vector<std::string> input_names;    ///< for the transfer's inputs
  GramianResult result;                    ///< the Gramian over [t0, t1] (kind, route, factor, stats)
  GramianSpectrum spectrum;                ///< eigenvalues, rank verdict, weakest direction
  std::optional<TransferReport> transfer;  ///< when asked for
  std::optional<ProfileReport> profile;    ///< when asked for
  ProfileOptions profile_options;          ///< the profile's settings in effect (with profile)

  /// A few lines for a terminal: the verdict, eigenvalues, weakest direction, transfer and
  /// profile figures; beyond kBriefMaxStates states a summary pointing to the JSON.
  std::string brief() const;
  /// The summary: the common header, then kind, states, gramian, eigenvalues, condition, rank,
  /// full_rank, rank_verdict, weakest_direction, missing_directions, rank_tol, route, steps,
  /// transfer {...}, profile {...}.
  Json to_json() const;
};

/// The gramian job on SYS over [t0, t1] (t1 > t0). One sweep over the sample grid serves the
/// Gramian (Block route), the running Gramian handed to RUNNING (when given) and, for the
/// controllability or reachability kinds, the transfer. Progress (options.gramian.propagation.
/// progress) runs once from 0 to 1 over all the parts. Throws InputError for bad options, a
/// window the model is not defined on or a model without B (C); NumericalError on failure
/// (including a transfer through a Gramian whose rank is deficient or undetermined).
GramianReport gramian(const System& sys, double t0, double t1, const GramianJobOptions& options,
                      const GramianSink& running = {});

}  // namespace ordex
