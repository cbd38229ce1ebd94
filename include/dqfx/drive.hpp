// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The whole drive, one call per PWM period, for q15, q31, float and double: current
/// offsets, protection monitors, sequence, speed loop, torque to current set-points and
/// the current loop, with the angle source as a template parameter (encoder, hall_sensor,
/// tracking_pll, flux_observer: anything with their shared shape).
///
///   every period      codes -> currents; monitors; sequence; current loop -> duties
///   period 0 of N     speed loop: torque set-point from the target and source.speed()
///   period 1 of N     torque -> id*, iq* (torque_setpoint: MTPA, current circle, voltage
///                     ellipse), so the two dearer parts never share a period
/// (N = `speed_divider` >= 2; the speed loop's sample time is N PWM periods).
///
/// The angle source is updated by the caller before `step` (each source reads something
/// else); the drive reads only electrical_angle(), speed(), valid() and fault(), and
/// clears the source's fault after reading it. A flux observer needs the voltage the
/// bridge applied: with the usual one-period computation delay that is the voltage this
/// drive returned two calls back (`drive_output::voltage` of call k - 2 for the currents
/// sampled at call k).
///
/// Integrators, by a stated rule: on entering `aligning` or `running` the current-loop
/// integrators are cleared and the speed regulator restarts at the source's speed with no
/// stored torque (its own proportional reaction is all it gives at first: never a sample
/// of an earlier, possibly oscillating set-point); a clear after a fault leads to
/// `stopped`, and the next start begins with a new offset calibration. So a cleared
/// fault never resumes with wound-up integrators.
///
/// Never a NaN duty: every output is either the current loop's (which answers bad input
/// with 50 % and its fault) or one of the fixed safe outputs.

#include <array>
#include <cstdint>
#include <type_traits>

#include "dqfx/angle.hpp"
#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/drive_sequence.hpp"
#include "dqfx/protection.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/speed_regulator.hpp"
#include "dqfx/torque_setpoint.hpp"

namespace dqfx {

/// The three current channels' offsets from codes taken at zero current: a run of
/// `samples` periods is accepted when all three channels are (spread within the limit, no
/// bad code), and otherwise starts again (current flowed: a turning motor, or noise).
template <class T>
class phase_offsets {
 public:
  constexpr phase_offsets(const current_channel<T>& channel, std::uint32_t samples, std::uint16_t spread) noexcept
      : channel_{channel},
        runs_{{channel.format(), samples, spread}, {channel.format(), samples, spread}, {channel.format(), samples, spread}},
        channels_{channel, channel, channel} {}

  /// One period's codes; true once a run has been accepted.
  constexpr bool add(const std::array<std::uint16_t, 3>& code) noexcept {
    if (calibrated_) return true;
    runs_.a.add({code[0], true});
    runs_.b.add({code[1], true});
    runs_.c.add({code[2], true});
    if (!runs_.a.complete()) return false;
    if (runs_.a.accepted() && runs_.b.accepted() && runs_.c.accepted()) {
      channels_ = {channel_.with_offset(runs_.a.offset()), channel_.with_offset(runs_.b.offset()),
                   channel_.with_offset(runs_.c.offset())};
      calibrated_ = true;
    } else {
      restart_runs();
    }
    return calibrated_;
  }
  /// Forgets the accepted offsets too (a new calibration before each start).
  constexpr void restart() noexcept {
    restart_runs();
    calibrated_ = false;
  }
  constexpr bool calibrated() const noexcept { return calibrated_; }
  /// The channels with the accepted offsets (mid-scale offsets until then).
  constexpr const phases<current_channel<T>>& channels() const noexcept { return channels_; }
  /// Per-unit phase currents of three codes.
  constexpr phases<T> currents(const std::array<std::uint16_t, 3>& code) const noexcept {
    return {channels_.a.current(code[0]), channels_.b.current(code[1]), channels_.c.current(code[2])};
  }

 private:
  constexpr void restart_runs() noexcept {
    runs_.a.restart();
    runs_.b.restart();
    runs_.c.restart();
  }
  current_channel<T> channel_;
  phases<offset_calibration<T>> runs_;
  phases<current_channel<T>> channels_;
  bool calibrated_ = false;
};

/// Everything the drive is built from (per unit; see the design_* functions).
struct drive_parameters {
  current_loop_parameters current{};
  speed_regulator_parameters speed{};
  torque_setpoint_parameters torque{};
  protection_parameters protection{};
  sequence_parameters sequence{};
  adc_format adc{};                       ///< the phase-current ADC
  double amps_per_code = 0.0;             ///< A per code (negative: inverting amplifier)
  double base_current = 1.0;              ///< A, of the per-unit system
  std::uint32_t calibration_periods = 256;
  std::uint16_t calibration_spread = 64;  ///< largest code spread accepted at zero current
  std::uint32_t speed_divider = 8;        ///< PWM periods per speed-loop sample, >= 2
  double align_current = 0.0;             ///< pu d current while aligning
  /// pu q current (of the forced frame) per pu electrical speed while aligning, from a
  /// source that is valid at standstill (encoder, Hall): damps the rotor's swing about the
  /// forced angle. 2 zeta wn J / (Kt p) A per electrical rad/s, wn^2 = Kt I p / J. 0: none.
  double align_damping = 0.0;
  double still_speed = 0.01;              ///< pu: below this |speed| stopping ends
};

/// What the drive reads each period.
template <class T> struct drive_inputs {
  std::array<std::uint16_t, 3> current_code{};  ///< phase a, b, c ADC codes
  T bus_voltage{};                              ///< pu
};

/// What it answers.
template <class T> struct drive_output {
  phases<T> duty{};                    ///< in [0, 1], never NaN
  bool bridge_enabled = false;         ///< the gate driver's enable line
  bridge_output bridge = bridge_output::off;
  drive_state state = drive_state::stopped;
  fault_cause cause = fault_cause::none;
  stationary<T> voltage{};             ///< the voltage commanded this call (pu)
  rotating<T> current{};               ///< measured id, iq (regulated states)
};

template <class T, class Source, class AntiWindup = conditional_integration>
class drive {
  static_assert(is_number_v<T>, "dqfx::drive supports q15, q31, float and double");
  static_assert(std::is_same_v<typename Source::value_type, T>, "dqfx::drive: the angle source must use the same type");

 public:
  using value_type = T;

  constexpr explicit drive(const drive_parameters& p) noexcept
      : loop_{p.current},
        speed_{p.speed},
        torque_{p.torque},
        monitors_{p.protection},
        sequence_{p.sequence},
        offsets_{current_channel<T>::from_amplifier(p.adc, p.amps_per_code, p.base_current), p.calibration_periods,
                 p.calibration_spread},
        divider_{p.speed_divider < 2 ? 2u : p.speed_divider},
        align_current_{detail::clamp_to_range<T>(p.align_current)},
        align_damping_{gain<T>::from_double(p.align_damping)},
        still_{detail::clamp_to_range<T>(p.still_speed)},
        parameter_fault_{speed_.parameter_fault() || offsets_.channels().a.parameter_fault() || !p.torque.valid()} {}

  /// Requests a start (from `stopped` only; refused with a parameter fault).
  constexpr bool start() noexcept {
    if (parameter_fault_ || !sequence_.start()) return false;
    enter(drive_state::calibrating, T{});
    return true;
  }
  /// Requests an orderly stop (speed ramped to zero, then `stopped`).
  constexpr void stop() noexcept { sequence_.stop(); }
  /// Clears a latched fault once the monitors see no condition; false otherwise.
  constexpr bool clear() noexcept {
    if (!sequence_.clear(!monitors_.present())) return false;
    monitors_.restart();
    return true;
  }
  /// A fault from outside (an emergency-stop input, the hardware trip line).
  constexpr void trip(fault_cause cause = fault_cause::external) noexcept { sequence_.trip(cause); }
  /// The speed target, electrical per unit (clamped and ramped by the speed regulator).
  constexpr void set_speed(T target) noexcept { target_ = target; }

  /// One PWM period. `source` has been updated with this period's reading.
  drive_output<T> step(const drive_inputs<T>& in, Source& source) noexcept {
    const drive_state before = sequence_.state();
    const bool still = dqfx::abs(source.speed()) < still_;
    sequence_.advance(offsets_.calibrated(), still);
    if (sequence_.state() == drive_state::calibrating) offsets_.add(in.current_code);

    const phases<T> current = offsets_.currents(in.current_code);
    protection_inputs<T> watch{current, in.bus_voltage, source.speed(), sequence_.needs_angle(), source.valid(),
                               source.fault(), in.current_code};
    source.clear_faults();
    const fault_cause cause = monitors_.check(watch);
    const drive_state now = sequence_.state();
    if (now != drive_state::stopped && now != drive_state::fault) sequence_.trip(cause);
    if (sequence_.state() != before) enter(sequence_.state(), source.speed());

    drive_output<T> out{};
    out.state = sequence_.state();
    out.cause = sequence_.cause();
    out.bridge = sequence_.output();
    out.bridge_enabled = sequence_.bridge_enabled();
    if (out.bridge != bridge_output::regulated) {
      const T level = out.bridge == bridge_output::low_side_on ? T{} : from_double<T>(0.5);
      out.duty = {level, level, level};
      return out;
    }
    const current_loop_output<T> r = regulate(current, in.bus_voltage, source);
    if (r.fault) sequence_.trip(fault_cause::parameters);  // not reached while the monitors pass the inputs
    out.duty = r.duty;
    out.voltage = r.voltage_stationary;
    out.current = r.current;
    return out;
  }

  constexpr drive_state state() const noexcept { return sequence_.state(); }
  constexpr fault_cause cause() const noexcept { return sequence_.cause(); }
  constexpr bool parameter_fault() const noexcept { return parameter_fault_; }
  constexpr bool calibrated() const noexcept { return offsets_.calibrated(); }
  constexpr const protection<T>& monitors() const noexcept { return monitors_; }
  constexpr const speed_regulator<T, AntiWindup>& speed_loop() const noexcept { return speed_; }
  constexpr rotating<T> setpoint() const noexcept { return setpoint_; }

 private:
  /// The stated integrator rule (file comment) and a fresh calibration per start.
  constexpr void enter(drive_state s, T speed) noexcept {
    phase_ = 0;
    if (s == drive_state::calibrating) offsets_.restart();
    if (s == drive_state::aligning || s == drive_state::running) {
      loop_.reset();
      speed_.reset(speed);
      torque_demand_ = T{};
      setpoint_ = {};
    }
  }

  current_loop_output<T> regulate(const phases<T>& current, T bus, const Source& source) noexcept {
    current_loop_input<T> in;
    in.current = current;
    in.bus_voltage = bus;
    if (sequence_.state() == drive_state::aligning) {
      in.rotor = sincos_of<T>(angle{});  // d axis on phase a
      in.setpoint = {align_current_, source.valid() ? -(source.speed() * align_damping_) : T{}};
      return loop_.step(in);
    }
    const T speed = source.speed();
    if (phase_ == 0) {
      torque_demand_ = speed_.step(sequence_.state() == drive_state::stopping ? T{} : target_, speed);
    } else if (phase_ == 1) {
      setpoint_ = torque_(torque_demand_, speed, bus).current;
    }
    phase_ = phase_ + 1 >= divider_ ? 0 : phase_ + 1;
    in.rotor = sincos_of<T>(source.electrical_angle());
    in.speed = speed;
    in.setpoint = setpoint_;
    return loop_.step(in);
  }

  current_loop<T> loop_;
  speed_regulator<T, AntiWindup> speed_;
  torque_setpoint<T> torque_;
  protection<T> monitors_;
  drive_sequence sequence_;
  phase_offsets<T> offsets_;
  std::uint32_t divider_;
  T align_current_;
  gain<T> align_damping_;
  T still_;
  bool parameter_fault_;
  std::uint32_t phase_ = 0;
  T target_{};
  T torque_demand_{};
  rotating<T> setpoint_{};
};

}  // namespace dqfx
