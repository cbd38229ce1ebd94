// SPDX-License-Identifier: MIT
#pragma once
// Textbook discrete PI in plain double, written apart from the library: the reference
// the library's regulator is compared with. Parallel form, forward-Euler integrator:
//   v = kp*e + x + ff,  u = min(max(v, lo), hi),  x += ki*e (+ anti-windup term).
// Anti-windup as described by Astrom and Hagglund, "Advanced PID Control", 2006:
// clamping stops integrating while the output is limited and the error drives it
// further; back-calculation adds kt*(u - v).

namespace reference {

enum class windup { none, clamping, tracking };

struct pi {
  double kp = 0, ki = 0, kt = 0;
  double lo = -1, hi = 1;
  windup mode = windup::tracking;
  // The sum kp*e + x + ff is kept within +/-range (the documented headroom of a
  // fixed-point regulator, 256; unbounded for floating point).
  double range = 1e300;
  double x = 0;

  double unlimited(double e, double ff) const { return limit(kp * e + x + ff, -range, range); }
  static double limit(double v, double lo_, double hi_) { return v > hi_ ? hi_ : (v < lo_ ? lo_ : v); }

  // Integrates given the output that was applied after any external limiting.
  void integrate(double e, double v, double applied) {
    const double di = ki * e;
    switch (mode) {
      case windup::none: x += di; break;
      case windup::clamping:
        if (!((v > applied && di > 0) || (v < applied && di < 0))) x += di;
        break;
      case windup::tracking: x += di + kt * (applied - v); break;
    }
  }

  double step(double e, double ff = 0) {
    const double v = unlimited(e, ff);
    const double u = limit(v, lo, hi);
    integrate(e, v, u);
    return u;
  }
};

}  // namespace reference
