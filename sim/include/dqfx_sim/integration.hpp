// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): the classical fourth-order Runge-Kutta step, for any
/// state type with `x + y` and `h * x`.
///
/// RK4 is stable for h*lambda inside its stability region, which contains the left
/// half-disc of radius 2.61 (computed by scanning |1 + z + z^2/2 + z^3/6 + z^4/24| <= 1;
/// the region reaches -2.785 on the real axis and 2*sqrt(2) on the imaginary axis).
/// `stable_step_radius` keeps a margin below that.

namespace dqfx::sim {

/// Largest h*|lambda| the simulator accepts (the half-disc radius 2.61, with margin).
inline constexpr double stable_step_radius = 2.5;

/// One RK4 step of dx/dt = f(t, x) from (t, x) over h.
template <class State, class Derivative>
State rk4_step(const Derivative& f, double t, const State& x, double h) {
  const State k1 = f(t, x);
  const State k2 = f(t + h / 2, x + (h / 2) * k1);
  const State k3 = f(t + h / 2, x + (h / 2) * k2);
  const State k4 = f(t + h, x + h * k3);
  return x + (h / 6) * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
}

}  // namespace dqfx::sim
