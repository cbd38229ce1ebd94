// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Extended precision: the part of the number layer for kernels whose result must be
/// rounded once after several steps (Clarke with 1/3 and 1/sqrt(3), space-vector
/// modulation, ratios).
///   - `precise_gain<T>`: a constant in [0, 2) with 32 significant bits,
///   - `extended<T>`: a value at T's scale with 24 more fraction bits and a wider range,
///     where sums, differences and small integer multiples are exact,
///   - `divisor<T>`: division of extended values by one common denominator.
/// For q15 and q31 the value lives in a 64-bit integer (q15: 2^-39 units, range +/-2^24;
/// q31: 2^-55 units, range +/-256) and a product with a precise gain is formed from two
/// 32x32->64 multiplies, so an integer combination of inputs times 1/sqrt(3) carries an
/// error of 2^-33 relative plus 2^-24 LSB before its single rounding. For float and double
/// all three are plain arithmetic in T.

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/number.hpp"

namespace dqfx {
namespace detail {

/// floor(u * m / 2^shift) for u < 2^63, m < 2^32 and 31 <= shift <= 95. The full product
/// needs up to 95 bits; it is assembled from two 32x32->64 products.
constexpr std::uint64_t multiply_shift(std::uint64_t u, std::uint32_t m, int shift) noexcept {
  const std::uint64_t hi = (u >> 32) * m;           // < 2^63
  const std::uint64_t lo = (u & 0xFFFFFFFFu) * m;   // < 2^64
  // u*m = t*2^32 + (lo mod 2^32) with t = hi + floor(lo / 2^32) < 2^63, exactly.
  const std::uint64_t t = hi + (lo >> 32);
  if (shift >= 32) return t >> (shift - 32);
  return (t << 1) | ((lo & 0xFFFFFFFFu) >> 31);    // shift 31: < 2^64, no wrap
}

/// x - x is zero for every finite x and NaN for infinities and NaN (constexpr isfinite).
template <class T>
constexpr bool finite_value(T x) noexcept {
  if constexpr (std::is_floating_point_v<T>) {
    return (x - x) == T{0};
  } else {
    return true;
  }
}

}  // namespace detail

/// A constant multiplier c in [0, 2) for extended values. q15/q31: c = m * 2^-shift with a
/// 32-bit mantissa m in [2^31, 2^32) (or 0) and shift in [31, 95], so the constant keeps
/// 32 significant bits (relative error below 2^-32) whatever its size. float/double: c in T.
/// Build it with `from_double`; negative, NaN and values of 2 or more saturate to the
/// nearest representable constant (a counted saturation event).
template <class T, class = void>
class precise_gain {
 public:
  constexpr precise_gain() noexcept = default;
  static constexpr precise_gain from_double(double v) noexcept {
    if (!(v >= 0.0)) {
      detail::note_saturation();
      return precise_gain{T{0}};
    }
    if (v >= 2.0) {
      detail::note_saturation();
      return precise_gain{static_cast<T>(2.0 - 2.0 * static_cast<double>(std::numeric_limits<T>::epsilon()))};
    }
    return precise_gain{static_cast<T>(v)};
  }
  constexpr T value() const noexcept { return value_; }
  constexpr double to_double() const noexcept { return static_cast<double>(value_); }

 private:
  constexpr explicit precise_gain(T v) noexcept : value_{v} {}
  T value_{};
};

template <class T>
class precise_gain<T, std::enable_if_t<is_fixed_v<T>>> {
 public:
  static constexpr int min_shift = 31;
  static constexpr int max_shift = 95;

  constexpr precise_gain() noexcept = default;
  static constexpr precise_gain from_double(double v) noexcept {
    if (!(v >= 0.0)) {
      detail::note_saturation();
      return precise_gain{};
    }
    if (v >= 2.0) {
      detail::note_saturation();
      return precise_gain{0xFFFFFFFFu, min_shift};
    }
    int shift = min_shift;
    double scaled = v * 2147483648.0;  // v * 2^31: exact
    while (scaled < 2147483648.0 && shift < max_shift) {
      scaled *= 2.0;
      ++shift;
    }
    const std::int64_t m = detail::round_half_away(scaled);
    if (m >= 4294967296) {  // rounded up to the next power of two
      if (shift == min_shift) return precise_gain{0xFFFFFFFFu, min_shift};
      return precise_gain{0x80000000u, shift - 1};
    }
    return precise_gain{static_cast<std::uint32_t>(m), shift};
  }
  /// The constant m * 2^-shift exactly (for constants found by search); shift is clamped
  /// into [31, 95].
  static constexpr precise_gain from_mantissa(std::uint32_t m, int shift) noexcept {
    return precise_gain{m, shift < min_shift ? min_shift : (shift > max_shift ? max_shift : shift)};
  }
  constexpr std::uint32_t mantissa() const noexcept { return mantissa_; }
  constexpr int shift() const noexcept { return shift_; }
  constexpr double to_double() const noexcept {
    double v = static_cast<double>(mantissa_);
    for (int i = 0; i < shift_; ++i) v *= 0.5;
    return v;
  }

 private:
  constexpr precise_gain(std::uint32_t m, int s) noexcept : mantissa_{m}, shift_{s} {}
  std::uint32_t mantissa_{0};
  int shift_{min_shift};
};

/// A value at T's scale with more fraction bits and a wider range than T, for
/// intermediate results that are rounded to T once, by `rounded()`.
/// float/double: the value itself, with T's own rounding at every step.
template <class T, class = void>
class extended {
 public:
  constexpr extended() noexcept = default;
  constexpr extended(T x) noexcept : value_{x} {}  // NOLINT: implicit, like a widening
  static constexpr extended one() noexcept { return extended{T{1}}; }

  constexpr T rounded() const noexcept { return value_; }
  constexpr extended half() const noexcept { return extended{value_ * T{0.5}}; }
  constexpr bool is_finite() const noexcept { return detail::finite_value(value_); }

  friend constexpr extended operator+(extended a, extended b) noexcept { return extended{a.value_ + b.value_}; }
  friend constexpr extended operator-(extended a, extended b) noexcept { return extended{a.value_ - b.value_}; }
  friend constexpr extended operator-(extended a) noexcept { return extended{-a.value_}; }
  friend constexpr extended operator*(extended a, int k) noexcept { return extended{a.value_ * static_cast<T>(k)}; }
  friend constexpr extended operator*(extended a, precise_gain<T> g) noexcept { return extended{a.value_ * g.value()}; }
  friend constexpr bool operator==(extended a, extended b) noexcept { return a.value_ == b.value_; }
  friend constexpr bool operator!=(extended a, extended b) noexcept { return a.value_ != b.value_; }
  friend constexpr bool operator<(extended a, extended b) noexcept { return a.value_ < b.value_; }
  friend constexpr bool operator<=(extended a, extended b) noexcept { return a.value_ <= b.value_; }
  friend constexpr bool operator>(extended a, extended b) noexcept { return a.value_ > b.value_; }
  friend constexpr bool operator>=(extended a, extended b) noexcept { return a.value_ >= b.value_; }

 private:
  T value_{};
};

template <class T>
class extended<T, std::enable_if_t<is_fixed_v<T>>> {
 public:
  static constexpr int guard_bits = 24;
  /// Fraction bits of the stored integer (q15: 39, q31: 55).
  static constexpr int fraction_bits = T::fraction_bits + guard_bits;

  constexpr extended() noexcept = default;
  constexpr extended(T x) noexcept  // NOLINT: implicit, like a widening
      : value_{std::int64_t{x.raw()} * (std::int64_t{1} << guard_bits)} {}
  static constexpr extended from_raw(std::int64_t v) noexcept { return extended{v, tag{}}; }
  static constexpr extended one() noexcept { return from_raw(std::int64_t{1} << fraction_bits); }
  constexpr std::int64_t raw() const noexcept { return value_; }

  /// Rounded to nearest (ties toward +infinity) and saturated into T: the one rounding.
  constexpr T rounded() const noexcept { return T::saturated(detail::round_shift(value_, guard_bits)); }
  /// value / 2, rounded toward minus infinity by 2^-(fraction_bits+1) at most.
  constexpr extended half() const noexcept { return from_raw(value_ >> 1); }
  constexpr bool is_finite() const noexcept { return true; }

  // Sums and multiples saturate (a counted event) far outside any kernel's range.
  friend constexpr extended operator+(extended a, extended b) noexcept {
    return from_raw(detail::saturating_add(a.value_, b.value_));
  }
  friend constexpr extended operator-(extended a, extended b) noexcept { return a + (-b); }
  friend constexpr extended operator-(extended a) noexcept {
    if (a.value_ == std::numeric_limits<std::int64_t>::min()) {
      detail::note_saturation();
      return from_raw(std::numeric_limits<std::int64_t>::max());
    }
    return from_raw(-a.value_);
  }
  friend constexpr extended operator*(extended a, int k) noexcept {
    std::int64_t r{};
    if (__builtin_mul_overflow(a.value_, std::int64_t{k}, &r)) {
      detail::note_saturation();
      return from_raw((a.value_ < 0) != (k < 0) ? std::numeric_limits<std::int64_t>::min()
                                                 : std::numeric_limits<std::int64_t>::max());
    }
    return from_raw(r);
  }
  /// a * g, truncated toward zero to the extended resolution (error below 2^-24 LSB).
  friend constexpr extended operator*(extended a, precise_gain<T> g) noexcept {
    return scaled(a.value_, g.mantissa(), g.shift());
  }
  friend constexpr bool operator==(extended a, extended b) noexcept { return a.value_ == b.value_; }
  friend constexpr bool operator!=(extended a, extended b) noexcept { return a.value_ != b.value_; }
  friend constexpr bool operator<(extended a, extended b) noexcept { return a.value_ < b.value_; }
  friend constexpr bool operator<=(extended a, extended b) noexcept { return a.value_ <= b.value_; }
  friend constexpr bool operator>(extended a, extended b) noexcept { return a.value_ > b.value_; }
  friend constexpr bool operator>=(extended a, extended b) noexcept { return a.value_ >= b.value_; }

  /// sign(v) * floor(|v| * m / 2^shift), saturated: v times a positive constant.
  static constexpr extended scaled(std::int64_t v, std::uint32_t m, int shift) noexcept {
    constexpr std::uint64_t largest = std::numeric_limits<std::int64_t>::max();
    const bool negative = v < 0;
    std::uint64_t u = negative ? 0u - static_cast<std::uint64_t>(v) : static_cast<std::uint64_t>(v);
    if (u > largest) u = largest;  // |INT64_MIN|
    std::uint64_t p = detail::multiply_shift(u, m, shift);
    if (p > largest) {
      detail::note_saturation();
      p = largest;
    }
    const std::int64_t s = static_cast<std::int64_t>(p);
    return from_raw(negative ? -s : s);
  }

 private:
  struct tag {};
  constexpr extended(std::int64_t v, tag) noexcept : value_{v} {}
  std::int64_t value_{0};
};

/// Division of several extended numerators by one positive denominator: the reciprocal
/// is formed once. For q15/q31 the quotient of |num| <= den comes back within
/// 2^-31 relative plus 2^-24 LSB of num/den (one 64-bit integer division at
/// construction); a numerator larger than the denominator saturates to +/-1. A
/// denominator that is not positive makes every quotient zero. float/double: num * (1/den).
template <class T, class = void>
class divisor {
 public:
  constexpr explicit divisor(extended<T> den) noexcept
      : reciprocal_{den > extended<T>{} ? T{1} / den.rounded() : T{0}} {}
  constexpr extended<T> operator()(extended<T> num) const noexcept {
    return extended<T>{num.rounded() * reciprocal_};
  }

 private:
  T reciprocal_;
};

template <class T>
class divisor<T, std::enable_if_t<is_fixed_v<T>>> {
  using ext = extended<T>;

 public:
  constexpr explicit divisor(ext den) noexcept {
    if (den.raw() <= 0) return;
    den_ = static_cast<std::uint64_t>(den.raw());
    // Normalise den into [2^62, 2^63), then a 33-bit rounded copy d33 in [2^32, 2^33],
    // and m = round(2^64 / d33) ~ 2^94 / normalised den, a mantissa in [2^31, 2^32].
    shift_ = __builtin_clzll(den_) - 1;
    const std::uint64_t normalised = den_ << shift_;
    const std::uint64_t d33 = (normalised + (std::uint64_t{1} << 29)) >> 30;
    const std::uint64_t q = 0xFFFFFFFFFFFFFFFFu / d33;
    const std::uint64_t r = 0xFFFFFFFFFFFFFFFFu % d33;  // 2^64 / d33 = q + (r + 1) / d33
    const std::uint64_t m = q + (2 * (r + 1) >= d33 ? 1u : 0u);
    mantissa_ = m > 0xFFFFFFFFu ? 0xFFFFFFFFu : static_cast<std::uint32_t>(m);
  }

  constexpr ext operator()(ext num) const noexcept {
    if (den_ == 0) return ext{};
    const bool negative = num.raw() < 0;
    const std::uint64_t u = negative ? 0u - static_cast<std::uint64_t>(num.raw())
                                     : static_cast<std::uint64_t>(num.raw());
    if (u >= den_) return negative ? -ext::one() : ext::one();
    // num/den = (u << shift) / (den << shift), both below 2^63; times m it is at 2^-94.
    const std::uint64_t p = detail::multiply_shift(u << shift_, mantissa_, 94 - ext::fraction_bits);
    const std::int64_t s = static_cast<std::int64_t>(p);  // <= 2^fraction_bits
    return ext::from_raw(negative ? -s : s);
  }

 private:
  std::uint64_t den_{0};
  int shift_{0};
  std::uint32_t mantissa_{0};
};

}  // namespace dqfx
