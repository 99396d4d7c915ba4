// Which local error estimate should an adaptive order-6 Magnus step use? Step doubling (the
// engine's: one step of h against two of h/2, three exponentials and nine evaluations of A per
// step, the result the two half steps) against the embedded estimate from the same three Gauss
// nodes (Omega6 - Omega4, Blanes, Casas & Ros, BIT 40 (2000) 434-450: one exponential and three
// evaluations per step, the error estimated is that of the order-4 companion, so the step
// controller uses the exponent 1/5 and the order-6 result is kept).
//
// Both run the same controller (weighted RMS of the estimated local error of X, entrywise
// weights atol + rtol |X|, as in lib/propagation/magnus.cpp), scan rtol from 1e-5 to 1e-14 in
// half decades, and are compared at matched achieved accuracy (1e-9 and 1e-12 relative) against
// a reference (step doubling at rtol 1e-14, checked against rtol 1e-13). Also reported: the
// estimate's honesty (actual error / propagated estimate; must stay <= 10) on every run, and
// on a commuting generator A(t) = f(t) A0, where Omega6 - Omega4 vanishes identically while
// the quadrature error of the Gauss rule does not.
//
//   ordex_bench_magnus_estimators [--quick]
#include <Eigen/Dense>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <functional>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "propagation/expm.hpp"

namespace {

using Eigen::MatrixXd;
using Fill = std::function<void(double, MatrixXd&)>;

enum class Estimate { Doubling, Embedded };

struct Outcome {
  MatrixXd phi;
  double estimate = 0;  // largest entry of the propagated error estimate
  long steps = 0, rejected = 0, exponentials = 0, evaluations = 0;
  bool ok = true;
};

class Magnus6 {
 public:
  Magnus6(Fill a, int n) : a_(std::move(a)) {
    for (auto* m : {&a1_, &a2_, &a3_, &om_, &delta_}) m->resize(n, n);
  }

  /// S = exp(Omega6) on [t, t + h]; DELTA = Omega6 - Omega4 (same nodes) when WANT_DELTA.
  void step(double t, double h, MatrixXd& S, bool want_delta, Outcome& out) {
    const double d = std::sqrt(15.0) / 10.0;
    a_(t + (0.5 - d) * h, a1_);
    a_(t + 0.5 * h, a2_);
    a_(t + (0.5 + d) * h, a3_);
    out.evaluations += 3;
    MatrixXd al1 = h * a2_, al2 = (std::sqrt(15.0) * h / 3.0) * (a3_ - a1_);
    MatrixXd al3 = (10.0 * h / 3.0) * (a3_ - 2.0 * a2_ + a1_);
    MatrixXd c1 = al1 * al2 - al2 * al1;
    MatrixXd r = 2.0 * al3 + c1;
    MatrixXd c2 = (-1.0 / 60.0) * (al1 * r - r * al1);
    MatrixXd left = -20.0 * al1 - al3 + c1, right = al2 + c2;
    MatrixXd comm = (1.0 / 240.0) * (left * right - right * left);
    om_ = al1 + al3 / 12.0 + comm;
    if (want_delta) delta_ = comm + c1 / 12.0;  // Omega4 = alpha1 + alpha3/12 - C1/12
    expm_.compute(om_, S);
    ++out.exponentials;
  }

  Outcome run(double t0, double t1, double rtol, double atol, Estimate mode) {
    const Eigen::Index n = a1_.rows();
    Outcome out;
    MatrixXd X = MatrixXd::Identity(n, n), E = MatrixXd::Zero(n, n), full, h1, h2, half, xnew, err;
    const double p = mode == Estimate::Doubling ? 6.0 : 4.0;  // order of the estimated error
    a_(t0, a1_);
    double h = 0.5 * std::pow(rtol, 1.0 / 7.0) / std::max(1e-300, a1_.cwiseAbs().rowwise().sum().maxCoeff());
    double t = t0;
    while (t < t1) {
      double hs = std::min(h, t1 - t);
      bool last = hs >= (t1 - t) * (1 - 1e-12);
      if (last) hs = t1 - t;
      if (mode == Estimate::Doubling) {
        step(t, hs, full, false, out);
        step(t, hs / 2, h1, false, out);
        step(t + hs / 2, hs / 2, h2, false, out);
        half.noalias() = h2 * h1;
        xnew.noalias() = half * X;
        err.noalias() = (half - full) * X;
        err /= (std::pow(2.0, 6) - 1.0);
      } else {
        step(t, hs, half, true, out);
        xnew.noalias() = half * X;
        err.noalias() = delta_ * xnew;  // exp(Omega6) - exp(Omega4) ~ (Omega6 - Omega4) exp(Omega6)
      }
      double sum = 0;
      for (Eigen::Index k = 0; k < err.size(); ++k) {
        double q = err(k) / (atol + rtol * std::abs(xnew(k)));
        sum += q * q;
      }
      double e = std::sqrt(sum / static_cast<double>(err.size()));
      double factor = e > 0 ? 0.9 * std::pow(e, -1.0 / (p + 1.0)) : 5.0;
      factor = std::min(5.0, std::max(0.2, factor));
      if (e <= 1.0) {
        E = half * E + err;
        X.swap(xnew);
        t = last ? t1 : t + hs;
        ++out.steps;
        h = hs * factor;
      } else {
        ++out.rejected;
        h = hs * factor;
      }
      if (h < 1e-14 * std::max(1.0, std::abs(t)) || out.steps + out.rejected > 5000000) {
        out.ok = false;
        break;
      }
    }
    out.phi = X;
    out.estimate = E.cwiseAbs().maxCoeff();
    return out;
  }

 private:
  Fill a_;
  MatrixXd a1_, a2_, a3_, om_, delta_;
  ordex::MatrixExponential expm_;
};

double seconds_per_run(const std::function<void()>& f, double min_time) {
  double best = std::numeric_limits<double>::infinity();
  for (int rep = 0; rep < 3; ++rep) {
    auto start = std::chrono::steady_clock::now();
    long runs = 0;
    double elapsed = 0;
    do {
      f();
      ++runs;
      elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    } while (elapsed < min_time);
    best = std::min(best, elapsed / static_cast<double>(runs));
  }
  return best;
}

struct Case {
  std::string name;
  int n;
  Fill a;
  double t0, t1;
};

Case random_case(int n) {
  // As bench_propagation.cpp's randomN: entries of variance 1/n from a fixed-seed mt19937_64.
  std::mt19937_64 gen(20261201u + static_cast<std::uint64_t>(n));
  auto uniform = [&gen] { return static_cast<double>(gen() >> 11) * 0x1.0p-52 - 1.0; };
  const double s = std::sqrt(3.0 / n);
  std::vector<MatrixXd> m(3, MatrixXd(n, n));
  for (int k = 0; k < 3; ++k)
    for (Eigen::Index i = 0; i < m[k].size(); ++i) m[k](i) = (k == 0 ? 1.0 : 0.5) * s * uniform();
  return {"random" + std::to_string(n), n,
          [m](double t, MatrixXd& out) { out = m[0] + std::sin(1.7 * t) * m[1] + std::cos(2.3 * t) * m[2]; },
          0.0, 5.0};
}

Case commuting_case() {
  MatrixXd a0(3, 3);
  a0 << -0.2, 1.0, 0.3, -1.0, -0.1, 0.5, 0.0, -0.4, -0.3;
  return {"commuting3", 3, [a0](double t, MatrixXd& out) { out = (1.0 + 0.5 * std::sin(t)) * a0; }, 0.3, 7.0};
}

}  // namespace

int main(int argc, char** argv) {
  const bool quick = argc > 1 && std::strcmp(argv[1], "--quick") == 0;
  const double min_time = quick ? 0.02 : 0.2;
  std::vector<Case> cases;
  cases.push_back(commuting_case());
  cases.push_back(random_case(quick ? 12 : 24));
  if (!quick) cases.push_back(random_case(48));
  std::printf("%-11s %-9s %8s %10s %10s %7s %7s %6s %11s %s\n", "case", "estimate", "rtol", "error",
              "err/est", "steps", "reject", "exps", "seconds", "");
  for (Case& c : cases) {
    Magnus6 m(c.a, c.n);
    MatrixXd ref;
    if (c.name == "commuting3") {
      // Closed form: A(t) = f(t) A0 commutes with itself, Phi = exp(A0 int f).
      MatrixXd a0(3, 3);
      c.a(0.0, a0);  // f(0) = 1
      const double integral = (c.t1 - c.t0) - 0.5 * (std::cos(c.t1) - std::cos(c.t0));
      ordex::MatrixExponential e;
      e.compute(a0 * integral, ref);
    } else {
      ref = m.run(c.t0, c.t1, 1e-14, 1e-17, Estimate::Doubling).phi;
      const MatrixXd check = m.run(c.t0, c.t1, 1e-13, 1e-16, Estimate::Doubling).phi;
      std::printf("# %s reference check (rtol 1e-13 against 1e-14): %.2e\n", c.name.c_str(),
                  (check - ref).cwiseAbs().maxCoeff() / ref.cwiseAbs().maxCoeff());
    }
    const double scale = ref.cwiseAbs().maxCoeff();
    for (Estimate mode : {Estimate::Doubling, Estimate::Embedded}) {
      const char* label = mode == Estimate::Doubling ? "doubling" : "embedded";
      bool matched9 = false, matched12 = false;
      for (int k = 10; k <= 28; ++k) {  // rtol = 10^(-k/2)
        const double rtol = std::pow(10.0, -0.5 * k), atol = 1e-3 * rtol;
        Outcome o = m.run(c.t0, c.t1, rtol, atol, mode);
        const double err = (o.phi - ref).cwiseAbs().maxCoeff();
        const double rel = err / scale;
        const char* mark = "";
        bool time_it = false;
        if (!matched9 && rel <= 1e-9) { matched9 = true; mark = "<- matched 1e-9"; time_it = true; }
        else if (!matched12 && rel <= 1e-12) { matched12 = true; mark = "<- matched 1e-12"; time_it = true; }
        double secs = -1;
        if (time_it) secs = seconds_per_run([&] { m.run(c.t0, c.t1, rtol, atol, mode); }, min_time);
        std::printf("%-11s %-9s %8.1e %10.2e %10.2e %7ld %7ld %6ld %11.4e %s%s\n", c.name.c_str(), label, rtol,
                    rel, o.estimate > 0 ? err / o.estimate : std::numeric_limits<double>::infinity(), o.steps,
                    o.rejected, o.exponentials, secs, mark, o.ok ? "" : " FAILED");
      }
    }
  }
  std::printf("(error = max |Phi - ref| / max |ref|; err/est = actual / estimated error, honest when <= 10;\n"
              " seconds = best of 3 mean times, only at the first rtol matching 1e-9 and 1e-12)\n");
  return 0;
}
