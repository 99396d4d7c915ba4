#include "propagation/scheme_probe.hpp"

#include <cmath>

namespace ordex {

std::string scheme_engine_name(OdeScheme scheme) {
  switch (scheme) {
    case OdeScheme::Adams: return "cvode-adams";
    case OdeScheme::RungeKutta: return "rkf78";
    case OdeScheme::Bdf: break;
  }
  return "cvode-bdf";
}

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
  const bool oscillates = p.frequency * std::abs(window) >= kExplicitMinRadians;
  const bool stiff = p.decay > kExplicitMaxDecayRatio * p.frequency;
  p.scheme = oscillates && !stiff ? OdeScheme::RungeKutta : OdeScheme::Bdf;
  return p;
}

}  // namespace ordex
