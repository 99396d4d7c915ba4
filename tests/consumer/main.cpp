// Phi, a Gramian, a gain schedule and a response of the double integrator x'' = u, each
// checked against its closed form. This file is the program of docs/cpp.md.
#include <algorithm>
#include <cmath>
#include <iostream>
#include <ordex/ordex.hpp>

int main() try {
  ordex::FunctionSystem sys({"position", "velocity"}, "double integrator");
  sys.set_A([](double, ordex::MatrixRef a) { a << 0, 1, 0, 0; });
  sys.set_B({"thrust"}, [](double, ordex::MatrixRef b) { b << 0, 1; });
  const double T = 20;

  Eigen::MatrixXd phi = ordex::propagate(sys, 0, T, {}).phi;  // Phi(T, 0)

  ordex::GramianJobOptions reach;
  reach.gramian.kind = ordex::GramianKind::Reachability;
  Eigen::MatrixXd W = ordex::gramian(sys, 0, T, reach).result.gramian;

  ordex::RegulatorReport lqr = ordex::regulate(sys, 0, T);  // Q = I, R = I, gains K(t) = lqr.gains

  auto unit_thrust = ordex::make_input_history({0, T}, Eigen::MatrixXd::Ones(2, 1));
  Eigen::VectorXd x = ordex::respond(sys, {unit_thrust}, {}).runs[0].x_final;  // x(T) from rest

  // Closed forms: Phi(T, 0) = [[1, T], [0, 1]]; reachability Gramian [[T^3/3, T^2/2], [T^2/2, T]];
  // x(T) = [T^2/2, T] under u = 1; the algebraic Riccati solution for Q = I, R = 1 is
  // [[sqrt 3, 1], [1, sqrt 3]], so K(0) = [1, sqrt 3] on a horizon this long (standard results).
  Eigen::Matrix2d phi_exact, W_exact;
  phi_exact << 1, T, 0, 1;
  W_exact << T * T * T / 3, T * T / 2, T * T / 2, T;
  Eigen::RowVector2d K_exact(1, std::sqrt(3.0));
  Eigen::Vector2d x_exact(T * T / 2, T);
  const double err = std::max({(phi - phi_exact).norm(), (W - W_exact).norm() / W_exact.norm(),
                               (lqr.gains.front() - K_exact).norm(), (x - x_exact).norm() / T});
  std::cout << "Phi =\n" << phi << "\nW =\n" << W << "\nK(0) = " << lqr.gains.front() << " ("
            << lqr.gains.size() << " gains)\nx(T) = " << x.transpose() << "\nlargest error " << err << "\n";
  return err < 1e-6 ? 0 : 1;
} catch (const ordex::Error& e) {
  std::cerr << "ordex: " << e.what() << "\n";
  return 2;
}
