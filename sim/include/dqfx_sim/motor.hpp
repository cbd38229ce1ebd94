// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): a permanent-magnet synchronous motor in the rotor
/// (d/q) frame, surface (Ld = Lq) or interior (Ld != Lq) magnets, SI units, double.
///
///   Ld did/dt = vd - R id + we Lq iq
///   Lq diq/dt = vq - R iq - we Ld id - we psi
///   Te = 1.5 p (psi iq + (Ld - Lq) id iq)
///   J dwm/dt = Te - B wm - TL,   dtheta_m/dt = wm,   we = p wm,   theta_e = p theta_m
///
/// Amplitude-invariant d/q (a phase current of amplitude I is a d/q vector of length I),
/// d along the magnet flux, q 90 electrical degrees ahead, as in the kernels. The
/// equations and the torque are those of Krause, Wasynczuk and Sudhoff, "Analysis of
/// Electric Machinery and Drive Systems" (Wiley), in the rotor reference frame. The
/// voltage arrives in the stationary frame (what an inverter applies) and is turned into
/// the rotor frame at the rotor angle of each Runge-Kutta stage.

#include <cmath>
#include <string>

#include "dqfx_sim/integration.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

inline constexpr double pi = 3.14159265358979323846;

/// Motor data, SI.
struct motor_parameters {
  double resistance = 0.0;  ///< ohm, per phase
  double ld = 0.0;          ///< H, d-axis inductance
  double lq = 0.0;          ///< H, q-axis inductance (> ld for interior magnets)
  double flux = 0.0;        ///< Wb, peak phase flux linkage of the magnet
  unsigned pole_pairs = 0;
  double inertia = 0.0;     ///< kg*m^2, rotor and load
  double friction = 0.0;    ///< N*m*s/rad, viscous
};

/// What the motor remembers.
struct motor_state {
  double id = 0.0;        ///< A
  double iq = 0.0;        ///< A
  double speed = 0.0;     ///< mechanical rad/s
  double position = 0.0;  ///< mechanical rad, not wrapped (encoder counts follow it)

  friend motor_state operator+(const motor_state& a, const motor_state& b) {
    return {a.id + b.id, a.iq + b.iq, a.speed + b.speed, a.position + b.position};
  }
  friend motor_state operator*(double h, const motor_state& a) {
    return {h * a.id, h * a.iq, h * a.speed, h * a.position};
  }
};

/// A voltage in the stationary frame, V.
struct stationary_voltage {
  double alpha = 0.0;
  double beta = 0.0;
};

/// Three phase quantities in double (SI).
struct three_phase {
  double a = 0.0, b = 0.0, c = 0.0;
};

/// Refuses unphysical motor data, naming the value: non-finite numbers, resistance < 0,
/// inductance <= 0, flux < 0, zero pole pairs, inertia <= 0, friction < 0.
inline status check(const motor_parameters& m) {
  auto need = [](bool good, const char* what, double v) {
    return good ? status{} : status::failure(std::string{"motor: "} + what + " (got " + text(v) + ")");
  };
  status s;
  s.also(need(std::isfinite(m.resistance) && m.resistance >= 0, "resistance must be >= 0 ohm", m.resistance))
      .also(need(std::isfinite(m.ld) && m.ld > 0, "ld must be a positive inductance in H", m.ld))
      .also(need(std::isfinite(m.lq) && m.lq > 0, "lq must be a positive inductance in H", m.lq))
      .also(need(std::isfinite(m.flux) && m.flux >= 0, "flux linkage must be >= 0 Wb", m.flux))
      .also(need(m.pole_pairs > 0, "pole_pairs must be at least 1", m.pole_pairs))
      .also(need(std::isfinite(m.inertia) && m.inertia > 0, "inertia must be positive in kg*m^2", m.inertia))
      .also(need(std::isfinite(m.friction) && m.friction >= 0, "friction must be >= 0 N*m*s/rad", m.friction));
  return s;
}

/// The motor's equations.
class motor {
 public:
  motor() = default;
  explicit motor(const motor_parameters& p) : p_{p} {}

  const motor_parameters& parameters() const noexcept { return p_; }

  /// Electromagnetic torque, N*m.
  double torque(double id, double iq) const noexcept {
    return 1.5 * p_.pole_pairs * (p_.flux * iq + (p_.ld - p_.lq) * id * iq);
  }
  double torque(const motor_state& x) const noexcept { return torque(x.id, x.iq); }
  /// Electrical speed, rad/s.
  double electrical_speed(const motor_state& x) const noexcept { return p_.pole_pairs * x.speed; }
  /// Electrical angle, rad, wrapped into [0, 2*pi).
  double electrical_angle(const motor_state& x) const noexcept {
    const double e = std::fmod(p_.pole_pairs * x.position, 2 * pi);
    return e < 0 ? e + 2 * pi : e;
  }
  /// Phase currents (inverse Park then inverse Clarke, amplitude-invariant).
  three_phase currents(const motor_state& x) const noexcept {
    const double th = p_.pole_pairs * x.position;
    const double c = std::cos(th), s = std::sin(th);
    const double alpha = x.id * c - x.iq * s, beta = x.id * s + x.iq * c;
    const double h = std::sqrt(3.0) / 2;
    return {alpha, -alpha / 2 + h * beta, -alpha / 2 - h * beta};
  }

  /// dx/dt for the stationary voltage v and load torque (N*m, opposing positive speed
  /// when positive).
  motor_state derivative(const motor_state& x, stationary_voltage v, double load_torque) const noexcept {
    const double th = p_.pole_pairs * x.position;
    const double c = std::cos(th), s = std::sin(th);
    const double vd = v.alpha * c + v.beta * s, vq = -v.alpha * s + v.beta * c;
    const double we = p_.pole_pairs * x.speed;
    motor_state d;
    d.id = (vd - p_.resistance * x.id + we * p_.lq * x.iq) / p_.ld;
    d.iq = (vq - p_.resistance * x.iq - we * p_.ld * x.id - we * p_.flux) / p_.lq;
    d.speed = (torque(x) - p_.friction * x.speed - load_torque) / p_.inertia;
    d.position = x.speed;
    return d;
  }

  /// One RK4 step of h seconds with the voltage and load held.
  motor_state step(const motor_state& x, stationary_voltage v, double load_torque, double h) const {
    return rk4_step([&](double, const motor_state& y) { return derivative(y, v, load_torque); }, 0.0, x, h);
  }

  /// Upper bound of |lambda| of the electrical equations at electrical speeds up to
  /// `max_electrical_speed` (rad/s): the eigenvalues of [[-R/Ld, we Lq/Ld],
  /// [-we Ld/Lq, -R/Lq]] lie within R/min(Ld, Lq) + |we|.
  double fastest_rate(double max_electrical_speed) const noexcept {
    const double l = p_.ld < p_.lq ? p_.ld : p_.lq;
    return p_.resistance / l + std::fabs(max_electrical_speed);
  }

 private:
  motor_parameters p_{};
};

/// Refuses a step that RK4 cannot take stably on this motor at electrical speeds up to
/// `max_electrical_speed` (rad/s): h * (R/min(L) + we) must stay within
/// `stable_step_radius`. The message gives the largest step that would be accepted.
inline status check_step(const motor_parameters& m, double step, double max_electrical_speed) {
  if (!(std::isfinite(step) && step > 0))
    return status::failure("integration step must be a positive time in s (got " + text(step) + ")");
  const status valid = check(m);
  if (!valid) return valid;
  const double rate = motor{m}.fastest_rate(max_electrical_speed);
  if (step * rate > stable_step_radius)
    return status::failure("integration step " + text(step) + " s is too large for stability: R/min(L) + we = " +
                           text(rate) + " 1/s needs a step of at most " + text(stable_step_radius / rate) +
                           " s (use more steps per PWM period)");
  return {};
}

}  // namespace dqfx::sim
