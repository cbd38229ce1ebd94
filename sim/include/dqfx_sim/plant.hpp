// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): motor, inverter, DC bus and sensors together,
/// advanced one PWM period at a time.
///
/// A period k starts at t_k = k*T. There the sensors are sampled (all low sides on:
/// the centre of the zero vector), the controller computes duties, and the bridge uses
/// them from t_k + delay*T on (`duty_delay` 1: loaded into shadow registers for the
/// next period, as most timers do; 0: at once, an idealised controller). Within the
/// period the state is integrated by RK4 with `steps_per_period` equal steps (average
/// model), or piece by piece between switching edges with steps no longer than T /
/// steps_per_period (switched model). Encoder and Hall edges are timed by linear
/// interpolation within the step in which they happen (what a capture timer records).

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <string>

#include "dqfx_sim/integration.hpp"
#include "dqfx_sim/inverter.hpp"
#include "dqfx_sim/motor.hpp"
#include "dqfx_sim/sensors.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

struct plant_parameters {
  motor_parameters motor{};
  inverter_parameters inverter{};
  bus_parameters bus{};
  adc_parameters adc{};
  encoder_parameters encoder{};
  hall_parameters hall{};
  unsigned steps_per_period = 8;  ///< RK4 steps per PWM period (at least 1)
  unsigned duty_delay = 1;        ///< periods from sampling to the duties taking effect: 0 or 1
  /// Mechanical rad/s beyond which a run stops (overspeed), and up to which the step
  /// is checked for stability. 0: twice the no-load speed at the source voltage.
  double speed_limit = 0.0;
};

/// The integrated state: the motor and the bus capacitor voltage.
struct plant_state {
  motor_state motor{};
  double bus_voltage = 0.0;  ///< V (follows the algebraic bus when there is no capacitor)

  friend plant_state operator+(const plant_state& a, const plant_state& b) {
    return {a.motor + b.motor, a.bus_voltage + b.bus_voltage};
  }
  friend plant_state operator*(double h, const plant_state& a) { return {h * a.motor, h * a.bus_voltage}; }
};

/// What the controller's hardware reads at the start of a period.
struct readings {
  double time = 0.0;                         ///< s, start of the period
  std::uint64_t period = 0;                  ///< index k
  std::array<std::uint16_t, 3> current_code{};  ///< phase a, b, c ADC codes
  three_phase current{};                     ///< the codes in A at the nominal gain (offset error kept)
  double bus_voltage = 0.0;                  ///< V
  std::uint32_t encoder_count = 0;           ///< free-running counter (low 16 bits for a 16-bit timer)
  double encoder_edge_time = 0.0;            ///< s, last counter change (capture); -1 before the first
  std::uint8_t hall = 0;                     ///< bit 0 a, bit 1 b, bit 2 c
  double hall_edge_time = 0.0;               ///< s, last Hall change (capture); -1 before the first
};

/// The speed limit a plant uses (see `plant_parameters::speed_limit`).
inline double speed_limit_of(const plant_parameters& p) {
  if (p.speed_limit > 0) return p.speed_limit;
  const double psi = p.motor.flux > 0 ? p.motor.flux : 1e-3;
  const unsigned pp = p.motor.pole_pairs > 0 ? p.motor.pole_pairs : 1;
  return 2.0 * p.bus.source_voltage / std::sqrt(3.0) / psi / pp;
}

/// Every parameter check, including the step size against the fastest rate of the
/// motor at the speed limit and of the bus (1/(R C) and the L-C exchange
/// sqrt(2/(min(L) C))), with the margin of `stable_step_radius`.
inline status check(const plant_parameters& p) {
  status s = check(p.motor);
  s.also(check(p.inverter, p.bus)).also(check(p.adc, p.encoder, p.hall));
  if (!s) return s;
  if (p.steps_per_period < 1) return status::failure("plant: steps_per_period must be at least 1 (got 0)");
  if (p.duty_delay > 1) return status::failure("plant: duty_delay must be 0 or 1 (got " + text(p.duty_delay) + ")");
  if (!(std::isfinite(p.speed_limit) && p.speed_limit >= 0))
    return status::failure("plant: speed_limit must be >= 0 (got " + text(p.speed_limit) + ")");
  const double h = 1.0 / (p.inverter.pwm_frequency * p.steps_per_period);
  const double we = speed_limit_of(p) * p.motor.pole_pairs;
  s = check_step(p.motor, h, we);
  if (!s) return status::failure(s.message() + "; steps_per_period is " + text(p.steps_per_period));
  // The dead-time current band acts as a resistance Vdc*td/T/band per phase (average
  // model) or Vdc/(2*band) during a dead-time piece of length td (switched model).
  if (p.inverter.dead_time > 0 && p.inverter.current_band > 0) {
    const double l = p.motor.ld < p.motor.lq ? p.motor.ld : p.motor.lq;
    const double vdc = p.bus.source_voltage;
    const bool average = p.inverter.model == inverter_model::average;
    const double rate = average ? vdc * p.inverter.dead_time * p.inverter.pwm_frequency / p.inverter.current_band / l
                                : vdc / (2 * p.inverter.current_band) / l;
    const double step = average ? h : std::min(h, p.inverter.dead_time);
    if (step * rate > stable_step_radius)
      return status::failure("inverter: current_band " + text(p.inverter.current_band) +
                             " A is too narrow for stable integration of the dead time (step " + text(step) +
                             " s, rate " + text(rate) + " 1/s): widen it to at least " +
                             text(p.inverter.current_band * step * rate / stable_step_radius) +
                             " A or raise steps_per_period");
  }
  if (p.bus.capacitance > 0) {
    const double l = p.motor.ld < p.motor.lq ? p.motor.ld : p.motor.lq;
    const double rate = 1.0 / (p.bus.source_resistance * p.bus.capacitance) + std::sqrt(2.0 / (l * p.bus.capacitance));
    if (h * rate > stable_step_radius)
      return status::failure("integration step " + text(h) + " s is too large for stability of the DC bus (rate " +
                             text(rate) + " 1/s, step at most " + text(stable_step_radius / rate) +
                             " s): raise steps_per_period");
  }
  return {};
}

/// Motor, inverter, bus and sensors. Construct, `check()`, then per period:
/// `sample()`, `apply(duties)`, `advance(load_torque)`.
class plant {
 public:
  explicit plant(const plant_parameters& p, const motor_state& initial = {})
      : p_{p}, motor_{p.motor}, inverter_{p.inverter}, adc_{p.adc}, checked_{sim::check(p)} {
    x_.motor = initial;
    x_.bus_voltage = p.bus.source_voltage;
    bus_voltage_ = p.bus.source_voltage;
    edges_ = encoder_edges(p_.encoder, x_.motor.position);
    hall_ = hall_state(p_.hall, motor_.electrical_angle(x_.motor));
  }

  /// The parameter check done at construction; a refused plant does not advance.
  const status& check() const noexcept { return checked_; }
  const plant_parameters& parameters() const noexcept { return p_; }
  const motor& motor_model() const noexcept { return motor_; }
  const plant_state& state() const noexcept { return x_; }
  double time() const noexcept { return static_cast<double>(period_) * inverter_.period(); }
  std::uint64_t period_index() const noexcept { return period_; }
  double period() const noexcept { return inverter_.period(); }

  /// The sensors at the start of the present period (draws fresh ADC noise).
  readings sample() {
    readings r;
    r.time = time();
    r.period = period_;
    const three_phase i = motor_.currents(x_.motor);
    r.current_code = adc_.sample(i);
    r.current = {adc_.amps(r.current_code[0]), adc_.amps(r.current_code[1]), adc_.amps(r.current_code[2])};
    r.bus_voltage = bus_voltage();
    r.encoder_count = static_cast<std::uint32_t>(static_cast<std::uint64_t>(edges_) + p_.encoder.count_at_zero);
    r.encoder_edge_time = encoder_edge_time_;
    r.hall = hall_;
    r.hall_edge_time = hall_edge_time_;
    return r;
  }

  /// The controller's duties (taking effect after `duty_delay` periods); clamped to [0, 1].
  void apply(const three_phase& duty) {
    if (p_.duty_delay == 0) {
      inverter_.set_duty(duty);
    } else {
      inverter_.set_duty(pending_);
      pending_ = duty;
    }
  }
  /// The duties the bridge uses in the present period.
  three_phase duty() const noexcept { return inverter_.duty(); }

  /// Integrates one PWM period with this load torque (N*m). False, and nothing done,
  /// for a refused plant.
  bool advance(double load_torque) {
    if (!checked_) return false;
    const double t0 = time(), hmax = inverter_.period() / p_.steps_per_period;
    volt_seconds_ = {};
    if (p_.inverter.model == inverter_model::average) {
      for (unsigned k = 0; k < p_.steps_per_period; ++k) integrate(nullptr, load_torque, t0 + k * hmax, hmax);
    } else {
      for (const switching_interval& piece : inverter_.intervals()) {
        const double length = piece.end - piece.begin;
        const unsigned n = std::max(1u, static_cast<unsigned>(std::ceil(length / hmax - 1e-9)));
        for (unsigned k = 0; k < n; ++k) integrate(&piece.legs, load_torque, t0 + piece.begin + k * (length / n), length / n);
      }
    }
    ++period_;
    return true;
  }

  // Truth, for recording and tests (a real controller cannot see these).
  /// The bus voltage at the end of the last step (the source voltage before the first).
  double bus_voltage() const noexcept { return bus_voltage_; }
  double torque() const noexcept { return motor_.torque(x_.motor); }
  double electrical_angle() const noexcept { return motor_.electrical_angle(x_.motor); }
  three_phase currents() const noexcept { return motor_.currents(x_.motor); }
  /// The stationary voltage averaged over the last period, V.
  stationary_voltage average_voltage() const noexcept {
    const double T = inverter_.period();
    return {volt_seconds_.alpha / T, volt_seconds_.beta / T};
  }

 private:
  /// The state's derivative and the voltages behind it.
  struct stage {
    plant_state derivative{};
    stationary_voltage voltage{};
    double bus_voltage = 0.0;
  };

  /// Phase voltages from the lower rail for the present switch pattern: `legs` in the
  /// switched model, the duties in the average model.
  three_phase phase_voltages(const std::array<leg, 3>* legs, const three_phase& i, double vdc) const noexcept {
    return legs ? inverter_.switched_voltage(*legs, i, vdc) : inverter_.average_voltage(i, vdc);
  }
  /// The inverter's input current: the high-side share of each phase current.
  static double bus_current(const three_phase& i, const three_phase& v, double vdc) noexcept {
    return vdc > 0 ? (v.a * i.a + v.b * i.b + v.c * i.c) / vdc : 0.0;
  }

  stage evaluate(const plant_state& y, const std::array<leg, 3>* legs, double load) const noexcept {
    const three_phase i = motor_.currents(y.motor);
    const bus_parameters& b = p_.bus;
    double vdc = b.source_voltage;
    if (b.capacitance > 0) {
      vdc = y.bus_voltage;
    } else if (b.source_resistance > 0) {
      // No capacitor: vdc = source - R * idc; the high-side shares do not depend on vdc.
      vdc -= b.source_resistance * bus_current(i, phase_voltages(legs, i, vdc), vdc);
    }
    const three_phase v = phase_voltages(legs, i, vdc);
    stage s;
    s.voltage = inverter::to_stationary(v);
    s.bus_voltage = vdc;
    s.derivative.motor = motor_.derivative(y.motor, s.voltage, load);
    if (b.capacitance > 0)
      s.derivative.bus_voltage = ((b.source_voltage - vdc) / b.source_resistance - bus_current(i, v, vdc)) / b.capacitance;
    return s;
  }

  void integrate(const std::array<leg, 3>* legs, double load, double t, double h) {
    const plant_state before = x_;
    // The first stage's voltage stands for the step in the period's volt-seconds.
    const stationary_voltage v = evaluate(x_, legs, load).voltage;
    volt_seconds_.alpha += v.alpha * h;
    volt_seconds_.beta += v.beta * h;
    x_ = rk4_step([&](double, const plant_state& y) { return evaluate(y, legs, load).derivative; }, t, x_, h);
    bus_voltage_ = evaluate(x_, legs, load).bus_voltage;
    note_edges(before, t, h);
  }

  void note_edges(const plant_state& before, double t, double h) {
    const std::int64_t edges = encoder_edges(p_.encoder, x_.motor.position);
    if (edges != edges_) {
      // The edge crossed last, toward the new position.
      const std::int64_t crossed = edges > edges_ ? edges : edges + 1;
      const double at = static_cast<double>(crossed) * 2 * pi / p_.encoder.counts_per_turn;
      encoder_edge_time_ = t + h * fraction(before.motor.position, x_.motor.position, at);
      edges_ = edges;
    }
    const std::uint8_t hall = hall_state(p_.hall, motor_.electrical_angle(x_.motor));
    if (hall != hall_) {
      // Boundaries lie every 60 electrical degrees from the offset; take the one crossed last.
      const double pp = p_.motor.pole_pairs;
      const double e0 = pp * before.motor.position - p_.hall.offset, e1 = pp * x_.motor.position - p_.hall.offset;
      const double sixth = pi / 3;
      const double boundary = e1 > e0 ? std::floor(e1 / sixth) * sixth : std::ceil(e1 / sixth) * sixth;
      hall_edge_time_ = t + h * fraction(e0, e1, boundary);
      hall_ = hall;
    }
  }
  static double fraction(double from, double to, double at) noexcept {
    const double f = to != from ? (at - from) / (to - from) : 1.0;
    return f < 0 ? 0.0 : (f > 1 ? 1.0 : f);
  }

  plant_parameters p_;
  motor motor_;
  inverter inverter_;
  current_adc adc_;
  status checked_;
  plant_state x_{};
  three_phase pending_{0.5, 0.5, 0.5};
  std::uint64_t period_ = 0;
  std::int64_t edges_ = 0;
  std::uint8_t hall_ = 0;
  double encoder_edge_time_ = -1.0;
  double hall_edge_time_ = -1.0;
  stationary_voltage volt_seconds_{};
  double bus_voltage_ = 0.0;
};

}  // namespace dqfx::sim
