// SPDX-License-Identifier: MIT
#pragma once
// A permanent-magnet synchronous motor with its shaft, in SI units and plain double, for
// the estimators' closed-loop tests (written apart from the library). d/q equations
// (amplitude-invariant) and torque as in Krause, Wasynczuk and Sudhoff, "Analysis of
// Electric Machinery and Drive Systems":
//   Ld did/dt = vd - R id + we Lq iq,   Lq diq/dt = vq - R iq - we Ld id - we psi
//   Te = 1.5 p (psi iq + (Ld - Lq) id iq),   J dwm/dt = Te - B wm - TL
// The inverter is ideal (average model): the stationary voltage is held over each period
// and turned into d/q at the rotor angle of every Runge-Kutta stage. The speed can also
// be imposed (a dynamometer), then the mechanical equation is not used.
// Also the textbook alpha-beta tracker (a type-2 PLL) in radians, for the PLL tests.

#include <cmath>

namespace reference {

constexpr double pi = 3.14159265358979323846;

struct pmsm {
  // Invented motor (not a real product), set by the tests.
  double r = 0, ld = 0, lq = 0, psi = 0, inertia = 1, friction = 0;
  int pole_pairs = 1;
  // State.
  double id = 0, iq = 0, wm = 0, theta_m = 0;  // A, A, mechanical rad/s, mechanical rad (unwrapped)
  bool speed_imposed = false;

  double theta_e() const { return pole_pairs * theta_m; }
  double we() const { return pole_pairs * wm; }
  double torque() const { return 1.5 * pole_pairs * (psi * iq + (ld - lq) * id * iq); }
  void stationary_current(double& alpha, double& beta) const {
    const double c = std::cos(theta_e()), s = std::sin(theta_e());
    alpha = id * c - iq * s;
    beta = id * s + iq * c;
  }

  // Advances by dt seconds with the stationary voltage (V) and load torque (N*m) held.
  void advance(double v_alpha, double v_beta, double load, double dt, int substeps = 4) {
    const double h = dt / substeps;
    for (int n = 0; n < substeps; ++n) {
      double x[4] = {id, iq, wm, theta_m};
      double k[4][4];
      auto f = [&](const double* y, double* dy) {
        const double th = pole_pairs * y[3], w = pole_pairs * y[2];
        const double c = std::cos(th), s = std::sin(th);
        const double vd = v_alpha * c + v_beta * s, vq = -v_alpha * s + v_beta * c;
        dy[0] = (vd - r * y[0] + w * lq * y[1]) / ld;
        dy[1] = (vq - r * y[1] - w * ld * y[0] - w * psi) / lq;
        const double te = 1.5 * pole_pairs * (psi * y[1] + (ld - lq) * y[0] * y[1]);
        dy[2] = speed_imposed ? 0.0 : (te - friction * y[2] - load) / inertia;
        dy[3] = y[2];
      };
      double y[4];
      f(x, k[0]);
      for (int i = 0; i < 4; ++i) y[i] = x[i] + h / 2 * k[0][i];
      f(y, k[1]);
      for (int i = 0; i < 4; ++i) y[i] = x[i] + h / 2 * k[1][i];
      f(y, k[2]);
      for (int i = 0; i < 4; ++i) y[i] = x[i] + h * k[2][i];
      f(y, k[3]);
      id += h / 6 * (k[0][0] + 2 * k[1][0] + 2 * k[2][0] + k[3][0]);
      iq += h / 6 * (k[0][1] + 2 * k[1][1] + 2 * k[2][1] + k[3][1]);
      wm += h / 6 * (k[0][2] + 2 * k[1][2] + 2 * k[2][2] + k[3][2]);
      theta_m += h / 6 * (k[0][3] + 2 * k[1][3] + 2 * k[2][3] + k[3][3]);
    }
  }
};

// Wraps an angle difference into [-pi, pi).
inline double wrap(double a) { return a - 2 * pi * std::floor((a + pi) / (2 * pi)); }

// The textbook alpha-beta tracker on angles in radians: predict with the speed, correct
// the angle by alpha*e and the speed (rad per sample) by beta*e, e wrapped.
struct alpha_beta_tracker {
  double alpha = 0, beta = 0;
  double angle = 0, rate = 0;  // rad, rad per sample
  void update(double measured) {
    const double predicted = angle + rate;
    const double e = wrap(measured - predicted);
    angle = wrap(predicted + alpha * e);
    rate += beta * e;
  }
};

// Gains of a discrete type-2 loop whose poles are exp(s Ts) of s^2 + 2 zeta wn s + wn^2,
// from z^2 - (2 - alpha - beta) z + (1 - alpha) (computed here with libm).
inline void matched_gains(double wn, double zeta, double ts, double& alpha, double& beta) {
  const double r = std::exp(-zeta * wn * ts);
  const double c = zeta < 1 ? std::cos(wn * std::sqrt(1 - zeta * zeta) * ts)
                             : std::cosh(wn * std::sqrt(zeta * zeta - 1) * ts);
  alpha = 1 - r * r;
  beta = 1 + r * r - 2 * r * c;
}

}  // namespace reference
