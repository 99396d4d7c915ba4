// The bundled eccentric-orbit model against exact two-body motion (METHODS.md): Phi(t, t0) dx0
// must match the difference of two Kepler propagations started dx0 apart, with a gap that
// shrinks like |dx0|^2 (the linearization's own error).
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>

#include "model/model_file.hpp"
#include "propagation/propagator.hpp"
#include "support.hpp"

using namespace ordex;
using Vec3 = Eigen::Vector3d;

namespace {

const double kMu = 398600.4418, kSma = 9200.0, kEcc = 0.2;  // the model's default parameters

// Two-body propagation by Lagrange's f and g functions with Kepler's equation in the form of
// the eccentric-anomaly difference dE (Battin, An Introduction to the Mathematics and Methods of
// Astrodynamics, 1999, sec. 4.3; from memory):
//   n dt = dE + sigma0/sqrt(a) (1 - cos dE) - (1 - r0/a) sin dE,  sigma0 = r0.v0 / sqrt(mu)
//   f = 1 - a/r0 (1 - cos dE),  g = dt + sqrt(a^3/mu) (sin dE - dE)
//   r = a + (r0 - a) cos dE + sigma0 sqrt(a) sin dE
//   fdot = -sqrt(mu a) sin dE / (r r0),  gdot = 1 - a/r (1 - cos dE)
void kepler(const Vec3& r0, const Vec3& v0, double dt, Vec3& r, Vec3& v) {
  double rn = r0.norm();
  double a = 1.0 / (2.0 / rn - v0.squaredNorm() / kMu);
  double n = std::sqrt(kMu / (a * a * a));
  double sigma = r0.dot(v0) / std::sqrt(kMu);
  double M = n * dt, dE = M;
  for (int it = 0; it < 100; ++it) {
    double F = dE + sigma / std::sqrt(a) * (1 - std::cos(dE)) - (1 - rn / a) * std::sin(dE) - M;
    double dF = 1 + sigma / std::sqrt(a) * std::sin(dE) - (1 - rn / a) * std::cos(dE);
    double step = F / dF;
    dE -= step;
    if (std::abs(step) < 1e-15) break;
  }
  double rr = a + (rn - a) * std::cos(dE) + sigma * std::sqrt(a) * std::sin(dE);
  double f = 1 - a / rn * (1 - std::cos(dE));
  double g = dt + std::sqrt(a * a * a / kMu) * (std::sin(dE) - dE);
  double fd = -std::sqrt(kMu * a) * std::sin(dE) / (rr * rn);
  double gd = 1 - a / rr * (1 - std::cos(dE));
  r = f * r0 + g * v0;
  v = fd * r0 + gd * v0;
}

// Relative state of a deputy in the chief's LVLH frame (x radial, z along the angular momentum,
// y = z cross x), velocity taken in the rotating frame.
Eigen::VectorXd to_lvlh(const Vec3& rc, const Vec3& vc, const Vec3& rd, const Vec3& vd) {
  Vec3 h = rc.cross(vc);
  Vec3 xh = rc.normalized(), zh = h.normalized(), yh = zh.cross(xh);
  Eigen::Matrix3d R;
  R.row(0) = xh;
  R.row(1) = yh;
  R.row(2) = zh;
  Vec3 omega = h / rc.squaredNorm();
  Vec3 dr = rd - rc, dv = vd - vc - omega.cross(rd - rc);
  Eigen::VectorXd x(6);
  x << R * dr, R * dv;
  return x;
}

}  // namespace

TEST(PropagationOrbit, TwoBodySanity) {
  // The reference itself: energy and angular momentum are conserved over a propagation.
  Vec3 r0(kSma * (1 - kEcc), 0, 0), v0(0, std::sqrt(kMu * (1 + kEcc) / (kSma * (1 - kEcc))), 0), r, v;
  kepler(r0, v0, 3000.0, r, v);
  auto energy = [](const Vec3& r, const Vec3& v) { return v.squaredNorm() / 2 - kMu / r.norm(); };
  EXPECT_NEAR(energy(r, v), energy(r0, v0), 1e-12);
  EXPECT_LT((r.cross(v) - r0.cross(v0)).norm(), 1e-8);
}

TEST(PropagationOrbit, TransitionMatrixMatchesDifferencedKeplerMotion) {
  auto sys = load_model(ordex_test::model_path("orbit_relative_motion.toml"));
  ASSERT_TRUE(sys->info().window.has_value());
  const double T = sys->info().window->second;  // one orbital period from periapsis at t = 0
  // Chief at periapsis: LVLH axes coincide with the inertial axes there.
  Vec3 rc0(kSma * (1 - kEcc), 0, 0);
  Vec3 vc0(0, std::sqrt(kMu * (1 + kEcc) / (kSma * (1 - kEcc))), 0);
  const double fdot0 = vc0.norm() / rc0.norm();
  Eigen::VectorXd dx(6);
  dx << 0.8, -1.5, 0.6, 3e-4, -2e-4, 5e-4;  // km and km/s
  PropagationOptions o;
  o.rtol = 1e-12;
  o.atol = 1e-14;
  for (double t : {0.37 * T, T}) {
    Propagator p(state_generator(*sys), o);
    Eigen::MatrixXd phi = p.transition(0.0, t);
    std::vector<double> gaps;
    for (double s : {1.0, 0.5, 0.25}) {
      Eigen::VectorXd d = s * dx;
      Vec3 rd0 = rc0 + d.head<3>();
      Vec3 vd0 = vc0 + d.tail<3>() + Vec3(0, 0, fdot0).cross(d.head<3>());
      Vec3 rc, vc, rd, vd;
      kepler(rc0, vc0, t, rc, vc);
      kepler(rd0, vd0, t, rd, vd);
      Eigen::VectorXd exact = to_lvlh(rc, vc, rd, vd);
      Eigen::VectorXd lin = phi * d;
      gaps.push_back((exact - lin).norm() / d.norm());
      // The linear prediction captures the motion: the gap is under 1% of it for offsets of a
      // km over a whole revolution (the gap itself is second order, checked below).
      EXPECT_LT((exact - lin).norm(), 1e-2 * exact.norm()) << "t = " << t << " s = " << s;
    }
    // Second-order gap: halving dx0 quarters the absolute gap, i.e. halves gap/|dx0|.
    EXPECT_NEAR(gaps[0] / gaps[1], 2.0, 0.2) << "t = " << t;
    EXPECT_NEAR(gaps[1] / gaps[2], 2.0, 0.2) << "t = " << t;
  }
}
