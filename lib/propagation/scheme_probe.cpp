#include "propagation/scheme_probe.hpp"

#include <cmath>

namespace ordex {

SchemeProbe probe_scheme(const std::vector<Eigen::MatrixXd>& fc_samples, double window) {
  SchemeProbe p;
  for (const Eigen::MatrixXd& fc : fc_samples) {
    if (!fc.allFinite()) return p;
    Eigen::EigenSolver<Eigen::MatrixXd> eig(fc, false);
    if (eig.info() != Eigen::Success) return p;
    const Eigen::VectorXcd lambda = eig.eigenvalues();
    p.decay = std::max(p.decay, lambda.real().cwiseAbs().maxCoeff());
    p.frequency = std::max(p.frequency, lambda.imag().cwiseAbs().maxCoeff());
  }
  const bool oscillates = p.frequency * std::abs(window) >= kAdamsMinRadians;
  const bool stiff = p.decay > kAdamsMaxDecayRatio * p.frequency;
  p.scheme = oscillates && !stiff ? OdeScheme::Adams : OdeScheme::Bdf;
  return p;
}

}  // namespace ordex
