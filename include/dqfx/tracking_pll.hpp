// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Angle-tracking phase-locked loop of type 2 (two integrators: zero steady-state error on
/// an angle ramp, i.e. at constant speed), for q15, q31, float and double. It follows a
/// measured angle, or a unit-amplitude sine/cosine pair (resolver, normalised observer),
/// and gives a filtered angle and speed.
///
/// Each sample:  predicted = angle + rate                    (rate: angle per sample)
///               e = measured - predicted                    (wrapped, or sin(e) for a pair)
///               angle = predicted + alpha * e,   rate += beta * e
/// This discrete loop has the closed-loop polynomial z^2 - (2 - alpha - beta) z + 1 - alpha.
/// Its gains place both poles at z = exp(s Ts) of the continuous type-2 loop
/// s^2 + 2 zeta wn s + wn^2 (the second-order PLL with a proportional-integral loop
/// filter, F. M. Gardner, "Phaselock Techniques", 3rd ed., Wiley, 2005; pole mapping
/// z = e^(sT): Franklin, Powell and Workman, "Digital Control of Dynamic Systems", 1998):
///   r = exp(-zeta wn Ts), c = cos(wn sqrt(1 - zeta^2) Ts) (cosh for zeta > 1),
///   alpha = 1 - r^2,  beta = 1 + r^2 - 2 r c.
/// The same recursion is known as the alpha-beta tracker (P. R. Kalata, "The tracking
/// index: a generalized parameter for alpha-beta and alpha-beta-gamma target trackers",
/// IEEE Trans. Aerospace and Electronic Systems, 1984; recalled from memory). The speed
/// output is the integrator, so a speed step at the input reaches it through
/// beta z^2 / (z^2 - (2 - alpha - beta) z + 1 - alpha): the designed second-order response
/// with no zero. A constant acceleration leaves an angle error of acceleration / wn^2.
///
/// The angle is a `dqfx::angle` for every T (exact wrap); the type sets the speed output,
/// the sine/cosine input and the loop arithmetic: q15 and q31 integrate in 64-bit
/// integers (rate at 2^-64 turn per sample), float and double in T.
/// Valid designs: 0 < wn*Ts <= 0.5, 0.2 <= zeta <= 5, and a base speed that moves at least
/// one binary-angle unit (2^-32 turn) and less than half a turn per sample (the rule all
/// estimators share, detail::speed_scale_valid); others raise `parameter_fault()` (a
/// compile-time error for a constexpr loop) and give a loop that does not move.
///
/// Bad input: a NaN or infinite sine/cosine (float/double) raises `fault()`; the
/// speed holds its last good value and the angle advances at that speed (a frozen angle
/// would be wrong by a whole turn within a few milliseconds of running). `reset` with a
/// NaN or infinite speed raises `fault()` and restarts at speed 0; a finite speed
/// beyond half a turn per sample saturates there.

#include <cstdint>
#include <type_traits>

#include "dqfx/angle.hpp"
#include "dqfx/detail/estimation.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/sincos.hpp"

namespace dqfx {

/// Loop design: natural frequency and damping of the continuous loop it matches.
struct tracking_pll_parameters {
  double natural_frequency = 0.0;  ///< wn, rad/s
  double damping = 1.0;            ///< zeta
  double base_speed = 1.0;         ///< electrical rad/s that speed 1.0 stands for
  double sample_time = 0.0;        ///< s
};

/// The discrete gains of a design (see the file comment); `valid` is false outside the
/// supported range, and then both gains are zero.
struct tracking_pll_gains {
  double alpha = 0.0;
  double beta = 0.0;
  bool valid = false;
};

constexpr tracking_pll_gains design_tracking_pll(double natural_frequency, double damping,
                                                 double sample_time) noexcept {
  const double x = natural_frequency * sample_time;
  if (!(x > 0.0 && x <= 0.5 && damping >= 0.2 && damping <= 5.0)) return {};
  const double r = 1.0 + detail::expm1_nonpositive(-damping * x);
  double c = 1.0;
  if (damping < 1.0) {
    const double half = 0.5 * x * detail::sqrt_newton(1.0 - damping * damping);
    const double s = detail::taylor_sin(half);
    c = 1.0 - 2.0 * s * s;  // cos(2h) = 1 - 2 sin^2 h
  } else {
    const double phi = x * detail::sqrt_newton(damping * damping - 1.0);
    const double e = 1.0 + detail::expm1_nonpositive(-phi);  // e^-phi
    c = 0.5 * (e + 1.0 / e);
  }
  return {1.0 - r * r, 1.0 + r * r - 2.0 * r * c, true};
}

namespace detail {

// Deliberately not constexpr: reaching it in a constexpr loop stops compilation.
inline void tracking_pll_design_out_of_range() noexcept {}

/// a rounded to the nearest integer (ties away from zero): a 32-bit conversion, which
/// FPUs do in one instruction (a 64-bit one is a library call). Defined for every input:
/// beyond +/-(2^31 - 128) it saturates there, and NaN gives 0 (a state that went
/// non-finite must not reach the conversion, whose result would be undefined).
template <class F>
constexpr std::int32_t nearest_integer(F a) noexcept {
  constexpr F limit = F(2147483520.0);
  if (!(a == a)) return 0;
  if (a >= limit) return 2147483520;
  if (a <= -limit) return -2147483520;
  return a < F{0} ? -static_cast<std::int32_t>(F{0.5} - a) : static_cast<std::int32_t>(a + F{0.5});
}

/// The loop arithmetic per type. `rate` is the angle per sample; `units(rate)` that angle
/// in binary-angle units; `alpha_of(e)` / `beta_of(e)` the corrections for an error of e
/// units; `speed(rate)` per unit; `sine_units(e)` a unit-amplitude sin(e) in units.
template <class T, class = void> struct pll_recipe {
  using rate_type = T;  // binary-angle units per sample
  struct constants {
    T alpha{}, beta{}, to_speed{}, units_per_speed{};
  };
  static constexpr constants make(tracking_pll_gains g, double units_per_speed) noexcept {
    return {static_cast<T>(g.alpha), static_cast<T>(g.beta),
            static_cast<T>(units_per_speed > 0 ? 1.0 / units_per_speed : 0.0),
            static_cast<T>(units_per_speed)};
  }
  static constexpr std::int64_t units(const constants&, T rate) noexcept { return nearest_integer(rate); }
  static constexpr std::int64_t alpha_of(const constants& c, std::int32_t e) noexcept {
    return nearest_integer(static_cast<T>(e) * c.alpha);
  }
  static constexpr T beta_of(const constants& c, std::int32_t e) noexcept { return static_cast<T>(e) * c.beta; }
  static constexpr T add(T rate, T increment) noexcept { return rate + increment; }
  static constexpr T limit(T rate) noexcept {
    constexpr T most = T(2147483520.0);  // 2^31 - 128: exact in float, and its rounding fits int32
    return rate > most ? most : (rate < -most ? -most : rate);
  }
  static constexpr T speed(const constants& c, T rate) noexcept { return rate * c.to_speed; }
  static constexpr T rate_of(const constants& c, T speed) noexcept { return limit(speed * c.units_per_speed); }
  static constexpr std::int32_t sine_units(T e) noexcept {
    const T u = e * T(683565275.57643158978);  // 2^31 / pi; |sin| <= 1 (a little more in float)
    return nearest_integer(u > T(2147483520.0) ? T(2147483520.0) : (u < T(-2147483520.0) ? T(-2147483520.0) : u));
  }
};

template <class T> struct pll_recipe<T, std::enable_if_t<is_fixed_v<T>>> {
  using rate_type = std::int64_t;  // units of 2^-64 turn per sample
  static constexpr std::int64_t most = std::int64_t{0x7FFFFFFF} << 32;
  struct constants {
    std::uint32_t alpha = 0;        // alpha * 2^32
    std::uint32_t beta = 0;         // beta * 2^32 = beta_m * 2^-beta_s
    int beta_shift = 0;
    count_scale<T> to_speed{};
    double units_per_speed = 0.0;   // binary-angle units per sample at speed 1.0
  };
  static constexpr constants make(tracking_pll_gains g, double units_per_speed) noexcept {
    constants c{};
    const double a = g.alpha * 4294967296.0;
    c.alpha = a >= 4294967295.0 ? 0xFFFFFFFFu : static_cast<std::uint32_t>(round_half_away(a));
    double b = g.beta * 4294967296.0;
    int s = 0;
    if (b >= 1.0) {
      while (b < 2147483648.0 && s < 31) { b *= 2.0; ++s; }
      c.beta = b >= 4294967295.0 ? 0xFFFFFFFFu : static_cast<std::uint32_t>(round_half_away(b));
    }
    c.beta_shift = s;
    c.to_speed = count_scale<T>{units_per_speed > 0 ? 1.0 / (units_per_speed * 4294967296.0) : 0.0};
    c.units_per_speed = units_per_speed;
    return c;
  }
  static constexpr std::int64_t units(const constants&, std::int64_t rate) noexcept {
    return round_shift(rate, 32);
  }
  static constexpr std::int64_t alpha_of(const constants& c, std::int32_t e) noexcept {
    return round_shift(std::int64_t{e} * std::int64_t{c.alpha}, 32);
  }
  static constexpr std::int64_t beta_of(const constants& c, std::int32_t e) noexcept {
    const std::int64_t p = std::int64_t{e} * std::int64_t{c.beta};  // < 2^63
    return c.beta_shift == 0 ? p : round_shift(p, c.beta_shift);
  }
  static constexpr std::int64_t add(std::int64_t rate, std::int64_t increment) noexcept {
    return saturating_add(rate, increment);
  }
  static constexpr std::int64_t limit(std::int64_t rate) noexcept {
    return rate > most ? most : (rate < -most ? -most : rate);
  }
  static constexpr T speed(const constants& c, std::int64_t rate) noexcept { return c.to_speed.times(rate); }
  static constexpr std::int64_t rate_of(const constants& c, T speed) noexcept {
    const double r = to_double(speed) * c.units_per_speed * 4294967296.0;
    return limit(r >= 9.2e18 ? most : (r <= -9.2e18 ? -most : round_half_away(r)));
  }
  /// sin(e) at T's scale to units: e widened to q31, times 1/pi (2^31 units per pi).
  static constexpr std::int32_t sine_units(T e) noexcept {
    const std::int64_t q31_raw = std::int64_t{e.raw()} * (std::int64_t{1} << (31 - T::fraction_bits));
    return static_cast<std::int32_t>(round_shift(q31_raw * std::int64_t{1367130551}, 32));  // 2^32 / pi
  }
};

}  // namespace detail

template <class T>
class tracking_pll {
  static_assert(is_number_v<T>, "dqfx::tracking_pll supports q15, q31, float and double");
  using recipe = detail::pll_recipe<T>;
  using rate_type = typename recipe::rate_type;

 public:
  using value_type = T;

  constexpr tracking_pll() noexcept = default;
  constexpr explicit tracking_pll(const tracking_pll_parameters& p) noexcept
      : gains_{design_tracking_pll(p.natural_frequency, p.damping, p.sample_time)} {
    if (!gains_.valid || !detail::speed_scale_valid(p.base_speed, p.sample_time)) {
      detail::tracking_pll_design_out_of_range();
      parameter_fault_ = true;
      k_ = recipe::make(tracking_pll_gains{}, 0.0);
      return;
    }
    k_ = recipe::make(gains_, units_per_speed(p));
  }

  /// One sample with a measured angle.
  constexpr void update(angle measured) noexcept {
    const angle predicted = next();
    correct(predicted, difference(measured, predicted));
  }

  /// One sample with a measured unit-amplitude pair {sin, cos} of the angle. The loop
  /// gain scales with the amplitude; a pair of amplitude A acts like gains A*alpha, A*beta.
  constexpr void update(sincos<T> measured) noexcept {
    if (detail::non_finite(measured.sin) || detail::non_finite(measured.cos)) {
      fault_ = true;
      angle_ = next();  // coast at the held speed
      return;
    }
    const angle predicted = next();
    const sincos<T> p = sincos_of<T>(predicted);
    correct(predicted, recipe::sine_units(difference_of_products(measured.sin, p.cos, measured.cos, p.sin)));
  }

  /// Coasts one sample at the present speed (no measurement this period).
  constexpr void coast() noexcept { angle_ = next(); }

  /// The filtered angle at the latest sample.
  constexpr angle electrical_angle() const noexcept { return angle_; }
  /// The angle expected at the next sample (what the next PWM period starts from).
  constexpr angle next() const noexcept { return advance(angle_, recipe::units(k_, rate_)); }
  /// The filtered speed, per unit (saturated to T's range).
  constexpr T speed() const noexcept { return recipe::speed(k_, rate_); }
  /// The latest error measured - predicted, in binary-angle units (2^-32 turn).
  constexpr std::int32_t error() const noexcept { return error_; }

  /// Restarts the loop at an angle and speed (per unit); a non-finite speed raises
  /// `fault()` and restarts at speed 0.
  constexpr void reset(angle a = {}, T speed = T{}) noexcept {
    const bool refused = detail::non_finite(speed);
    fault_ = fault_ || refused;
    angle_ = a;
    rate_ = parameter_fault_ || refused ? rate_type{} : recipe::rate_of(k_, speed);
    error_ = 0;
  }

  constexpr const tracking_pll_gains& gains() const noexcept { return gains_; }
  /// The design was outside 0 < wn*Ts <= 0.5, 0.2 <= zeta <= 5, or the base speed moves
  /// less than 2^-32 turn or at least half a turn per sample.
  constexpr bool parameter_fault() const noexcept { return parameter_fault_; }
  /// Sticky: a non-finite sine, cosine or reset speed was refused.
  constexpr bool fault() const noexcept { return fault_; }
  constexpr void clear_faults() noexcept { fault_ = false; }
  /// Angle and speed can be used: the design is valid (the loop always has an estimate).
  constexpr bool valid() const noexcept { return !parameter_fault_; }

 private:
  static constexpr double units_per_speed(const tracking_pll_parameters& p) noexcept {
    return p.base_speed * p.sample_time * (4294967296.0 / 6.283185307179586477);
  }
  static constexpr angle advance(angle a, std::int64_t units) noexcept {
    return a + angle::from_raw(static_cast<std::uint32_t>(static_cast<std::uint64_t>(units) & 0xFFFFFFFFu));
  }
  constexpr void correct(angle predicted, std::int32_t e) noexcept {
    error_ = e;
    angle_ = advance(predicted, recipe::alpha_of(k_, e));
    rate_ = recipe::limit(recipe::add(rate_, recipe::beta_of(k_, e)));
  }

  tracking_pll_gains gains_{};
  typename recipe::constants k_{};
  angle angle_{};
  rate_type rate_{};
  std::int32_t error_ = 0;
  bool parameter_fault_ = false;
  bool fault_ = false;
};

}  // namespace dqfx
