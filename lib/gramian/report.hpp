#pragma once
// What ordex-gramian tells its user: the Report printed briefly on standard output and written
// in full to JSON (CONTRACT.md keys: kind, t0, t1, gramian, eigenvalues, condition, rank,
// full_rank, weakest_direction; transfer = {energy, final_error, peak_input}; plus app, method,
// route and stats).
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "gramian/gramian.hpp"
#include "gramian/profile.hpp"
#include "gramian/spectrum.hpp"
#include "gramian/transfer.hpp"
#include "io/json.hpp"

namespace ordex {

struct GramianReport {
  std::string model;                       ///< model file
  std::vector<std::string> state_names;    ///< for the weakest direction
  std::vector<std::string> input_names;    ///< for the transfer
  std::string method;                      ///< engine method (or CVODE scheme) actually used
  GramianResult result;                    ///< the Gramian over [t0, t1]
  GramianSpectrum spectrum;                ///< its analysis
  std::optional<TransferReport> transfer;  ///< with --x0/--xf
  std::optional<ProfileReport> profile;    ///< with --window-length
  ProfileOptions profile_options;          ///< the profile's settings (when profile is set)

  Json to_json() const;
  /// The short human-readable report.
  void print(std::ostream& out) const;
};

}  // namespace ordex
