// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The speed loop: a ramp with limited acceleration, a two-degree-of-freedom PI (set-point
/// weighting) and a torque limit, for q15, q31, float and double. Input the speed target
/// and the measured electrical speed (per unit), output a torque set-point (per unit, for
/// torque_setpoint.hpp, whose current circle is the current limit).
///
/// Why two degrees of freedom: the symmetric optimum (gain_design.hpp) puts the PI zero
/// far below the crossover to get its phase margin, so the reference step response
/// overshoots by design (the textbook figure for a = 2 is about 43 %, from memory), while
/// the load response is what the design is for. Set-point weighting (Astrom and Hagglund,
/// "Advanced PID Control", ISA, 2006, section on set-point weighting) keeps the load
/// response and takes the zero out of the reference path:
///
///   u = kp * (b*r - y) + x,     x += ki * (r - y)       (0 <= b <= 1)
///
/// computed here in the equivalent set-point-filter form, so that the unchanged
/// `pi_regulator` does the PI and its anti-windup and every value stays in the speed
/// range (no kp*(1-b)*r term that fixed point would clip):
///
///   rf = b*r + (1 - b)*l,       l += c * (r - l),  c = ki / kp,   u = PI(rf - y)
///
/// (eliminating l gives the weighted law exactly, sample by sample, including the
/// back-calculation correction of x; tests/test_speed_regulator.cpp proves it against the
/// textbook weighted PI). b = 1 is the plain PI; b = 0 filters the reference with the lag
/// 1/(1 + Ti s), the classic remedy for the symmetric optimum.
///
/// The ramp moves the reference towards the target by at most `ramp_step` per sample
/// (acceleration * speed-loop period) and clamps the target to +/- `speed_limit`. The
/// ramp position and the filter state are kept wider than T in fixed point (the
/// pi_regulator state: q15 in units of 2^-25), so an acceleration far below one LSB per
/// sample still moves the reference.
///
/// Error bounds (tests/test_speed_regulator.cpp, against a textbook double weighted PI with
/// back-calculation and a double ramp, each closing its own loop on an inertia for 20,000
/// samples with target steps beyond the limits and load steps): the torque within
/// 32 * kp LSB (q15, float, double; LSB = eps for float/double) and 48 * kp LSB (q31);
/// measured 7.2, 2.6 (b = 1: the arithmetic of pi_regulator), 15 and 13 kp LSB (q15,
/// float, double), 31 kp LSB (q31). A speed rounded differently by one LSB reaches the
/// torque through kp, and the set-point filter adds the rounding of rf to T.
///
/// Bad input: a NaN or infinite float target holds the ramp and raises `input_fault()`;
/// a non-finite measurement gives torque 0 (the pi_regulator's answer) and
/// `input_fault()`. A non-finite or negative parameter gives a regulator that outputs 0
/// and raises `parameter_fault()` (a compile-time error for a constexpr regulator).

#include <cstdint>
#include <type_traits>

#include "dqfx/gain_design.hpp"
#include "dqfx/number.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/pi_regulator.hpp"

namespace dqfx {

/// The speed loop in per unit (plain numbers, converted once).
struct speed_regulator_parameters {
  pi_parameters pi{};        ///< torque per unit per electrical per-unit speed; limits = torque limit
  double weighting = 0.0;    ///< b in [0, 1]: 1 plain PI, 0 reference through the lag 1/(1 + Ti s)
  double ramp_step = 2.0;    ///< largest reference change per sample (per unit); >= 2: no ramp
  double speed_limit = 1.0;  ///< the target is clamped to +/- this (per unit)
};

/// The mechanical data the speed loop is designed from (SI).
struct speed_loop_data {
  double inertia = 0.0;          ///< kg*m^2, rotor and load
  double flux = 0.0;             ///< Wb, magnet flux linkage (torque = 1.5 * pole pairs * flux * iq)
  double bandwidth = 0.0;        ///< rad/s, symmetric-optimum crossover
  double ratio = 3.0;            ///< symmetric-optimum a (> 1); phase margin atan(a) - atan(1/a)
  double sample_time = 0.0;      ///< s, the speed-loop period (divider * PWM period)
  double torque_limit = 0.0;     ///< N*m
  double acceleration = 0.0;     ///< mechanical rad/s^2 of the ramp; 0: no ramp
  double speed_limit = 0.0;      ///< mechanical rad/s; 0: the base speed
  double weighting = 0.0;        ///< set-point weight b
};

namespace detail {
// Deliberately not constexpr: a constexpr regulator with a bad parameter stops here.
inline void speed_regulator_parameters_invalid() noexcept {}
}  // namespace detail

/// The speed loop from motor data: symmetric-optimum gains (gain_design.hpp) with the
/// output read as torque (per-unit torque = per-unit flux * per-unit q current, the
/// torque base of per_unit.hpp), anti-windup tracking Ts/Ti, limits and ramp in per unit.
constexpr speed_regulator_parameters design_speed_regulator(const per_unit_base& base, const speed_loop_data& m) noexcept {
  const double kt = 1.5 * base.pole_pairs * m.flux;  // N*m per A
  pi_parameters pi = base.speed_regulator(
      symmetric_optimum_speed_loop(m.inertia, kt, m.bandwidth, m.sample_time, m.ratio));
  const double flux = base.flux(m.flux);
  pi.kp *= flux;
  pi.ki *= flux;
  pi.upper = base.torque(m.torque_limit);
  pi.lower = -pi.upper;
  speed_regulator_parameters p{};
  p.pi = pi;
  p.weighting = m.weighting;
  const double electrical = base.pole_pairs / base.base_speed;  // mechanical rad/s to per unit
  p.ramp_step = m.acceleration > 0.0 ? m.acceleration * m.sample_time * electrical : 2.0;
  p.speed_limit = m.speed_limit > 0.0 ? m.speed_limit * electrical : 1.0;
  return p;
}

/// Ramp, set-point weighting and PI with anti-windup; one `step` per speed-loop sample.
template <class T, class AntiWindup = conditional_integration>
class speed_regulator {
  static_assert(is_number_v<T>, "dqfx::speed_regulator supports q15, q31, float and double");
  using arith = detail::pi_arith<T>;
  using state = typename arith::state;

 public:
  using value_type = T;
  using regulator = pi_regulator<T, AntiWindup>;

  constexpr speed_regulator() noexcept = default;
  constexpr explicit speed_regulator(const speed_regulator_parameters& p) noexcept : pi_{p.pi} {
    const double c = p.pi.kp > 0.0 ? p.pi.ki / p.pi.kp : 0.0;
    const bool good = p.pi.kp > 0.0 && p.pi.ki >= 0.0 && c <= 1.0 && p.weighting >= 0.0 &&
                      p.weighting <= 1.0 && p.ramp_step > 0.0 && p.speed_limit > 0.0 && !pi_.limits_fault();
    if (!good) {
      detail::speed_regulator_parameters_invalid();
      parameter_fault_ = true;
      pi_ = regulator{pi_parameters{0.0, 0.0, 0.0, 0.0, 0.0}};
      return;
    }
    weight_ = arith_gain::from_double(p.weighting);
    rest_ = arith_gain::from_double(1.0 - p.weighting);
    lag_gain_ = arith_gain::from_double(c);
    ramp_step_ = state_of(p.ramp_step > 2.0 ? 2.0 : p.ramp_step);
    speed_limit_ = detail::clamp_to_range<T>(p.speed_limit);
  }

  /// One speed-loop sample: the torque set-point for this target and measured speed.
  constexpr T step(T target, T measured) noexcept {
    if (!arith::finite(target)) {
      input_fault_ = true;
      target = arith::narrow(ramp_);
    }
    const T limited = target > speed_limit_ ? speed_limit_ : (target < -speed_limit_ ? -speed_limit_ : target);
    const state move = arith::widen(limited) - ramp_;
    ramp_ = arith::add(ramp_, move > ramp_step_ ? ramp_step_ : (move < -ramp_step_ ? -ramp_step_ : move));
    // rf = b*r + (1 - b)*l, then l += c*(r - l): the weighted PI in filter form.
    const T filtered = arith::narrow(arith::add(arith::product(ramp_, weight_), arith::product(lag_, rest_)));
    lag_ = arith::add(lag_, arith::product(ramp_ - lag_, lag_gain_));
    const pi_proposal<T> p = pi_.propose_from(filtered, measured, T{});
    pi_.commit(p, p.output);
    input_fault_ = input_fault_ || pi_.input_fault();
    return p.output;
  }

  /// Restart at the measured speed (stated rule after a fault clear or a hand-over):
  /// ramp and filter start at `speed`, so the reference has no step; the integrator is
  /// preloaded so that the first torque is `torque` plus the proportional reaction to
  /// the first error (0: no stored torque). Non-finite values restart at 0.
  constexpr void reset(T speed = T{}, T torque = T{}) noexcept {
    if (!arith::finite(speed)) speed = T{};
    if (!arith::finite(torque)) torque = T{};
    ramp_ = lag_ = arith::widen(speed);
    pi_.reset();
    pi_.preload(torque);
  }

  /// The ramp's present reference (the speed the loop is steering to now).
  constexpr T reference() const noexcept { return arith::narrow(ramp_); }
  constexpr T torque_limit() const noexcept { return pi_.upper(); }
  constexpr const regulator& pi() const noexcept { return pi_; }

  /// Sticky: a non-finite target or measurement was refused.
  constexpr bool input_fault() const noexcept { return input_fault_; }
  constexpr void clear_faults() noexcept {
    input_fault_ = false;
    pi_.clear_faults();
  }
  /// The parameters broke a rule (gains <= 0, ki > kp, b outside [0, 1], ramp or limit <= 0).
  constexpr bool parameter_fault() const noexcept { return parameter_fault_; }

 private:
  using arith_gain = typename arith::gain_type;

  /// A per-unit value in the state's units (fixed point: below one LSB of T too).
  static constexpr state state_of(double v) noexcept {
    if constexpr (is_fixed_v<T>) {
      return static_cast<state>(v * static_cast<double>(std::int64_t{1} << detail::pi_layout<T>::unit_bits) + 0.5);
    } else {
      return static_cast<T>(v);
    }
  }

  regulator pi_{};
  arith_gain weight_{};
  arith_gain rest_{};
  arith_gain lag_gain_{};
  state ramp_step_{};
  state ramp_{};
  state lag_{};
  T speed_limit_{};
  bool input_fault_ = false;
  bool parameter_fault_ = false;
};

}  // namespace dqfx
