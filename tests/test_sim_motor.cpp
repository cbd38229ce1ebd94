// SPDX-License-Identifier: MIT
// The simulator's motor model: refusal of unphysical data, and outside checks of the
// equations (Faraday's law for the back-EMF, power balance and Krause's torque formula).
#include <doctest/doctest.h>

#include <cmath>

#include "dqfx_sim/motor.hpp"

namespace {

using namespace dqfx::sim;

// Invented interior-magnet motor (not a real product).
motor_parameters interior() {
  motor_parameters m;
  m.resistance = 0.08;
  m.ld = 120e-6;
  m.lq = 200e-6;
  m.flux = 0.0065;
  m.pole_pairs = 4;
  m.inertia = 4e-5;
  m.friction = 1e-5;
  return m;
}

// dx/dt with the speed held (a shaft driven by a stiff dynamometer) and a d/q voltage
// applied in the stationary frame at the rotor angle of each stage.
motor_state held_speed_step(const motor& m, motor_state x, double vd, double vq, double h) {
  auto f = [&](double, const motor_state& y) {
    const double th = m.parameters().pole_pairs * y.position;
    const stationary_voltage v{vd * std::cos(th) - vq * std::sin(th), vd * std::sin(th) + vq * std::cos(th)};
    motor_state d = m.derivative(y, v, 0.0);
    d.speed = 0.0;
    return d;
  };
  return rk4_step(f, 0.0, x, h);
}

}  // namespace

TEST_CASE("sim motor: unphysical parameters are refused with a message naming the value") {
  CHECK(check(interior()).ok());
  auto refused = [](motor_parameters m, const char* word) {
    const status s = check(m);
    CHECK_FALSE(s.ok());
    CHECK(s.message().find(word) != std::string::npos);
  };
  motor_parameters m = interior();
  m.ld = -1e-4;
  refused(m, "ld must be a positive inductance");
  m = interior();
  m.lq = 0.0;
  refused(m, "lq must be a positive inductance");
  m = interior();
  m.pole_pairs = 0;
  refused(m, "pole_pairs must be at least 1");
  m = interior();
  m.resistance = -0.1;
  refused(m, "resistance");
  m = interior();
  m.inertia = 0.0;
  refused(m, "inertia");
  m = interior();
  m.flux = std::nan("");
  refused(m, "flux");
  m = interior();
  m.friction = -1.0;
  refused(m, "friction");
}

TEST_CASE("sim motor: a step too large for RK4 is refused, with the largest step accepted") {
  const motor_parameters m = interior();
  const double we = 2 * pi * 1000;
  CHECK(check_step(m, 5e-6, we).ok());
  const status s = check_step(m, 1e-3, we);
  REQUIRE_FALSE(s.ok());
  CHECK(s.message().find("too large for stability") != std::string::npos);
  // The bound: h * (R/min(L) + we) <= 2.5.
  const double largest = stable_step_radius / (m.resistance / m.ld + we);
  CHECK(check_step(m, largest * 0.999, we).ok());
  CHECK_FALSE(check_step(m, largest * 1.001, we).ok());
  CHECK_FALSE(check_step(m, 0.0, we).ok());
  motor_parameters bad = m;
  bad.ld = -1.0;
  CHECK(check_step(bad, 1e-6, we).message().find("ld") != std::string::npos);
}

// Faraday's law: with no current, the phase voltage is the derivative of the magnet's flux
// linkage psi*cos(theta_e - k*120 deg), whose amplitude is we*psi (textbook fact; e.g.
// Krause, Wasynczuk and Sudhoff, "Analysis of Electric Machinery and Drive Systems").
// Applying exactly that phase-domain voltage, written here without the d/q equations,
// must keep the model's currents at zero over many turns.
TEST_CASE("sim motor: the no-load back-EMF is electrical speed times flux linkage") {
  const motor m{interior()};
  const double psi = m.parameters().flux;
  motor_state x;
  x.speed = 2 * pi * 50;  // mechanical rad/s
  const double we = m.electrical_speed(x);
  const double h = 1e-6;
  double largest = 0;
  for (int k = 0; k < 20000; ++k) {
    auto f = [&](double, const motor_state& y) {
      const double th = m.parameters().pole_pairs * y.position;
      // e_alpha,beta = d/dt psi*(cos th, sin th) = we*psi*(-sin th, cos th)
      motor_state d = m.derivative(y, {-we * psi * std::sin(th), we * psi * std::cos(th)}, 0.0);
      d.speed = 0.0;
      return d;
    };
    x = rk4_step(f, 0.0, x, h);
    largest = std::fmax(largest, std::hypot(x.id, x.iq));
  }
  CHECK(largest < 1e-9);
  // The invented motor at 3000 rpm: 4 pole pairs, 0.0065 Wb -> 8.17 V peak per phase.
  CHECK(2 * pi * 50 * 4 * psi == doctest::Approx(8.168).epsilon(1e-3));
}

// Steady state at a held speed: the currents solve the steady voltage equations, and the
// torque 1.5*p*(psi*iq + (Ld-Lq)*id*iq) (Krause, Wasynczuk and Sudhoff, "Analysis of
// Electric Machinery and Drive Systems") equals the air-gap power balance
// (input power - copper loss) / mechanical speed.
TEST_CASE("sim motor: steady-state torque equals Krause's formula and the power balance") {
  const motor m{interior()};
  const motor_parameters& p = m.parameters();
  motor_state x;
  x.speed = 2 * pi * 30;
  const double we = m.electrical_speed(x);
  const double vd = -1.5, vq = 6.0;
  for (int k = 0; k < 100000; ++k) x = held_speed_step(m, x, vd, vq, 1e-6);  // 0.1 s >> L/R
  // Steady voltage equations solved directly (2x2 linear system).
  const double a = p.resistance, b = -we * p.lq, c = we * p.ld, d = p.resistance;
  const double rhs_q = vq - we * p.flux, det = a * d - b * c;
  const double id = (vd * d - b * rhs_q) / det, iq = (a * rhs_q - c * vd) / det;
  CHECK(x.id == doctest::Approx(id).epsilon(1e-9));
  CHECK(x.iq == doctest::Approx(iq).epsilon(1e-9));
  const double krause = 1.5 * p.pole_pairs * (p.flux * iq + (p.ld - p.lq) * id * iq);
  const double air_gap = (1.5 * (vd * id + vq * iq) - 1.5 * p.resistance * (id * id + iq * iq)) / x.speed;
  CHECK(m.torque(x) == doctest::Approx(krause).epsilon(1e-9));
  CHECK(air_gap == doctest::Approx(krause).epsilon(1e-9));
  CHECK(std::fabs(id) > 1.0);  // a reluctance share of the torque is really present
}
