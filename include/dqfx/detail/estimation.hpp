// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Pieces shared by the angle and speed estimators (encoder, Hall, tracking PLL, flux
/// observer): an integer count times a real constant, optionally over an integer time,
/// as a per-unit T; a first-order low-pass filter whose state keeps more bits than T; and
/// the difference of two wrapping timer readings.

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/extended.hpp"
#include "dqfx/number.hpp"

namespace dqfx::detail {

/// v as T, clamped into T's range without counting a saturation event (a limit of 1.0 is
/// the normal way to ask for "the whole range" in fixed point); NaN gives 0.
template <class T>
constexpr T bounded(double v) noexcept {
  const double hi = to_double(number_traits<T>::max());
  const double lo = to_double(number_traits<T>::lowest());
  return from_double<T>(v > hi ? hi : (v < lo ? lo : v));
}

/// The design rule every estimator shares, one test for all four types (a design valid
/// for one type is valid for all): the base speed moves at least one binary-angle unit
/// (2^-32 turn) and less than half a turn per sample. Below it the float speed scale, the
/// reciprocal of this angle, can overflow T (and 0 * infinity is NaN); above it speed 1.0
/// aliases. With a capture timer, `tick_frequency` is 0 (none) or positive with fewer than
/// 2^32 ticks per sample (the timer must not wrap within a sample).
constexpr bool speed_scale_valid(double base_speed, double sample_time) noexcept {
  const double units = base_speed * sample_time * (4294967296.0 / 6.283185307179586477);
  return units >= 1.0 && units < 2147483648.0;
}
constexpr bool tick_frequency_valid(double tick_frequency, double sample_time) noexcept {
  return tick_frequency == 0.0 || (tick_frequency > 0.0 && tick_frequency * sample_time < 4294967296.0);
}

/// Signed (to - from) of two readings of a wrapping 32-bit timer.
constexpr std::int64_t ticks_between(std::uint32_t to, std::uint32_t from) noexcept {
  return static_cast<std::int64_t>(static_cast<std::uint32_t>(to - from));
}

/// |v| of a signed 64-bit integer as unsigned, defined for the most negative value too.
constexpr std::uint64_t magnitude_u64(std::int64_t v) noexcept {
  return v < 0 ? 0u - static_cast<std::uint64_t>(v) : static_cast<std::uint64_t>(v);
}

/// n * K and n * K / d as a per-unit T, for an integer count n, a positive real constant K
/// fixed at construction and a positive integer time d: speeds from counts over windows
/// and from angles over edge intervals.
///
/// q15/q31: K in raw units is a 32-bit mantissa m in [2^31, 2^32) times 2^-s, so it keeps
/// 32 significant bits whatever its size; `times` is rounded once (within 0.5 LSB of the
/// exact n*K with K as stored), `over` within 1 LSB (one integer division, then a
/// rounded shift). Results saturate. float/double: T(n) * K (/ T(d)).
template <class T, class = void>
class count_scale {
 public:
  constexpr count_scale() noexcept = default;
  constexpr explicit count_scale(double k) noexcept : k_{static_cast<T>(k)} {}
  constexpr T times(std::int64_t n) const noexcept { return static_cast<T>(n) * k_; }
  constexpr T over(std::int64_t n, std::uint32_t d) const noexcept {
    return d == 0 ? T{} : static_cast<T>(n) * k_ / static_cast<T>(d);
  }

 private:
  T k_{};
};

template <class T>
class count_scale<T, std::enable_if_t<is_fixed_v<T>>> {
  using raw = typename T::raw_type;
  static constexpr std::uint64_t raw_max = static_cast<std::uint64_t>(std::numeric_limits<raw>::max());

 public:
  constexpr count_scale() noexcept = default;
  constexpr explicit count_scale(double k) noexcept {
    if (!(k > 0.0) || !(k < 1e30)) return;  // zero, negative, NaN and absurd constants: 0
    double v = k / number_traits<T>::lsb;    // K in raw units per count
    int s = 0;
    while (v < 2147483648.0) { v *= 2.0; ++s; }
    while (v >= 4294967296.0) { v *= 0.5; --s; }
    std::int64_t m = round_half_away(v);
    if (m >= 4294967296) { m /= 2; --s; }
    m_ = static_cast<std::uint32_t>(m);
    s_ = s;
  }

  constexpr T times(std::int64_t n) const noexcept {
    const std::uint64_t u = magnitude_u64(n);
    std::uint64_t r = 0;
    if (m_ == 0 || u == 0) return T{};
    if (s_ <= 31) {
      // n*K >= 2^(31 - s) * |n|: from |n| >= 2^31 on it saturates whatever s is.
      if (u >= (std::uint64_t{1} << 31)) return saturate(n, raw_max + 1);
      const std::uint64_t p = u * m_;  // < 2^63
      if (s_ > 0) {
        r = round_shift(p, s_);
      } else {
        r = p > (raw_max >> -s_) ? raw_max + 1 : p << -s_;
      }
    } else if (s_ <= 96) {
      r = (multiply_shift(u & 0x7FFFFFFFFFFFFFFFu, m_, s_ - 1) + 1) >> 1;
    }
    return saturate(n, r);
  }

  constexpr T over(std::int64_t n, std::uint32_t d) const noexcept {
    const std::uint64_t u = magnitude_u64(n);
    if (m_ == 0 || u == 0 || d == 0) return T{};
    if (u >= (std::uint64_t{1} << 31)) return saturate(n, raw_max + 1);
    const std::uint64_t p = u * m_;  // < 2^63
    const std::uint64_t q = p / d, rem = p % d;
    std::uint64_t r = 0;
    if (s_ > 63) {
      r = 0;
    } else if (s_ > 0) {
      r = round_shift(q, s_);
    } else if (s_ == 0) {
      r = q + (2 * rem >= d ? 1u : 0u);
    } else {
      const int t = -s_;  // value = (q + rem/d) * 2^t
      if (t >= 32 || q > (raw_max >> t)) return saturate(n, raw_max + 1);
      r = (q << t) + (((rem << t) + d / 2) / d);
    }
    return saturate(n, r);
  }

 private:
  static constexpr T saturate(std::int64_t n, std::uint64_t r) noexcept {
    if (r > raw_max) {
      note_saturation();
      return n < 0 ? T::lowest() : T::max();
    }
    const std::int64_t v = static_cast<std::int64_t>(r);
    return T::from_raw(static_cast<raw>(n < 0 ? -v : v));
  }
  std::uint32_t m_{0};
  int s_{0};
};

/// e^x - 1 for -40 <= x <= 0, usable in constant expressions (halving, series, squaring).
constexpr double expm1_nonpositive(double x) noexcept {
  int halvings = 0;
  while (x < -0.25) {
    x *= 0.5;
    ++halvings;
  }
  double term = x, sum = x;
  for (int k = 2; k <= 14; ++k) {
    term *= x / k;
    sum += term;
  }
  for (int i = 0; i < halvings; ++i) sum = sum * (sum + 2.0);  // e^2x - 1 = (e^x - 1)(e^x + 1)
  return sum;
}

/// sqrt(x) for x >= 0 in constant expressions (Newton's method from above).
constexpr double sqrt_newton(double x) noexcept {
  if (!(x > 0.0)) return 0.0;
  double r = x > 1.0 ? x : 1.0;
  for (int i = 0; i < 200; ++i) {
    const double next = 0.5 * (r + x / r);
    if (!(next < r)) break;
    r = next;
  }
  return r;
}

/// First-order low-pass y += a * (x - y), a = 1 - exp(-bandwidth * Ts) in (0, 1]. The state
/// is an `extended<T>` (q15/q31: 24 bits below T's LSB), so small steps are not lost to
/// rounding and the output settles within 0.5 LSB of a constant input.
template <class T>
class low_pass {
 public:
  constexpr low_pass() noexcept = default;
  /// bandwidth in rad/s; 0 or less (or a non-finite value) passes the input through.
  constexpr low_pass(double bandwidth, double sample_time) noexcept
      : a_{precise_gain<T>::from_double(bandwidth > 0.0 && bandwidth * sample_time < 40.0
                                            ? -expm1_nonpositive(-bandwidth * sample_time)
                                            : 1.0)} {}
  constexpr T step(T x) noexcept {
    y_ = y_ + (extended<T>{x} - y_) * a_;
    return y_.rounded();
  }
  constexpr void reset(T x) noexcept { y_ = extended<T>{x}; }
  constexpr T value() const noexcept { return y_.rounded(); }

 private:
  precise_gain<T> a_{precise_gain<T>::from_double(1.0)};
  extended<T> y_{};
};

/// A non-finite float (NaN or infinity); always false for q15/q31.
template <class T>
constexpr bool non_finite(T v) noexcept {
  return !finite_value(v);
}

}  // namespace dqfx::detail
