// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): a complete sensored speed drive built from the
/// kernels, in any of the four number types, as a controller for `run` (the demo and
/// the closed-loop tests use it; copy it as the start of your own).
///
/// Per PWM period: phase currents from the ADC codes (dqfx::current_channel, offsets
/// calibrated at standstill during the first periods with the bridge at 50%); the
/// electrical angle from the encoder counter (integer arithmetic on dqfx::angle); every
/// `speed_divider` periods the speed from the angle travelled over `speed_window`
/// periods and a speed PI (dqfx::pi_regulator, symmetric optimum, anti-windup by
/// conditional integration: after a current-limited speed step it overshot 6.9% where
/// back-calculation with the tracking gain Ts/Ti overshot 16.6%, in the demo's scenario at
/// a 12 Hz crossover) giving iq*; then the
/// current-loop step (dqfx::current_loop: Clarke, Park, two PI with feed-forward,
/// voltage limit, inverse Park, SVM) with a constant id* (0 by default), or, with `mtpa`,
/// the speed PI's output read as a torque demand (psi * iq*) and turned into id*, iq* by
/// dqfx::torque_setpoint (maximum torque per ampere within the current circle and the
/// voltage ellipse) at the speed-loop rate.

#include <array>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/drive.hpp"  // phase_offsets
#include "dqfx/gain_design.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/torque_setpoint.hpp"
#include "dqfx_sim/harness.hpp"
#include "dqfx_sim/plant.hpp"

namespace dqfx::sim {

/// What the drive is built from (SI, plus the per-unit bases).
struct speed_drive_design {
  plant_parameters plant{};          ///< the motor, PWM, ADC and encoder data the firmware is written for
  per_unit_base base{};              ///< bases of the per-unit system
  double current_bandwidth = 0.0;    ///< rad/s, IMC current loop
  double speed_bandwidth = 0.0;      ///< rad/s, symmetric-optimum crossover
  double speed_ratio = 3.0;          ///< symmetric-optimum a (phase margin atan(a) - atan(1/a))
  unsigned speed_divider = 10;       ///< PWM periods per speed-loop sample
  unsigned speed_window = 20;        ///< PWM periods the speed is measured over (1 to 64)
  double current_limit = 0.0;        ///< A, limit of iq*
  double id_setpoint = 0.0;          ///< A, constant id* (0, or negative for reluctance torque)
  bool mtpa = false;                 ///< id*, iq* by maximum torque per ampere instead
  unsigned calibration_periods = 256;  ///< ADC offset calibration at standstill (1 to 65536)
  std::uint16_t calibration_spread = 64;  ///< largest accepted code spread during calibration
};

/// The drive in number type T (q15, q31, float, double).
template <class T>
class speed_drive {
 public:
  explicit speed_drive(const speed_drive_design& d)
      : d_{d},
        sample_time_{1.0 / d.plant.inverter.pwm_frequency},
        loop_{design_current_loop(d.base,
                                  pm_motor_data{d.plant.motor.resistance, d.plant.motor.ld, d.plant.motor.lq,
                                                d.plant.motor.flux},
                                  d.current_bandwidth, sample_time_)},
        speed_pi_{speed_parameters(d)},
        format_{d.plant.adc.bits, 4},
        channel_{current_channel<T>::from_amplifier(format_, d.plant.adc.amps_per_code, d.base.base_current)},
        offsets_{channel_, d.calibration_periods, d.calibration_spread},
        speed_scale_{gain<T>::from_double(pi / ((d.speed_window ? d.speed_window : 1) * sample_time_ * d.base.base_speed))},
        window_{d.speed_window < 1 ? 1u : (d.speed_window > 64 ? 64u : d.speed_window)},
        id_setpoint_{from_double<T>(d.id_setpoint / d.base.base_current)},
        flux_{gain<T>::from_double(d.base.flux(d.plant.motor.flux))},
        mtpa_{design_torque_setpoint(d.base, pm_motor_data{d.plant.motor.resistance, d.plant.motor.ld,
                                                           d.plant.motor.lq, d.plant.motor.flux},
                                     d.current_limit)} {}

  /// One PWM period (the controller interface of `run`).
  phases<T> operator()(const readings& r, const command& c, probe& p) {
    const T half = from_double<T>(0.5);
    if (!offsets_.calibrated()) {
      offsets_.add(r.current_code);
      return {half, half, half};
    }
    const angle rotor = electrical_angle(r.encoder_count);
    bus_voltage_ = from_double<T>(r.bus_voltage / d_.base.base_voltage);
    if (periods_ % d_.speed_divider == 0) speed_sample(rotor, c);
    history_[periods_ % window_] = rotor;
    ++periods_;

    current_loop_input<T> in;
    in.current = offsets_.currents(r.current_code);
    in.rotor = sincos_of<T>(rotor);
    in.speed = speed_;
    in.setpoint = {id_setpoint_, iq_setpoint_};
    in.bus_voltage = bus_voltage_;
    last_ = loop_.step(in);

    p.angle = rotor.radians();
    p.iq_setpoint = to_double(iq_setpoint_) * d_.base.base_current;
    p.id_setpoint = to_double(id_setpoint_) * d_.base.base_current;
    p.speed = to_double(speed_) * d_.base.mechanical_speed();
    p.fault = last_.fault;
    return last_.duty;
  }

  bool calibrated() const noexcept { return offsets_.calibrated(); }
  const current_loop_output<T>& last_output() const noexcept { return last_; }
  current_loop<T>& loop() noexcept { return loop_; }

 private:
  static pi_parameters speed_parameters(const speed_drive_design& d) {
    const motor_parameters& m = d.plant.motor;
    const double ts = d.speed_divider / d.plant.inverter.pwm_frequency;
    const double kt = 1.5 * m.pole_pairs * m.flux;
    pi_parameters p = d.base.speed_regulator(
        symmetric_optimum_speed_loop(m.inertia, kt, d.speed_bandwidth, ts, d.speed_ratio));
    p.upper = d.current_limit / d.base.base_current;
    p.lower = -p.upper;
    return p;
  }

  /// Counter to electrical angle: the count within the turn as a binary angle (exact for
  /// a power-of-two count), times the pole pairs.
  angle electrical_angle(std::uint32_t counter) const noexcept {
    const encoder_parameters& e = d_.plant.encoder;
    const std::uint64_t in_turn = (counter - e.count_at_zero) % e.counts_per_turn;
    const angle mechanical = angle::from_raw(static_cast<std::uint32_t>((in_turn << 32) / e.counts_per_turn));
    return electrical(mechanical, d_.plant.motor.pole_pairs);
  }

  /// Speed from the angle travelled over the window (half-turns as a fraction, times a
  /// constant), then the speed PI.
  void speed_sample(angle rotor, const command& c) {
    if (periods_ >= window_) {
      const std::int32_t travelled = difference(rotor, history_[periods_ % window_]);
      speed_ = half_turns(travelled) * speed_scale_;
    }
    const T setpoint = from_double<T>(c.speed * d_.plant.motor.pole_pairs / d_.base.base_speed);
    const pi_proposal<T> p = speed_pi_.propose_from(setpoint, speed_, T{});
    speed_pi_.commit(p, p.output);
    iq_setpoint_ = p.output;
    if (d_.mtpa) {
      const current_setpoint<T> set = mtpa_(p.output * flux_, speed_, bus_voltage_);
      id_setpoint_ = set.current.d;
      iq_setpoint_ = set.current.q;
    }
  }

  /// raw / 2^31 in T, rounded to nearest (the arithmetic right shift is pinned by
  /// fixed.hpp).
  static T half_turns(std::int32_t raw) noexcept {
    if constexpr (is_fixed_v<T>) {
      constexpr int drop = 31 - T::fraction_bits;
      if constexpr (drop == 0) {
        return T::saturated(std::int64_t{raw});
      } else {
        return T::saturated((std::int64_t{raw} + (std::int64_t{1} << (drop - 1))) >> drop);
      }
    } else {
      return static_cast<T>(raw) * static_cast<T>(1.0 / 2147483648.0);
    }
  }

  speed_drive_design d_;
  double sample_time_;
  current_loop<T> loop_;
  pi_regulator<T, conditional_integration> speed_pi_;
  adc_format format_;
  current_channel<T> channel_;
  phase_offsets<T> offsets_;
  gain<T> speed_scale_;
  unsigned window_;
  std::array<angle, 64> history_{};
  std::uint64_t periods_ = 0;
  T id_setpoint_{};
  gain<T> flux_;
  torque_setpoint<T> mtpa_;
  T bus_voltage_{};
  T speed_{};
  T iq_setpoint_{};
  current_loop_output<T> last_{};
};

}  // namespace dqfx::sim
