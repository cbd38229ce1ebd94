// SPDX-License-Identifier: MIT
#pragma once
// Textbook speed loop in double, written from the published law, not from dqfx: a ramp
// of limited slope, then the PI with set-point weighting of Astrom and Hagglund
// ("Advanced PID Control", ISA, 2006)
//   u = kp*(b*r - y) + x,  output clamp(u, lo, hi),  x += ki*(r - y) + kt*(output - u)
// (back-calculation anti-windup, same book).

namespace reference {

struct weighted_speed_pi {
  double kp = 0, ki = 0, kt = 0, b = 1, lo = -1, hi = 1;
  double step_limit = 2, speed_limit = 1;
  double ramp = 0, x = 0;

  double step(double target, double measured) {
    const double t = target > speed_limit ? speed_limit : (target < -speed_limit ? -speed_limit : target);
    const double move = t - ramp;
    ramp += move > step_limit ? step_limit : (move < -step_limit ? -step_limit : move);
    const double unlimited = kp * (b * ramp - measured) + x;
    const double out = unlimited > hi ? hi : (unlimited < lo ? lo : unlimited);
    x += ki * (ramp - measured) + kt * (out - unlimited);
    return out;
  }
};

}  // namespace reference
