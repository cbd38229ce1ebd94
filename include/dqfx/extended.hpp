// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Extended precision: the part of the number layer for kernels whose result must be
/// rounded once after several steps (Clarke with 1/3 and 1/sqrt(3), space-vector
/// modulation, ratios).
///   - `precise_gain<T>`: a constant in [0, 2) with 32 significant bits,
///   - `exact_sum<T>`: an integer combination of values of T (2a - b - c, ...), exact,
///   - `scale(n, g)`, `scale(n1, g1, n2, g2)`: n*g or n1*g1 + n2*g2 rounded to T once,
///   - `extended<T>`: a value at T's scale with more fraction bits and a wider range,
///     where sums, differences and small integer multiples are exact,
///   - `divisor<T>`: division of extended values by one common denominator.
/// For q15 `scale` rounds the exact 64-bit products; for q31 the exact product of one
/// term, or the sum of two products each truncated 2^-24 LSB. `extended<q15>` is a 32-bit
/// integer at 2^-28 (13 guard bits, range [-8, 8)), `extended<q31>` a 64-bit integer at
/// 2^-55 (24 guard bits, range [-256, 256)): cheap on a 32-bit core, and a product with a
/// precise gain truncated to that resolution. For float and double all of this is plain
/// arithmetic in T.

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/number.hpp"

namespace dqfx {
namespace detail {

/// floor(u * m / 2^shift) for u < 2^63, m < 2^32 and 0 <= shift <= 95, when the result
/// fits in 64 bits (always for shift >= 31). The full product needs up to 95 bits; it is
/// assembled from two 32x32->64 products, or one when u < 2^32.
constexpr std::uint64_t multiply_shift(std::uint64_t u, std::uint32_t m, int shift) noexcept {
  if (u <= 0xFFFFFFFFu && shift < 64) return (u * m) >> shift;
  const std::uint64_t hi = (u >> 32) * m;           // < 2^63
  const std::uint64_t lo = (u & 0xFFFFFFFFu) * m;   // < 2^64
  // u*m = t*2^32 + (lo mod 2^32) with t = hi + floor(lo / 2^32) < 2^63, exactly.
  const std::uint64_t t = hi + (lo >> 32);
  if (shift >= 32) return t >> (shift - 32);
  return (t << (32 - shift)) | ((lo & 0xFFFFFFFFu) >> shift);
}

/// floor(u * m / 2^shift + 1/2): the product rounded to nearest once, for u < 2^63,
/// m < 2^32 and 1 <= shift <= 95, when the result fits in 64 bits.
constexpr std::uint64_t multiply_round(std::uint64_t u, std::uint32_t m, int shift) noexcept {
  if (u <= 0xFFFFFFFFu && shift < 64) return ((u * m >> (shift - 1)) + 1) >> 1;  // u*m < 2^64
  const std::uint64_t hi = (u >> 32) * m;
  const std::uint64_t lo = (u & 0xFFFFFFFFu) * m;
  const std::uint64_t t = hi + (lo >> 32), low = lo & 0xFFFFFFFFu;  // u*m = t*2^32 + low
  if (shift >= 33) return (t + (std::uint64_t{1} << (shift - 33))) >> (shift - 32);
  // shift <= 32: the bits below 2^32 matter.
  return (t << (32 - shift)) + (((low >> (shift - 1)) + 1) >> 1);
}

/// |v| of a signed integer as unsigned, defined for the most negative value too.
template <class Int>
constexpr std::make_unsigned_t<Int> magnitude_of(Int v) noexcept {
  using U = std::make_unsigned_t<Int>;
  return v < 0 ? static_cast<U>(U{0} - static_cast<U>(v)) : static_cast<U>(v);
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

/// Storage of extended<T>: a 32-bit integer for q15, 64-bit for q31.
template <class T> struct extended_layout;
template <> struct extended_layout<q15> {
  using storage = std::int32_t;
  static constexpr int guard_bits = 13;
};
template <> struct extended_layout<q31> {
  using storage = std::int64_t;
  static constexpr int guard_bits = 24;
};

}  // namespace detail

/// A constant multiplier c in [0, 2). q15/q31: c = m * 2^-shift with a 32-bit mantissa m
/// in [2^31, 2^32) (or 0) and shift in [31, 95], so the constant keeps 32 significant bits
/// (relative error below 2^-32) whatever its size. float/double: c in T. Build it with
/// `from_double`; negative, NaN and values of 2 or more saturate to the nearest
/// representable constant (a counted saturation event).
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
  using layout = detail::extended_layout<T>;

 public:
  using storage_type = typename layout::storage;
  static constexpr int guard_bits = layout::guard_bits;
  /// Fraction bits of the stored integer (q15: 28, q31: 55).
  static constexpr int fraction_bits = T::fraction_bits + guard_bits;

  constexpr extended() noexcept = default;
  constexpr extended(T x) noexcept  // NOLINT: implicit, like a widening
      : value_{static_cast<storage_type>(storage_type{x.raw()} * (storage_type{1} << guard_bits))} {}
  static constexpr extended from_raw(storage_type v) noexcept { return extended{v, tag{}}; }
  static constexpr extended one() noexcept { return from_raw(storage_type{1} << fraction_bits); }
  constexpr storage_type raw() const noexcept { return value_; }

  /// Rounded to nearest (ties toward +infinity) and saturated into T: the one rounding.
  constexpr T rounded() const noexcept { return T::saturated(detail::round_shift(value_, guard_bits)); }
  /// value / 2, rounded toward minus infinity by 2^-(fraction_bits+1) at most.
  constexpr extended half() const noexcept { return from_raw(static_cast<storage_type>(value_ >> 1)); }
  constexpr bool is_finite() const noexcept { return true; }

  // Sums and multiples saturate (a counted event) beyond the range, which the kernels
  // stay far inside.
  friend constexpr extended operator+(extended a, extended b) noexcept {
    return from_raw(detail::saturating_add(a.value_, b.value_));
  }
  friend constexpr extended operator-(extended a, extended b) noexcept { return a + (-b); }
  friend constexpr extended operator-(extended a) noexcept {
    if (a.value_ == std::numeric_limits<storage_type>::min()) {
      detail::note_saturation();
      return from_raw(std::numeric_limits<storage_type>::max());
    }
    return from_raw(static_cast<storage_type>(-a.value_));
  }
  friend constexpr extended operator*(extended a, int k) noexcept {
    storage_type r{};
    if (__builtin_mul_overflow(a.value_, static_cast<storage_type>(k), &r)) {
      detail::note_saturation();
      return from_raw((a.value_ < 0) != (k < 0) ? std::numeric_limits<storage_type>::min()
                                                 : std::numeric_limits<storage_type>::max());
    }
    return from_raw(r);
  }
  /// a * g, truncated toward zero to the extended resolution.
  friend constexpr extended operator*(extended a, precise_gain<T> g) noexcept {
    return product(a.value_, g.mantissa(), g.shift());
  }
  friend constexpr bool operator==(extended a, extended b) noexcept { return a.value_ == b.value_; }
  friend constexpr bool operator!=(extended a, extended b) noexcept { return a.value_ != b.value_; }
  friend constexpr bool operator<(extended a, extended b) noexcept { return a.value_ < b.value_; }
  friend constexpr bool operator<=(extended a, extended b) noexcept { return a.value_ <= b.value_; }
  friend constexpr bool operator>(extended a, extended b) noexcept { return a.value_ > b.value_; }
  friend constexpr bool operator>=(extended a, extended b) noexcept { return a.value_ >= b.value_; }

  /// sign(n) * floor(|n| * m / 2^shift), saturated: an integer at the extended scale
  /// times a positive constant m * 2^-shift.
  template <class Int>
  static constexpr extended product(Int n, std::uint32_t m, int shift) noexcept {
    constexpr std::uint64_t largest = static_cast<std::uint64_t>(std::numeric_limits<storage_type>::max());
    std::uint64_t p = detail::multiply_shift(detail::magnitude_of(n), m, shift);
    if (p > largest) {
      detail::note_saturation();
      p = largest;
    }
    const auto s = static_cast<storage_type>(p);
    return from_raw(n < 0 ? static_cast<storage_type>(-s) : s);
  }

 private:
  struct tag {};
  constexpr extended(storage_type v, tag) noexcept : value_{v} {}
  storage_type value_{0};
};

/// An exact integer combination of values of T, such as 2a - b - c, to be multiplied by a
/// precise gain: by `scale` into T with one rounding, or by `*` into an extended value.
/// q15/q31: the sum of raw values in T's wide integer, exact for combinations whose
/// weights add up (in magnitude) to less than 2^15 (q15) or 2^31 (q31). float/double: T
/// arithmetic.
template <class T, class = void>
class exact_sum {
 public:
  constexpr exact_sum() noexcept = default;
  constexpr exact_sum(T x) noexcept : value_{x} {}  // NOLINT: implicit, like a widening
  constexpr T value() const noexcept { return value_; }
  friend constexpr exact_sum operator+(exact_sum a, exact_sum b) noexcept { return exact_sum{a.value_ + b.value_}; }
  friend constexpr exact_sum operator-(exact_sum a, exact_sum b) noexcept { return exact_sum{a.value_ - b.value_}; }
  friend constexpr exact_sum operator-(exact_sum a) noexcept { return exact_sum{-a.value_}; }
  friend constexpr exact_sum operator*(exact_sum a, int k) noexcept { return exact_sum{a.value_ * static_cast<T>(k)}; }
  friend constexpr extended<T> operator*(exact_sum a, precise_gain<T> g) noexcept {
    return extended<T>{a.value_ * g.value()};
  }

 private:
  T value_{};
};

template <class T>
class exact_sum<T, std::enable_if_t<is_fixed_v<T>>> {
 public:
  using wide_type = typename T::wide_type;

  constexpr exact_sum() noexcept = default;
  constexpr exact_sum(T x) noexcept : value_{x.raw()} {}  // NOLINT: implicit, like a widening
  /// The sum in units of T's LSB.
  constexpr wide_type value() const noexcept { return value_; }
  friend constexpr exact_sum operator+(exact_sum a, exact_sum b) noexcept { return exact_sum{a.value_ + b.value_, tag{}}; }
  friend constexpr exact_sum operator-(exact_sum a, exact_sum b) noexcept { return exact_sum{a.value_ - b.value_, tag{}}; }
  friend constexpr exact_sum operator-(exact_sum a) noexcept { return exact_sum{-a.value_, tag{}}; }
  friend constexpr exact_sum operator*(exact_sum a, int k) noexcept { return exact_sum{a.value_ * k, tag{}}; }
  /// The sum times g, truncated toward zero to the extended resolution (q15: one
  /// 32x32->64 product).
  friend constexpr extended<T> operator*(exact_sum a, precise_gain<T> g) noexcept {
    return extended<T>::product(a.value_, g.mantissa(), g.shift() - extended<T>::guard_bits);
  }

 private:
  struct tag {};
  constexpr exact_sum(wide_type v, tag) noexcept : value_{v} {}
  wide_type value_{0};
};

/// n * g rounded to nearest once and saturated: the exact product (two 32x32->64
/// products at most) rounded, ties away from zero. float/double: n * g.
template <class T>
constexpr T scale(exact_sum<T> n, precise_gain<T> g) noexcept {
  if constexpr (is_fixed_v<T>) {
    const auto v = n.value();
    const std::uint64_t r = detail::multiply_round(detail::magnitude_of(v), g.mantissa(), g.shift());
    // r < 2^61, and the saturating conversion clamps anything beyond T's range. q15
    // (|v| < 2^30 for weights below 2^15, g < 2): r < 2^31, so the signed value and its
    // clamp stay in 32 bits.
    using signed_result = std::conditional_t<std::is_same_v<T, q15>, std::int32_t, std::int64_t>;
    const auto s = static_cast<signed_result>(r);
    return T::saturated(v < 0 ? -s : s);
  } else {
    return n.value() * g.value();
  }
}

/// n1 * g1 + n2 * g2 rounded to nearest once and saturated. q15 (|n| < 2^18): both
/// products exact, so the result is correctly rounded for the given constants. q31: each
/// product truncated toward zero 2^-24 LSB before the rounding. float/double: two products
/// and a sum in T.
template <class T>
constexpr T scale(exact_sum<T> n1, precise_gain<T> g1, exact_sum<T> n2, precise_gain<T> g2) noexcept {
  if constexpr (std::is_same_v<T, q15>) {
    // Products below 2^50 at 2^-(15+shift); aligned to the larger shift (at most 8 bits
    // apart for constants of 2^-8 and up) they stay below 2^59.
    const int shift = g1.shift() > g2.shift() ? g1.shift() : g2.shift();
    auto term = [shift](std::int32_t n, precise_gain<T> g) {
      const std::uint64_t p = std::uint64_t{detail::magnitude_of(n)} * g.mantissa();
      const auto s = static_cast<std::int64_t>(p << (shift - g.shift()));
      return n < 0 ? -s : s;
    };
    return T::saturated(detail::round_shift(term(n1.value(), g1) + term(n2.value(), g2), shift));
  } else if constexpr (is_fixed_v<T>) {
    return (n1 * g1 + n2 * g2).rounded();
  } else {
    return n1.value() * g1.value() + n2.value() * g2.value();
  }
}

/// Division of several extended numerators by one positive denominator: the reciprocal
/// is formed once. For q15/q31 the quotient of |num| <= den comes back within 2^-31
/// relative of num/den, truncated to the extended resolution; the reciprocal comes from a
/// linear first guess and three Newton steps in integer multiplies (no division
/// instruction, constant time). A numerator larger than the denominator saturates to
/// +/-1; a denominator that is not positive makes every quotient zero.
/// float/double: num * (1/den).
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
    // Normalise den into [2^62, 2^63): dn = D * 2^63 with D in [1/2, 1).
    shift_ = __builtin_clzll(den_) - 1;
    const std::uint64_t dn = den_ << shift_;
    // r ~ 2^31 / D: the linear guess 48/17 - 32/17 D (relative error at most 1/17), then
    // Newton steps r += r * (1 - D r), each squaring the error (2^-8, 2^-16, 2^-32).
    // D r is formed from all 63 bits of dn; the error term is kept at 2^-32, 2^-36 and
    // 2^-44 as it shrinks, so that r * error stays below 2^61.
    std::int64_t r = 6063268936 - static_cast<std::int64_t>((std::uint64_t{4042179290u} * (dn >> 31)) >> 32);
    // Written out so that every shift is a constant (a loop over the scales costs twice).
    r = newton_step<32>(r, dn);
    r = newton_step<36>(r, dn);
    r = newton_step<44>(r, dn);
    mantissa_ = r > 0xFFFFFFFF ? 0xFFFFFFFFu : static_cast<std::uint32_t>(r);
  }

  constexpr ext operator()(ext num) const noexcept {
    if (den_ == 0) return ext{};
    const std::uint64_t u = detail::magnitude_of(num.raw());
    if (u >= den_) return num.raw() < 0 ? -ext::one() : ext::one();
    // num/den = (u << shift) / (den << shift), both below 2^63; times m it is at 2^-94.
    const std::uint64_t p = detail::multiply_shift(u << shift_, mantissa_, 94 - ext::fraction_bits);
    const auto s = static_cast<typename ext::storage_type>(p);  // <= 2^fraction_bits
    return ext::from_raw(num.raw() < 0 ? static_cast<typename ext::storage_type>(-s) : s);
  }

 private:
  /// r + r * (1 - D r), rounded, with the error term at 2^-Bits.
  template <int Bits>
  static constexpr std::int64_t newton_step(std::int64_t r, std::uint64_t dn) noexcept {
    const auto ur = static_cast<std::uint64_t>(r);  // <= 2^32
    const std::uint64_t dr = (dn >> 32) * ur + (((dn & 0xFFFFFFFFu) * ur) >> 32);  // D r at 2^-62
    constexpr std::uint64_t one = std::uint64_t{1} << 62;
    const std::int64_t error = dr <= one ? static_cast<std::int64_t>((one - dr) >> (62 - Bits))
                                         : -static_cast<std::int64_t>((dr - one) >> (62 - Bits));
    return r + (((r * error) + (std::int64_t{1} << (Bits - 1))) >> Bits);  // rounded
  }

  std::uint64_t den_{0};
  int shift_{0};
  std::uint32_t mantissa_{0};
};

}  // namespace dqfx
