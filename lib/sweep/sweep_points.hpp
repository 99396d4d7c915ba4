#pragma once
// The points of a sweep: a grid (the product of equally spaced axes, the last varying fastest)
// or random samples drawn from per-parameter distributions. Point k's values depend only on
// the plan and k, never on which thread or rank asks, so any split of the work gives the same
// table.
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace ordex {

/// One axis "NAME=FROM:TO:COUNT": COUNT equally spaced values, both ends included (COUNT 1:
/// FROM alone).
struct GridAxis {
  std::string name;
  double from = 0, to = 0;
  long count = 1;
};

/// Largest number of points of one sweep.
constexpr std::size_t kMaxSweepPoints = 100000000;

/// Parses "NAME=FROM:TO:COUNT" (FROM and TO numbers or constant expressions such as pi/2).
/// Throws InputError "SweepOptions::grid 'TEXT': what is wrong".
GridAxis parse_grid_axis(const std::string& text);

/// One parameter's distribution in a sample plan.
struct SampleDistribution {
  std::string name;
  enum class Kind { Normal, Uniform } kind = Kind::Normal;
  double a = 0, b = 1;  ///< normal: mean, standard deviation (>= 0); uniform: low, high (low <= high)
};

/// Reads a sample plan (TOML, docs/sweep.md): one table per parameter, in file order, e.g.
///   [q]
///   distribution = "uniform"   # or "normal" with mean and sd
///   low = 0.1
///   high = 0.6
/// Throws InputError "PATH: KEY: what is wrong".
std::vector<SampleDistribution> read_sample_plan(const std::string& path);

class SweepPoints {
 public:
  /// The product of AXES (at least one; names distinct). Throws InputError naming
  /// SweepOptions::grid when a name repeats or the product exceeds kMaxSweepPoints.
  static SweepPoints grid(std::vector<GridAxis> axes);
  /// RUNS points drawn from PLAN with SEED: point k's values come from a counter-based
  /// generator keyed by (seed, k, parameter), so they do not depend on the order of drawing.
  static SweepPoints samples(std::vector<SampleDistribution> plan, std::size_t runs, std::uint64_t seed);

  const std::vector<std::string>& names() const { return names_; }
  std::size_t size() const { return size_; }
  /// The parameter values of point K (0 <= k < size()), in names() order.
  std::vector<double> values(std::size_t k) const;
  bool is_grid() const { return !axes_.empty(); }
  const std::vector<GridAxis>& axes() const { return axes_; }
  const std::vector<SampleDistribution>& plan() const { return plan_; }
  std::uint64_t seed() const { return seed_; }

 private:
  std::vector<std::string> names_;
  std::size_t size_ = 0;
  std::vector<GridAxis> axes_;
  std::vector<SampleDistribution> plan_;
  std::uint64_t seed_ = 0;
};

/// A uniform deviate in (0, 1) for (SEED, K, STREAM), from SplitMix64 (Steele, Lea & Flood,
/// "Fast splittable pseudorandom number generators", OOPSLA 2014) applied to the combined key.
double counter_uniform(std::uint64_t seed, std::uint64_t k, std::uint64_t stream);

}  // namespace ordex
