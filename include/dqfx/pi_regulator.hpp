// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Discrete parallel-form PI regulator with anti-windup, for q15, q31, float and double.
///
///   unlimited = kp * e + x + feed_forward        output = clamp(unlimited, lower, upper)
///   x        += ki * e  (+ anti-windup correction)
///
/// `ki` is the integral gain per sample (Ki * Ts), so the regulator needs no sample time.
/// Gains of any magnitude: in fixed point each gain is a `dqfx::gain<q31>` (31-bit
/// mantissa m and a shift s, value = m * 2^(s-31), |value| < 2^30), so kp = 40 and
/// ki = 1e-4 both keep 31 significant bits and cost one 32x32->64 product and one
/// rounding. In fixed point the integrator x and the sum kp*e + x + ff are wider than T:
/// q15 32-bit integers in units of 2^-25 with a range of +/-16 (the whole regulator in
/// 32-bit arithmetic), q31 64-bit integers in units of 2^-31 with a range of +/-256. So
/// a q15 integrator still moves when ki*e is far below one q15 LSB (down to 2^-11 LSB per
/// sample), and a proportional term of 3 against an integrator of -2.5 gives 0.5, not a
/// clipped 1 - 2.5. Only the output is rounded (once) to T.
///
/// Anti-windup is a compile-time policy tag:
///   - `conditional_integration`: the integrator holds while the output is limited and
///     the error would push it further into the limit (clamping);
///   - `back_calculation`: x += ki * e + kt * (applied - unlimited), the tracking gain kt
///     per sample being Ts/Tt (0 < kt <= 1; kt = 1 makes x track the limit in one sample);
///   - `no_anti_windup`: integrates regardless (for comparison and tests).
/// Both methods are described by Astrom and Hagglund, "Advanced PID Control", 2006.
///
/// Limiting that happens outside the regulator (a voltage-vector limit shared by two
/// regulators) is fed back through the two-phase form `propose` + `commit`; `step` is
/// both at once with the regulator's own limits.
///
/// Error bounds (tests/test_pi_regulator.cpp, against a textbook double PI):
///   one step: kp*e + x + ff with the gains as held: q31 rounded once, within 0.5 LSB;
///   q15 within 0.5 + 2^-11 LSB (kp*e is rounded to the 2^-25 unit of the state first);
///   float within 1.5 ulp of the size of the terms; double likewise.
///   closed loop, 100,000 samples with saturation episodes and run-time limit changes:
///   back-calculation within 3 LSB (q15), 16 LSB (q31), 8 eps (float), 4 eps (double).
///   Conditional integration switches, so where the two sit on either side of a limit
///   for one sample they part by up to one integrator step ki*|e| and come together
///   again with the loop (0.04 to 0.12 % of samples in the test); elsewhere the same bounds.
///
/// Bad input: a NaN or infinite float error, feed-forward or applied value leaves the
/// integrator unchanged, outputs 0 clamped into the limits and raises `input_fault()`;
/// so does a float set-point minus measurement that overflows. A float integrator update
/// that would overflow (gains or inputs near the float range) is refused and raises
/// `input_fault()`. Limits in the wrong order: see the constructor and `set_limits`.

#include <cstdint>
#include <type_traits>

#include "dqfx/gain_design.hpp"  // pi_parameters
#include "dqfx/number.hpp"

namespace dqfx {

/// Anti-windup by conditional integration (clamping).
struct conditional_integration {};
/// Anti-windup by back-calculation with a tracking gain.
struct back_calculation {};
/// No anti-windup: the integrator winds up (kept for comparison).
struct no_anti_windup {};

namespace detail {
template <class T, class = void> struct pi_arith;
struct pi_internals;
}  // namespace detail

/// The result of `propose`: what the regulator would output, before `commit`.
template <class T> struct pi_proposal {
  using state = typename detail::pi_arith<T>::state;
  T output{};                ///< within the regulator's limits
  T unlimited{};             ///< kp*e + x + feed_forward, rounded and saturated to T
  bool input_fault = false;  ///< a non-finite float input: output is zero (limited)
  state error{};             ///< the error, full range (fixed point: the state's units)
  state sum{};               ///< kp*e + x + feed_forward, full range
};

namespace detail {

// Deliberately not constexpr: reaching it while evaluating a constexpr regulator stops
// compilation with this name in the message.
inline void pi_limits_in_wrong_order_lower_must_not_exceed_upper() noexcept {}

/// The regulator's arithmetic per value type. For float and double it is plain T. For
/// q15 and q31 the integrator and the sum kp*e + x + ff are wider integers (pi_layout),
/// kept within their headroom (so a large proportional term, an opposite integrator and
/// back-calculation from far outside the limits all act exactly), and the output is
/// rounded once to T.
template <class T, class> struct pi_arith {
  using state = T;
  using gain_type = gain<T>;
  static constexpr state widen(T v) noexcept { return v; }
  static constexpr T narrow(state v) noexcept { return v; }
  static constexpr state product(state v, gain_type g) noexcept { return v * g; }
  static constexpr state error_product(state v, gain_type g) noexcept { return v * g; }
  static constexpr state add(state a, state b) noexcept { return a + b; }
  /// sum - applied: zero when applied is the unlimited output, which is sum itself here.
  static constexpr state excess(state sum, T, T applied) noexcept { return sum - applied; }
  static constexpr bool finite(T v) noexcept {
    return v - v == v - v;  // false for NaN and infinities, no libm needed
  }
};

/// Fixed-point state per type: q15 a 32-bit integer in units of 2^-25 (10 bits below one
/// q15 LSB) within +/-16, so that sums of three terms never overflow 32 bits and the
/// whole regulator runs in 32-bit arithmetic; q31 a 64-bit integer in units of 2^-31
/// within +/-256.
template <class T> struct pi_layout;
template <> struct pi_layout<q15> {
  using state = std::int32_t;
  static constexpr int unit_bits = 25;
  static constexpr state headroom = state{1} << 29;  // 16 in units of 2^-25
};
template <> struct pi_layout<q31> {
  using state = std::int64_t;
  static constexpr int unit_bits = 31;
  static constexpr state headroom = state{1} << 39;  // 256 in units of 2^-31
};

template <class T> struct pi_arith<T, std::enable_if_t<is_fixed_v<T>>> {
  using layout = pi_layout<T>;
  using state = typename layout::state;
  using gain_type = gain<q31>;
  static constexpr state headroom = layout::headroom;
  static constexpr int up = layout::unit_bits - T::fraction_bits;

  static constexpr state widen(T v) noexcept { return static_cast<state>(state{v.raw()} * (state{1} << up)); }
  static constexpr T narrow(state v) noexcept {
    if constexpr (up == 0) {
      return T::saturated(v);
    } else {
      return T::saturated(round_shift(v, up));
    }
  }
  /// v * g rounded once, for |v| <= 2^41 and any gain: v is split at bit 31 so that
  /// each partial product fits in 64 bits; the result is clamped to +/-headroom.
  static constexpr state product(state v, gain_type g) noexcept {
    const std::int64_t m = g.mantissa();
    const int s = g.shift();
    // |v| < 2^31 (always for q15; q31 errors and excesses below one): a single
    // 32x32->64 product rounded once, the same value as the split below at a fraction
    // of its cost.
    if (v >= INT32_MIN && v <= INT32_MAX) {
      return clamp(detail::product_round_shift(static_cast<std::int32_t>(v), g.mantissa(), 31 - s));
    }
    // Beyond the headroom already by the whole part of |v| / 2^31: saturate before the
    // shifted terms below could overflow. (Not by `high`: for a small negative v it is
    // -1, and its term cancels against the low one.)
    const std::int64_t w = v;
    const std::int64_t whole = (w < 0 ? -w : w) >> 31;  // |v| <= 2^41
    if (whole * (m < 0 ? -m : m) > (headroom >> s)) {
      note_saturation();
      return (w < 0) != (m < 0) ? -headroom : headroom;
    }
    const std::int64_t high = w >> 31;                             // floor(v / 2^31), |high| <= 2^10
    const std::int64_t low = w - high * (std::int64_t{1} << 31);   // in [0, 2^31)
    // v*m*2^(s-31) = high*m*2^s + low*m*2^(s-31); the first term is exact, and both
    // stay below 2^62 in magnitude after the check above.
    return clamp(high * m * (std::int64_t{1} << s) + round_shift(low * m, 31 - s));
  }
  /// e * g for an error e = set-point - measurement (a difference of two widened values),
  /// the same value as `product`. q15 with a gain below 8 (shift s <= 3): e is a 17-bit
  /// difference times 2^10, so e*g = d*m / 2^(21-s), one `rounded_product16`; |e*g| is
  /// below 2^29, inside the headroom, so there is nothing to clamp.
  static constexpr state error_product(state e, gain_type g) noexcept {
    if constexpr (std::is_same_v<T, q15>) {
      static_assert(up == 10, "q15 errors are 17-bit differences times 2^10");
      const int s = g.shift();
      if (s <= 3) return rounded_product16(e >> up, g.mantissa(), 21 - s);
    }
    return product(e, g);
  }
  /// Sums of two terms within the headroom: no overflow before the clamp, which stays in
  /// the state's own width (32-bit compares for q15).
  static constexpr state add(state a, state b) noexcept {
    if constexpr (sizeof(state) == 4) {
      return clamp_state(a + b);
    } else {
      return clamp(a + b);
    }
  }
  /// sum - applied, or zero when applied is the unlimited output rounded to T (the
  /// rounding residual is not a limit).
  static constexpr state excess(state sum, T unlimited, T applied) noexcept {
    return applied == unlimited ? state{} : sum - widen(applied);
  }
  static constexpr bool finite(T) noexcept { return true; }
  static constexpr bool finite(state) noexcept { return true; }

 private:
  static constexpr state clamp_state(state v) noexcept {
    if (v > headroom) { note_saturation(); return headroom; }
    if (v < -headroom) { note_saturation(); return -headroom; }
    return v;
  }
  static constexpr state clamp(std::int64_t v) noexcept {
    if (v > headroom) { note_saturation(); return headroom; }
    if (v < -headroom) { note_saturation(); return -headroom; }
    return static_cast<state>(v);
  }
};

/// A double clamped into T's range without counting it as a saturation event (limits
/// of +/-1 are the normal way to ask for "the whole range" in fixed point).
template <class T>
constexpr T clamp_to_range(double v) noexcept {
  const double hi = to_double(number_traits<T>::max());
  const double lo = to_double(number_traits<T>::lowest());
  return from_double<T>(v > hi ? hi : (v < lo ? lo : v));
}

}  // namespace detail

template <class T, class AntiWindup = back_calculation>
class pi_regulator {
  static_assert(is_number_v<T>, "dqfx::pi_regulator supports q15, q31, float and double");
  static_assert(std::is_same_v<AntiWindup, conditional_integration> ||
                    std::is_same_v<AntiWindup, back_calculation> ||
                    std::is_same_v<AntiWindup, no_anti_windup>,
                "anti-windup policy: conditional_integration, back_calculation or no_anti_windup");
  using arith = detail::pi_arith<T>;
  using state = typename arith::state;

 public:
  using value_type = T;
  using anti_windup = AntiWindup;
  /// gain<q31> for q15 and q31 (31-bit mantissa and shift), gain<T> for float and double.
  using gain_type = typename arith::gain_type;

  constexpr pi_regulator() noexcept = default;

  /// Limits in the wrong order (or NaN) are a compile-time error for a constexpr
  /// regulator; at run time they are put in order (NaN: [0, 0]) and `limits_fault()`
  /// is raised. kt is clamped into [0, 1].
  constexpr explicit pi_regulator(const pi_parameters& p) noexcept
      : kp_{gain_type::from_double(p.kp)},
        ki_{gain_type::from_double(p.ki)},
        kt_{gain_type::from_double(p.kt > 1.0 ? 1.0 : (p.kt > 0.0 ? p.kt : 0.0))} {
    if (!(p.lower <= p.upper)) {
      detail::pi_limits_in_wrong_order_lower_must_not_exceed_upper();
      limits_fault_ = true;
      if (detail::is_nan(p.lower) || detail::is_nan(p.upper)) {
        lower_ = upper_ = T{};
        return;
      }
    }
    set_limits(detail::clamp_to_range<T>(p.lower), detail::clamp_to_range<T>(p.upper));
  }

  /// Changes the output limits at run time. Returns false, raises `limits_fault()` and
  /// uses [upper, lower] when they arrive in the wrong order; NaN limits leave the
  /// present limits unchanged (also false and flagged).
  constexpr bool set_limits(T lower, T upper) noexcept {
    if (!arith::finite(lower) || !arith::finite(upper)) {
      limits_fault_ = true;
      return false;
    }
    const bool in_order = !(upper < lower);
    lower_ = in_order ? lower : upper;
    upper_ = in_order ? upper : lower;
    limits_fault_ = limits_fault_ || !in_order;
    return in_order;
  }
  constexpr T lower() const noexcept { return lower_; }
  constexpr T upper() const noexcept { return upper_; }

  /// What the regulator outputs for this error, without changing its state. A
  /// non-finite float error or feed-forward gives output 0 (clamped into the limits)
  /// and `input_fault`.
  constexpr pi_proposal<T> propose(T error, T feed_forward = T{}) const noexcept {
    return propose_error(arith::widen(error), feed_forward);  // which checks both
  }

  /// The same for the error setpoint - measurement, formed at full range: in q15/q31
  /// a set-point of 0.8 against a measurement of -0.4 is an error of 1.2, not max().
  constexpr pi_proposal<T> propose_from(T setpoint, T measurement, T feed_forward) const noexcept {
    // A non-finite set-point or measurement makes the difference non-finite, which
    // propose_error refuses: no separate check needed.
    return propose_error(arith::widen(setpoint) - arith::widen(measurement), feed_forward);
  }

  /// Finishes the sample: integrates, given the output that was actually applied
  /// (the proposal's own output, or a value limited further outside). A faulty
  /// proposal or a non-finite applied value leaves the state unchanged and raises
  /// `input_fault()`.
  constexpr void commit(const pi_proposal<T>& p, T applied) noexcept {
    if (p.input_fault || !arith::finite(applied)) {
      input_fault_ = true;
      return;
    }
    set_integral(next_integral(p, applied));
  }

  /// One sample with the regulator's own limits: propose, then commit its output.
  constexpr T step(T error, T feed_forward = T{}) noexcept {
    const pi_proposal<T> p = propose(error, feed_forward);
    commit(p, p.output);
    return p.output;
  }

  /// Clears the integrator.
  constexpr void reset() noexcept { x_ = state{}; }

  /// Bumpless transfer: sets the integrator so that the next output, for this error
  /// and feed-forward, is `output` (before limiting). Non-finite inputs leave it
  /// unchanged and raise `input_fault()`.
  constexpr void preload(T output, T error = T{}, T feed_forward = T{}) noexcept {
    if (!arith::finite(output) || !arith::finite(error) || !arith::finite(feed_forward)) {
      input_fault_ = true;
      return;
    }
    set_integral(arith::add(arith::widen(output) - arith::widen(feed_forward),
                            -arith::product(arith::widen(error), kp_)));
  }

  /// The integrator, rounded and saturated to T.
  constexpr T integral() const noexcept { return arith::narrow(x_); }

  /// Sticky: limits arrived in the wrong order or as NaN.
  constexpr bool limits_fault() const noexcept { return limits_fault_; }
  /// Sticky: a non-finite input (or a float overflow, see above) was refused.
  constexpr bool input_fault() const noexcept { return input_fault_; }
  constexpr void clear_faults() noexcept { limits_fault_ = input_fault_ = false; }

  constexpr gain_type kp() const noexcept { return kp_; }
  constexpr gain_type ki() const noexcept { return ki_; }
  constexpr gain_type kt() const noexcept { return kt_; }

 private:
  constexpr T clamp(T v) const noexcept { return v > upper_ ? upper_ : (v < lower_ ? lower_ : v); }

  constexpr pi_proposal<T> faulty() const noexcept {
    pi_proposal<T> p{};
    p.input_fault = true;
    p.output = clamp(T{});
    return p;
  }

  constexpr pi_proposal<T> propose_error(state error, T feed_forward) const noexcept {
    // float/double: set-point minus measurement can overflow to infinity.
    if (!arith::finite(error) || !arith::finite(feed_forward)) return faulty();
    return proposal(error, feed_forward);
  }

  /// The proposal for finite inputs.
  constexpr pi_proposal<T> proposal(state error, T feed_forward) const noexcept {
    const state sum = arith::add(arith::add(arith::error_product(error, kp_), x_), arith::widen(feed_forward));
    const T unlimited = arith::narrow(sum);
    return {clamp(unlimited), unlimited, false, error, sum};
  }

  /// The integrator after a sample whose proposal was limited to `applied` (finite
  /// inputs); `commit` stores it if it is finite.
  constexpr state next_integral(const pi_proposal<T>& p, T applied) const noexcept {
    const state increment = arith::error_product(p.error, ki_);
    // > 0: limited from above.
    const state excess = arith::excess(p.sum, p.unlimited, applied);
    if constexpr (std::is_same_v<AntiWindup, conditional_integration>) {
      const bool deeper = (excess > state{} && increment > state{}) ||
                          (excess < state{} && increment < state{});
      return deeper ? x_ : arith::add(x_, increment);
    } else if constexpr (std::is_same_v<AntiWindup, back_calculation>) {
      // Fixed point, not limited (the usual case): no tracking term, and no wide product
      // to form. (Float: one multiply is cheaper than the test.)
      const state tracking = is_fixed_v<T> && excess == state{} ? state{} : arith::product(excess, kt_);
      return arith::add(x_, increment - tracking);
    } else {
      return arith::add(x_, increment);
    }
  }

  /// float/double: an integrator update that overflows (gains or inputs near the float
  /// range) is refused, so the integrator stays finite and no NaN reaches the output.
  constexpr void set_integral(state next) noexcept {
    if (!arith::finite(next)) {
      input_fault_ = true;
      return;
    }
    x_ = next;
  }

  friend struct detail::pi_internals;

  gain_type kp_{};
  gain_type ki_{};
  gain_type kt_{};
  state x_{};
  T lower_{number_traits<T>::lowest()};
  T upper_{number_traits<T>::max()};
  bool limits_fault_ = false;
  bool input_fault_ = false;
};

namespace detail {

/// The regulator's steps without the per-call finiteness checks, for a kernel that runs
/// several regulators and checks their inputs and results once (current_loop.hpp): a
/// proposal from a full-range error, the integrator it would leave, and storing it.
struct pi_internals {
  template <class T, class W>
  static constexpr pi_proposal<T> propose(const pi_regulator<T, W>& r, T setpoint, T measurement,
                                          T feed_forward) noexcept {
    return r.proposal(pi_arith<T>::widen(setpoint) - pi_arith<T>::widen(measurement), feed_forward);
  }
  template <class T, class W>
  static constexpr typename pi_proposal<T>::state next_integral(const pi_regulator<T, W>& r,
                                                                const pi_proposal<T>& p, T applied) noexcept {
    return r.next_integral(p, applied);
  }
  template <class T, class W>
  static constexpr void store(pi_regulator<T, W>& r, typename pi_proposal<T>::state integral) noexcept {
    r.x_ = integral;
  }
};

}  // namespace detail
}  // namespace dqfx
