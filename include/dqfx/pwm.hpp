// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// From duties to timer compare values, as plain functions of numbers (no registers).
///
/// A centre-aligned timer counts up from 0 to `period` and back down; a phase's high-side
/// switch is on while the counter is below its compare value, so the on-time is
/// compare/period of the PWM period, centred in it. Compare 0 keeps the high side off for
/// the whole period (0 %), compare `period` keeps it on (100 %); both are reached exactly.
/// (A timer that needs a compare above `period` for a solid 100 % gets `period + 1` from
/// its driver.)
///
/// Dead-time compensation adds, before conversion, the duty the dead time takes away: in
/// the dead time both switches are off and the free-wheeling diode ties the phase to the
/// lower rail for positive current (out of the inverter) and to the upper rail for
/// negative current. The correction is duty_loss * sign(i), made continuous by a linear
/// ramp for |i| below a band, so a current near zero, whose sign is noise, does not toggle
/// a full correction.

#include <cstdint>

#include "dqfx/extended.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/svm.hpp"

namespace dqfx {

namespace detail {

/// round(duty * period), clamped to [0, period]. Fixed point: max() maps to `period`.
template <class T>
constexpr std::uint32_t duty_to_count(T duty, std::uint32_t period) noexcept {
  if constexpr (is_fixed_v<T>) {
    if (duty >= T::max()) return period;
    if (duty.raw() <= 0) return 0;
    const std::uint64_t p = static_cast<std::uint64_t>(duty.raw()) * period;
    return static_cast<std::uint32_t>((p + (std::uint64_t{1} << (T::fraction_bits - 1))) >> T::fraction_bits);
  } else {
    if (duty != duty) return period / 2;
    if (!(duty > T{0})) return 0;
    if (!(duty < T{1})) return period;
    const T x = duty * static_cast<T>(period) + T{0.5};
    const std::uint32_t n = x >= static_cast<T>(period) ? period : static_cast<std::uint32_t>(x);
    return n;
  }
}

}  // namespace detail

/// Timing of a centre-aligned (up-down) PWM timer.
struct centre_aligned_pwm {
  /// Counter top: the counter runs 0 .. period .. 0 once per PWM period.
  std::uint32_t period = 0;
  /// Shortest on-time and off-time the power stage accepts, in compare counts (one
  /// count of compare is two counter ticks of on-time in up-down counting). Shorter pulses
  /// go to the nearer of dropping the pulse (0 or `period`) and stretching it to this.
  std::uint32_t minimum_pulse = 0;

  /// Compare value in [0, period] for a duty: rounded to nearest; duty <= 0 gives 0,
  /// duty >= full_duty<T>() gives `period`, NaN gives period/2 (zero voltage).
  template <class T>
  constexpr std::uint32_t compare(T duty) const noexcept {
    return limit_pulse(detail::duty_to_count(duty, period));
  }

  template <class T>
  constexpr phases<std::uint32_t> compare(phases<T> duty) const noexcept {
    return {compare(duty.a), compare(duty.b), compare(duty.c)};
  }

  /// A compare value with on- and off-pulses shorter than `minimum_pulse` removed.
  constexpr std::uint32_t limit_pulse(std::uint32_t count) const noexcept {
    const std::uint32_t shortest = minimum_pulse > period / 2 ? period / 2 : minimum_pulse;
    if (count > 0 && count < shortest) return 2 * count < shortest ? 0 : shortest;
    const std::uint32_t off = period - count;
    if (off > 0 && off < shortest) return 2 * off < shortest ? period : period - shortest;
    return count;
  }
};


/// Dead-time compensation by feed-forward on the sign of each phase current.
template <class T>
class dead_time_compensation {
 public:
  constexpr dead_time_compensation() noexcept = default;
  /// `duty_loss`: dead time over PWM period (e.g. 0.5 us / 50 us = 0.01); `band`: the
  /// current (per unit) below which the correction ramps linearly to zero.
  static constexpr dead_time_compensation from_ratio(double duty_loss, double band) noexcept {
    return dead_time_compensation{from_double<T>(duty_loss), gain<T>::from_double(band > 0.0 ? 1.0 / band : 0.0)};
  }
  /// From the times in seconds.
  static constexpr dead_time_compensation from_times(double dead_time_s, double pwm_period_s, double band) noexcept {
    return from_ratio(pwm_period_s > 0.0 ? dead_time_s / pwm_period_s : 0.0, band);
  }

  /// The duty to add for current i: duty_loss * clamp(i / band, -1, 1). NaN current: 0;
  /// a band <= 0 (or NaN) switches the correction off, for any current.
  constexpr T correction(T current) const noexcept {
    const T one = full_duty<T>();
    T ramp = current * slope_;
    if (ramp != ramp) return T{};  // a NaN current, or an infinite one without a band (0 * inf)
    ramp = ramp > one ? one : (ramp < -one ? -one : ramp);
    return ramp * duty_loss_;
  }

  /// Compensated duties, kept in [0, full_duty<T>()]; a NaN duty becomes 50 %.
  constexpr phases<T> apply(phases<T> duty, phases<T> current) const noexcept {
    return {add(duty.a, current.a), add(duty.b, current.b), add(duty.c, current.c)};
  }

 private:
  constexpr dead_time_compensation(T loss, gain<T> slope) noexcept : duty_loss_{loss}, slope_{slope} {}
  constexpr T add(T duty, T current) const noexcept {
    using E = extended<T>;
    const E full{full_duty<T>()};
    if (duty != duty) return from_double<T>(0.5);
    const E d = E{duty} + E{correction(current)};
    return (d > full ? full : (d < E{} ? E{} : d)).rounded();
  }
  T duty_loss_{};
  gain<T> slope_{};
};

}  // namespace dqfx
