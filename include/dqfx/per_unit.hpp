// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Per-unit scaling of a drive. Three base values are chosen (peak phase current,
/// peak phase voltage, electrical speed); impedance, inductance, flux, time, power and
/// torque bases follow. Kernels then work on numbers near 1, and fixed-point numbers
/// must stay inside [-1, 1): pick the bases above the largest value in normal operation.
///
/// Conversions happen once, at compile time: `per_unit_constant<T>(lambda)` and
/// `per_unit_gain<T>(lambda)` take a captureless lambda that returns the per-unit value
/// and refuse, with a static_assert, a value that T cannot represent:
///
///   constexpr dqfx::per_unit_base base{20.0, 28.0, 2 * 3.14159 * 500, 4};  // invented
///   constexpr auto limit = dqfx::per_unit_constant<dqfx::q15>([] { return base.current(15.0); });

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/gain_design.hpp"
#include "dqfx/number.hpp"

namespace dqfx {

/// Base values of a drive, SI in, per unit out.
struct per_unit_base {
  double base_current = 1.0;  ///< A, peak phase current that is 1.0 per unit
  double base_voltage = 1.0;  ///< V, peak phase voltage that is 1.0 per unit
  double base_speed = 1.0;    ///< electrical rad/s that is 1.0 per unit
  unsigned pole_pairs = 1;    ///< for mechanical speed and torque

  constexpr double impedance() const noexcept { return base_voltage / base_current; }
  constexpr double inductance() const noexcept { return impedance() / base_speed; }
  constexpr double flux() const noexcept { return base_voltage / base_speed; }
  constexpr double time() const noexcept { return 1.0 / base_speed; }
  /// Three-phase power at base voltage and current (amplitude-invariant d/q: 3/2 u i).
  constexpr double power() const noexcept { return 1.5 * base_voltage * base_current; }
  constexpr double mechanical_speed() const noexcept { return base_speed / pole_pairs; }
  constexpr double torque() const noexcept { return power() / mechanical_speed(); }

  /// SI to per unit.
  constexpr double current(double amps) const noexcept { return amps / base_current; }
  constexpr double voltage(double volts) const noexcept { return volts / base_voltage; }
  constexpr double speed(double electrical_rad_per_s) const noexcept {
    return electrical_rad_per_s / base_speed;
  }
  constexpr double resistance(double ohms) const noexcept { return ohms / impedance(); }
  constexpr double inductance(double henries) const noexcept { return henries / inductance(); }
  constexpr double flux(double webers) const noexcept { return webers / flux(); }
  constexpr double time(double seconds) const noexcept { return seconds / time(); }
  constexpr double torque(double newton_metres) const noexcept { return newton_metres / torque(); }

  /// A current regulator (error in A, output in V) in per unit.
  constexpr pi_parameters current_regulator(const pi_design& d) const noexcept {
    return d.per_unit(base_current, base_voltage);
  }
  /// A speed regulator (error in mechanical rad/s, output in A) in per unit, with the
  /// speed measured in electrical per unit.
  constexpr pi_parameters speed_regulator(const pi_design& d) const noexcept {
    return d.per_unit(mechanical_speed(), base_current);
  }
};

namespace detail {

template <class T>
constexpr bool in_range(double v) noexcept {
  if constexpr (is_fixed_v<T>) {
    return v >= -1.0 && v < 1.0 - number_traits<T>::lsb / 2;  // rounds to at most max()
  } else {
    return v >= static_cast<double>(number_traits<T>::lowest()) &&
           v <= static_cast<double>(number_traits<T>::max());
  }
}

/// A nonzero value that rounds to zero in fixed point.
template <class T>
constexpr bool vanishes(double v) noexcept {
  const double half_lsb = is_fixed_v<T> ? number_traits<T>::lsb / 2 : 0.0;
  return v != 0.0 && v < half_lsb && v > -half_lsb;
}

}  // namespace detail

/// The first value of a design that does not fit, or none: what `check()` of a design
/// returns, to be tested at start-up when the design is computed at run time. (A design
/// computed in a constant expression does not compile instead; see `design_current_loop`.)
struct design_check {
  const char* quantity = nullptr;  ///< what does not fit, in words; nullptr: everything fits
  double value = 0.0;              ///< its value
  constexpr bool ok() const noexcept { return quantity == nullptr; }
};

namespace detail {

// Deliberately not constexpr (compilers without __builtin_is_constant_evaluated).
inline void design_value_does_not_fit() noexcept {}

/// Stops constant evaluation when `fits` is false, with a diagnostic that names the
/// quantity (the one-element array's name, in the call the compiler prints) and shows its
/// value in thousandths (the array index the compiler reports; GCC and Clang print both).
/// At run time it does nothing: the design's `check()` reports the same value.
constexpr bool refuse_unless(bool fits, const char (&quantity_times_1000)[1], double value) noexcept {
  if (fits) return true;
#if defined(__GNUC__) || defined(__clang__)
  if (!__builtin_is_constant_evaluated()) return false;
  const double m = is_nan(value) ? -1.0 : value * 1000.0;
  const auto shown = static_cast<std::int64_t>(m > 9e15 ? 9e15 : (m < -9e15 ? -9e15 : m));
  // Out of bounds on purpose, and only in constant evaluation: not a constant expression.
  // cppcheck-suppress arrayIndexOutOfBounds
  return quantity_times_1000[shown == 0 ? 1 : shown] == 0;
#else
  (void)quantity_times_1000;
  (void)value;
  design_value_does_not_fit();  // not constexpr: stops constant evaluation (no value shown)
  return false;
#endif
}

/// The quantities a design can refuse, as named in the compiler's diagnostic.
namespace refused {
inline constexpr char per_unit_d_inductance[1] = {};
inline constexpr char per_unit_q_inductance[1] = {};
inline constexpr char per_unit_flux[1] = {};
inline constexpr char regulator_kp[1] = {};
inline constexpr char regulator_ki[1] = {};
inline constexpr char per_unit_value[1] = {};
inline constexpr char per_unit_current_limit[1] = {};
inline constexpr char field_weakening_gain[1] = {};
}  // namespace refused

/// v in [0, limit) (NaN is not).
constexpr bool within(double v, double limit) noexcept { return v >= 0.0 && v < limit; }
constexpr design_check first_misfit(design_check a, design_check b) noexcept { return a.ok() ? b : a; }
constexpr design_check misfit_unless(bool fits, const char* quantity, double v) noexcept {
  return fits ? design_check{} : design_check{quantity, v};
}

}  // namespace detail

/// Whether T holds v: not NaN, inside T's range, and (fixed point) not a nonzero value
/// that rounds to zero.
template <class T>
constexpr bool fits_number(double v) noexcept {
  return !detail::is_nan(v) && detail::in_range<T>(v) && !detail::vanishes<T>(v);
}

/// Whether gain<T> holds v: finite, |v| < 2^30 for fixed point, not rounding to zero.
template <class T>
constexpr bool fits_gain(double v) noexcept {
  if (detail::is_nan(v)) return false;
  if constexpr (is_fixed_v<T>) {
    const double m = v < 0 ? -v : v;
    return m < 1073741824.0 && (v == 0.0 || m >= 0x1p-32);
  } else {
    return fits_number<T>(v);
  }
}

/// The per-unit constant `value()` as T, checked at compile time. `value` is a
/// captureless lambda (or any empty callable) whose call is a constant expression.
template <class T, class Constant>
constexpr T per_unit_constant(Constant value) noexcept {
  constexpr double v = value();
  static_assert(!detail::is_nan(v), "dqfx::per_unit_constant: the value is NaN");
  static_assert(detail::is_nan(v) || detail::in_range<T>(v),
                "dqfx::per_unit_constant: the per-unit value is outside the range of the chosen "
                "type ([-1, 1) for q15/q31); choose a larger base value");
  static_assert(!detail::vanishes<T>(v),
                "dqfx::per_unit_constant: the value is nonzero but rounds to zero in this "
                "fixed-point format; choose a smaller base value or a wider format");
  // The value itself, in thousandths, in a second diagnostic beside the message above.
  constexpr bool shown = detail::refuse_unless(fits_number<T>(v), detail::refused::per_unit_value, v);
  static_cast<void>(shown);
  return from_double<T>(v);
}

/// The per-unit gain `value()` as gain<T>, checked at compile time like
/// `per_unit_constant`; fixed-point gains hold any magnitude below 2^30.
template <class T, class Constant>
constexpr gain<T> per_unit_gain(Constant value) noexcept {
  constexpr double v = value();
  static_assert(fits_gain<T>(v),
                "dqfx::per_unit_gain: the gain is NaN, at least 2^30, or too small for a "
                "fixed-point gain (below 2^-32)");
  return gain<T>::from_double(v);
}

}  // namespace dqfx
