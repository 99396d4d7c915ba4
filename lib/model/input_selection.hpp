#pragma once
// The plant seen through some of its inputs (--controls): B and D keep only the selected
// columns, so a job (Gramian, transfer, regulator) treats the other inputs - a wind, a
// disturbance - as absent instead of as controls.
#include <memory>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

class InputSelection : public System {
 public:
  /// PLANT must outlive the selection. COLUMNS: 0-based input indices, distinct, in the order the
  /// selection's inputs take.
  InputSelection(const System& plant, std::vector<int> columns);
  /// Owns its plant (for clone()).
  InputSelection(std::unique_ptr<System> plant, std::vector<int> columns);

  void A(double t, MatrixRef out) const override { plant_.A(t, out); }
  void B(double t, MatrixRef out) const override;
  void C(double t, MatrixRef out) const override { plant_.C(t, out); }
  void D(double t, MatrixRef out) const override;
  std::unique_ptr<System> clone() const override;
  bool clones_may_run_concurrently() const override { return plant_.clones_may_run_concurrently(); }
  bool time_invariant() const override { return plant_.time_invariant(); }
  std::string diagnose_entries(double t, double direction) const override { return plant_.diagnose_entries(t, direction); }
  std::vector<double> switching_times(double a, double b, std::vector<std::string>* notes) const override {
    return plant_.switching_times(a, b, notes);
  }
  void check_finite_at(double t) const override { plant_.check_finite_at(t); }

  const std::vector<int>& columns() const { return columns_; }
  const System& plant() const { return plant_; }

 private:
  void init();
  const System& plant_;
  std::unique_ptr<System> owned_;
  std::vector<int> columns_;
  mutable Eigen::MatrixXd full_;  // the plant's B or D before selection (workspace)
};

/// The input indices named by NAMES (comma-separated, spaces around names ignored) among SYS's
/// inputs. Throws InputError "WHAT: unknown input 'x' (the model's inputs: a, b)", and for an
/// empty list or a name given twice.
std::vector<int> parse_input_names(const System& sys, const std::string& names, const std::string& what);

}  // namespace ordex
