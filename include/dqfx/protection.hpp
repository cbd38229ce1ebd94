// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Software protection monitors, one call per PWM period, for q15, q31, float and double.
///
/// These are a second line behind hardware protection, never a replacement: a comparator
/// on the shunt amplifier that blocks the gate driver within microseconds, a bus
/// over-voltage clamp or brake chopper, and fuses act even when the firmware has stopped.
/// The monitors here see what the controller samples, once per PWM period, so their
/// reaction is at least one period plus their debounce time. They catch what hardware
/// cannot see (a thermal overload, an estimator that lost the rotor, a sensor that lies)
/// and stop the drive in an orderly way through the sequencer (drive_sequence.hpp).
///
/// Each monitor has a threshold and a debounce time (the condition must hold for that many
/// consecutive periods, at least one) or a filter time:
///   over_current     largest |phase current| above `peak_current`
///   overload         I^2 t: a first-order thermal estimate of |i|^2 with time constant
///                    `thermal_time_constant` reaches `continuous_current`^2. From cold, a
///                    constant current I > Ic trips after tau * ln(I^2 / (I^2 - Ic^2)), the
///                    cold curve of thermal overload relays (IEC 60255-149:2013, recalled
///                    from memory); |i|^2 = 2/3 (ia^2 + ib^2 + ic^2), the peak phase
///                    current squared for balanced currents.
///   over_voltage,    bus voltage above `over_voltage` / below `under_voltage`; the
///   under_voltage    condition ends only `voltage_hysteresis` back inside the band
///   over_speed       |electrical speed| above `over_speed`
///   angle_lost       the angle source is not `valid()` while the drive needs an angle
///   sensor           the angle source refused readings (`fault()`: encoder jump, Hall
///                    000/111 or a non-adjacent state) in consecutive periods
///   adc_rail         a current code at 0 or full scale (a shorted or open amplifier,
///                    or a current beyond the measuring range); the over-current monitor
///                    ignores a railed phase, so keep `rail_time` as short as the peak
///                    current's time
/// `check` returns the cause that trips this period, or `fault_cause::none`; when several
/// trip together: adc_rail (a railed code is no current reading at all, and may be a
/// current beyond the measuring range), over_current, over_voltage, under_voltage,
/// overload, sensor, angle_lost, over_speed. `present()`
/// says whether any condition still holds (with hysteresis: a voltage back inside the
/// band, a thermal estimate cooled below `restart_fraction` of its trip level), so a
/// clear can wait for it.
///
/// Fixed point: |i|^2 / 4 is formed, so currents up to 2 per unit count exactly; the
/// thermal estimate is kept in the pi_regulator's wide state (q15 units of 2^-25), so a
/// time constant of seconds at tens of kHz still moves it.
///
/// Bad input: NaN or infinite float readings trip (over-current for currents, over-voltage
/// for the bus, over-speed for the speed): a reading that is not a number is not safe.

#include <array>
#include <cstdint>

#include "dqfx/current_sensing.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/pi_regulator.hpp"

namespace dqfx {

/// Why a drive stopped. One cause is latched by the sequencer: the first.
enum class fault_cause : std::uint8_t {
  none,
  adc_rail,
  over_current,
  over_voltage,
  under_voltage,
  overload,
  sensor,
  angle_lost,
  over_speed,
  start_failed,
  parameters,
  external,
};

/// Thresholds (per unit, of the drive's bases) and times (s).
struct protection_parameters {
  double sample_time = 0.0;             ///< s, the PWM period the monitors run at
  double peak_current = 0.9;            ///< pu, instantaneous over-current threshold
  double peak_current_time = 0.0;       ///< s; 0: one period
  double continuous_current = 0.5;      ///< pu, the current the motor carries forever
  double thermal_time_constant = 10.0;  ///< s, of the I^2 t estimate
  double restart_fraction = 0.8;        ///< the thermal estimate must cool below this share of the trip level
  double over_voltage = 0.95;           ///< pu bus voltage
  double under_voltage = 0.3;
  double voltage_hysteresis = 0.02;
  double voltage_time = 0.0;
  double over_speed = 0.95;             ///< pu electrical speed
  double over_speed_time = 0.0;
  double angle_time = 0.0;              ///< s without a valid angle while one is needed
  double sensor_time = 0.0;             ///< s of refused readings in a row
  unsigned adc_bits = 0;                ///< of the current ADC; 0: no rail check
  std::uint16_t rail_margin = 0;        ///< codes this close to 0 or full scale count as railed
  double rail_time = 0.0;
};

/// What the monitors read each period.
template <class T> struct protection_inputs {
  phases<T> current{};                      ///< measured phase currents, pu
  T bus_voltage{};                          ///< pu
  T speed{};                                ///< electrical pu (the angle source's)
  bool angle_needed = false;                ///< the present state controls with the angle
  bool angle_valid = true;                  ///< the angle source's valid()
  bool angle_refused = false;               ///< the angle source's fault() this period (then clear it)
  std::array<std::uint16_t, 3> current_code{};  ///< raw ADC codes (for the rail check)
};

/// A condition that must hold for `samples` consecutive calls.
class debounce {
 public:
  constexpr debounce() noexcept = default;
  constexpr explicit debounce(std::uint32_t samples) noexcept : needed_{samples < 1 ? 1 : samples} {}
  constexpr bool update(bool condition) noexcept {
    count_ = condition ? (count_ < needed_ ? count_ + 1 : count_) : 0;
    return count_ >= needed_;
  }
  constexpr bool holding() const noexcept { return count_ > 0; }
  constexpr void reset() noexcept { count_ = 0; }

 private:
  std::uint32_t needed_ = 1;
  std::uint32_t count_ = 0;
};

/// The monitors of one drive.
template <class T>
class protection {
  static_assert(is_number_v<T>, "dqfx::protection supports q15, q31, float and double");
  using arith = detail::pi_arith<T>;
  using state = typename arith::state;

 public:
  using value_type = T;

  constexpr protection() noexcept = default;
  constexpr explicit protection(const protection_parameters& p) noexcept
      : peak_{level(p.peak_current)},
        over_voltage_{level(p.over_voltage)},
        over_voltage_clear_{level(p.over_voltage - p.voltage_hysteresis)},
        under_voltage_{level(p.under_voltage)},
        under_voltage_clear_{level(p.under_voltage + p.voltage_hysteresis)},
        over_speed_{level(p.over_speed)},
        thermal_trip_{arith::widen(level(p.continuous_current * p.continuous_current / 4))},
        thermal_clear_{arith::widen(level(p.restart_fraction * p.continuous_current * p.continuous_current / 4))},
        thermal_gain_{gain_type::from_double(p.sample_time > 0 && p.thermal_time_constant > 0
                                                 ? -detail::expm1(-p.sample_time / p.thermal_time_constant)
                                                 : 1.0)},
        adc_{p.adc_bits, p.rail_margin},
        rail_check_{p.adc_bits != 0},
        current_{samples(p.peak_current_time, p.sample_time)},
        over_voltage_hold_{samples(p.voltage_time, p.sample_time)},
        under_voltage_hold_{samples(p.voltage_time, p.sample_time)},
        speed_hold_{samples(p.over_speed_time, p.sample_time)},
        angle_hold_{samples(p.angle_time, p.sample_time)},
        sensor_hold_{samples(p.sensor_time, p.sample_time)},
        rail_hold_{samples(p.rail_time, p.sample_time)} {}

  /// One period: the cause that trips now, or none.
  constexpr fault_cause check(const protection_inputs<T>& in) noexcept {
    const phases<T>& i = in.current;
    const bool currents_finite = arith::finite(i.a) && arith::finite(i.b) && arith::finite(i.c);
    // A railed code is no current reading: the rail monitor judges that phase.
    const std::array<std::uint16_t, 3>& code = in.current_code;
    const std::array<bool, 3> railed{rail_check_ && adc_.railed(code[0]), rail_check_ && adc_.railed(code[1]),
                                     rail_check_ && adc_.railed(code[2])};
    const T largest = max3(railed[0] ? T{} : dqfx::abs(i.a), railed[1] ? T{} : dqfx::abs(i.b),
                           railed[2] ? T{} : dqfx::abs(i.c));
    const bool over_current = current_.update(!currents_finite || largest > peak_);

    // I^2 t: theta += g * (|i|^2/4 - theta), |i|^2/4 = (ia^2 + ib^2 + ic^2) / 6.
    if (currents_finite) {
      const T a = i.a * sixth_root_, b = i.b * sixth_root_, c = i.c * sixth_root_;
      accumulator<T> sum{};
      sum.add_product(a, a);
      sum.add_product(b, b);
      sum.add_product(c, c);
      thermal_ = arith::add(thermal_, arith::product(arith::widen(sum.result()) - thermal_, thermal_gain_));
    }
    overloaded_ = thermal_ > thermal_trip_ || (overloaded_ && thermal_ > thermal_clear_);

    const T v = in.bus_voltage;
    const bool v_finite = arith::finite(v);
    over_voltage_present_ = !v_finite || v > over_voltage_ || (over_voltage_present_ && v > over_voltage_clear_);
    under_voltage_present_ = v_finite && (v < under_voltage_ || (under_voltage_present_ && v < under_voltage_clear_));
    const bool over_voltage = over_voltage_hold_.update(!v_finite || v > over_voltage_);
    const bool under_voltage = under_voltage_hold_.update(v_finite && v < under_voltage_);

    const bool rail = rail_hold_.update(railed[0] || railed[1] || railed[2]);
    const bool sensor = sensor_hold_.update(in.angle_refused);
    const bool lost = angle_hold_.update(in.angle_needed && !in.angle_valid);
    const bool fast = speed_hold_.update(!arith::finite(in.speed) || dqfx::abs(in.speed) > over_speed_);

    if (rail) return fault_cause::adc_rail;  // the reading is not a current: say so first
    if (over_current) return fault_cause::over_current;
    if (over_voltage) return fault_cause::over_voltage;
    if (under_voltage) return fault_cause::under_voltage;
    if (thermal_ > thermal_trip_) return fault_cause::overload;
    if (sensor) return fault_cause::sensor;
    if (lost) return fault_cause::angle_lost;
    if (fast) return fault_cause::over_speed;
    return fault_cause::none;
  }

  /// Whether any condition still holds (with the hysteresis of the voltage and thermal
  /// monitors): a clear is safe only when this is false.
  constexpr bool present() const noexcept {
    return current_.holding() || over_voltage_present_ || under_voltage_present_ || overloaded_ ||
           rail_hold_.holding() || sensor_hold_.holding() || angle_hold_.holding() || speed_hold_.holding();
  }

  /// The thermal estimate as a share of its trip level (1.0 trips).
  constexpr double thermal_load() const noexcept {
    return to_double(arith::narrow(thermal_)) / to_double(arith::narrow(thermal_trip_));
  }

  /// Forgets the debounce counts (the thermal estimate stays: the motor is still warm).
  constexpr void restart() noexcept {
    current_.reset();
    over_voltage_hold_.reset();
    under_voltage_hold_.reset();
    speed_hold_.reset();
    angle_hold_.reset();
    sensor_hold_.reset();
    rail_hold_.reset();
  }

 private:
  using gain_type = typename arith::gain_type;

  static constexpr T level(double v) noexcept { return detail::clamp_to_range<T>(v); }
  static constexpr std::uint32_t samples(double time, double sample_time) noexcept {
    if (!(sample_time > 0.0) || !(time > 0.0)) return 1;
    const double n = time / sample_time + 0.5;
    return n >= 4.0e9 ? 4000000000u : (n < 1.0 ? 1u : static_cast<std::uint32_t>(n));
  }
  static constexpr T max3(T a, T b, T c) noexcept {
    const T ab = a > b ? a : b;
    return ab > c ? ab : c;
  }

  T peak_{};
  T over_voltage_{};
  T over_voltage_clear_{};
  T under_voltage_{};
  T under_voltage_clear_{};
  T over_speed_{};
  state thermal_trip_{};
  state thermal_clear_{};
  gain_type thermal_gain_{};
  gain<T> sixth_root_{gain<T>::from_double(0.40824829046386301637)};  // sqrt(1/6)
  adc_format adc_{};
  bool rail_check_ = false;
  debounce current_{};
  debounce over_voltage_hold_{};
  debounce under_voltage_hold_{};
  debounce speed_hold_{};
  debounce angle_hold_{};
  debounce sensor_hold_{};
  debounce rail_hold_{};
  state thermal_{};
  bool overloaded_ = false;
  bool over_voltage_present_ = false;
  bool under_voltage_present_ = false;
};

}  // namespace dqfx
