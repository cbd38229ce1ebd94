// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The one number interface that every dqfx kernel is written against. A kernel is a
/// template over T in {q15, q31, float, double} and uses only:
///   - `+ - * unary-` and comparisons (saturating and rounding for q15/q31),
///   - `dqfx::abs`, `dqfx::from_double<T>`, `dqfx::to_double`, `dqfx::convert<To>`,
///   - `dqfx::gain<T>` for constants of any magnitude (2/sqrt(3), gains above one),
///   - `dqfx::accumulator<T>` for sums of products with one final rounding,
///   - `dqfx::number_traits<T>` for limits and the size of one unit in the last place.
/// Where a type needs its own recipe (trigonometry, square roots), the kernel forwards
/// to a `detail::` struct specialised per type.

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/fixed.hpp"

namespace dqfx {

/// Limits and facts about a number type, one specialisation per supported type.
template <class T, class = void> struct number_traits;

template <class T>
struct number_traits<T, std::enable_if_t<std::is_floating_point_v<T>>> {
  static constexpr bool is_fixed = false;
  static constexpr T max() noexcept { return std::numeric_limits<T>::max(); }
  static constexpr T lowest() noexcept { return std::numeric_limits<T>::lowest(); }
  /// Unit in the last place at 1.0 (the scale in which error bounds are quoted).
  static constexpr double lsb = std::numeric_limits<T>::epsilon();
  static constexpr const char* name = std::is_same_v<T, float> ? "float" : "double";
};

template <class Raw>
struct number_traits<fixed<Raw>> {
  static constexpr bool is_fixed = true;
  static constexpr int fraction_bits = fixed<Raw>::fraction_bits;
  static constexpr fixed<Raw> max() noexcept { return fixed<Raw>::max(); }
  static constexpr fixed<Raw> lowest() noexcept { return fixed<Raw>::lowest(); }
  static constexpr double lsb = 1.0 / static_cast<double>(std::uint64_t{1} << fraction_bits);
  static constexpr const char* name = fraction_bits == 15 ? "q15" : "q31";
};

template <class T> struct is_number : std::false_type {};
template <> struct is_number<float> : std::true_type {};
template <> struct is_number<double> : std::true_type {};
template <> struct is_number<q15> : std::true_type {};
template <> struct is_number<q31> : std::true_type {};
template <class T> inline constexpr bool is_number_v = is_number<T>::value;

namespace detail {

/// x rounded to nearest, ties away from zero, for |x| below 2^62; usable in constant
/// expressions. The fraction is split off exactly first: adding 0.5 to x itself would
/// round 0.49999999999999994 up to 1.
constexpr std::int64_t round_half_away(double x) noexcept {
  const auto whole = static_cast<std::int64_t>(x);  // toward zero
  const double fraction = x - static_cast<double>(whole);  // exact
  if (fraction >= 0.5) return whole + 1;
  if (fraction <= -0.5) return whole - 1;
  return whole;
}

constexpr bool is_nan(double x) noexcept { return x != x; }

}  // namespace detail

/// Converts a double into T: rounds to nearest (ties away from zero; float and double:
/// IEEE, ties to even), saturates values outside T's range (infinities too), and maps NaN
/// to zero, for every T including float: it is the conversion for constants and designed
/// parameters, where the compile-time checks refuse NaN and a kernel's parameters must
/// mean the same in all four types. Convert measurements with `checked_from_double`,
/// which reports NaN instead of answering 0. constexpr, so constants cost nothing.
template <class T>
constexpr T from_double(double v) noexcept {
  static_assert(is_number_v<T>, "dqfx::from_double supports q15, q31, float and double");
  if (detail::is_nan(v)) {
    detail::note_saturation();
    return T{};
  }
  if constexpr (std::is_floating_point_v<T>) {
    if (v > static_cast<double>(std::numeric_limits<T>::max())) {
      detail::note_saturation();
      return std::numeric_limits<T>::max();
    }
    if (v < static_cast<double>(std::numeric_limits<T>::lowest())) {
      detail::note_saturation();
      return std::numeric_limits<T>::lowest();
    }
    return static_cast<T>(v);
  } else {
    using raw = typename T::raw_type;
    constexpr double scale = 1.0 / number_traits<T>::lsb;
    const double x = v * scale;
    // Compare before converting: a double far out of range must not reach the cast.
    if (x >= static_cast<double>(std::numeric_limits<raw>::max()) + 0.5) {
      detail::note_saturation();
      return T::max();
    }
    if (x < static_cast<double>(std::numeric_limits<raw>::min()) - 0.5) {
      detail::note_saturation();
      return T::lowest();
    }
    return T::saturated(detail::round_half_away(x));
  }
}

/// The exact value of a q15/q31, or a float widened to double.
template <class T>
constexpr double to_double(T v) noexcept {
  static_assert(is_number_v<T>, "dqfx::to_double supports q15, q31, float and double");
  if constexpr (std::is_floating_point_v<T>) {
    return static_cast<double>(v);
  } else {
    return static_cast<double>(v.raw()) * number_traits<T>::lsb;
  }
}

/// Converts between q15, q31, float and double:
///   - q15 -> q31, q15 -> float/double, q31 -> double, float -> double: exact;
///   - q31 -> q15: rounded to nearest, ties away from zero (as `from_double`), saturated
///     (q31 values from max() - 2^-16 up round to 1.0 and give q15's max());
///   - q31 -> float: rounded to nearest, ties to even (one IEEE rounding);
///   - float/double -> q15/q31 and double -> float: `from_double` (nearest, saturating,
///     NaN to 0; see there).
/// So convert<q15>(x) == from_double<q15>(to_double(x)) for every x, without a double.
template <class To, class From>
constexpr To convert(From x) noexcept {
  static_assert(is_number_v<To> && is_number_v<From>, "dqfx::convert supports q15, q31, float and double");
  if constexpr (std::is_same_v<To, From>) {
    return x;
  } else if constexpr (is_fixed_v<To> && is_fixed_v<From>) {
    constexpr int shift = From::fraction_bits - To::fraction_bits;
    if constexpr (shift < 0) {
      // Widening: exact (|raw| * 2^16 fits in 32 bits).
      return To::from_raw(static_cast<typename To::raw_type>(std::int32_t{x.raw()} * (std::int32_t{1} << -shift)));
    } else {
      // Narrowing: the magnitude rounded half up, the sign put back (ties away from zero).
      const std::int64_t r = x.raw();
      const std::int64_t half = std::int64_t{1} << (shift - 1);
      const std::int64_t m = ((r < 0 ? -r : r) + half) >> shift;
      return To::saturated(r < 0 ? -m : m);
    }
  } else if constexpr (is_fixed_v<From>) {
    // The raw integer converted once (the only rounding), then scaled by a power of two.
    return static_cast<To>(x.raw()) * static_cast<To>(number_traits<From>::lsb);
  } else {
    return from_double<To>(static_cast<double>(x));
  }
}

/// What a checked conversion found.
enum class conversion_status : std::uint8_t {
  ok,            ///< in range (rounded as `from_double` rounds)
  not_finite,    ///< NaN or an infinity: the value is 0
  out_of_range,  ///< finite but beyond the type's range: the value is saturated
};

/// A converted measurement and what the conversion found.
template <class T> struct checked {
  T value{};
  conversion_status status = conversion_status::ok;
  constexpr bool ok() const noexcept { return status == conversion_status::ok; }
};

/// Converts a measured double (or float, which widens exactly) into T like `from_double`,
/// and reports what `from_double` would hide: NaN and infinities (value 0, so that a
/// broken sensor cannot pass for a saturated reading) and finite values beyond T's range
/// (value saturated; for q15/q31 every value that would round beyond max() or lowest()).
/// Test `ok()` before using the value, e.g. to raise the controller's own fault.
template <class T>
constexpr checked<T> checked_from_double(double v) noexcept {
  static_assert(is_number_v<T>, "dqfx::checked_from_double supports q15, q31, float and double");
  constexpr double largest = std::numeric_limits<double>::max();
  if (detail::is_nan(v) || v > largest || v < -largest) return {T{}, conversion_status::not_finite};
  bool inside = false;
  if constexpr (is_fixed_v<T>) {
    const double x = v / number_traits<T>::lsb;  // exact: a power of two
    using raw = typename T::raw_type;
    // Rounded to nearest with ties away from zero, x stays in [min, max] inside these.
    inside = x < static_cast<double>(std::numeric_limits<raw>::max()) + 0.5 &&
             x > static_cast<double>(std::numeric_limits<raw>::min()) - 0.5;
  } else {
    inside = v <= static_cast<double>(std::numeric_limits<T>::max()) &&
             v >= static_cast<double>(std::numeric_limits<T>::lowest());
  }
  return {from_double<T>(v), inside ? conversion_status::ok : conversion_status::out_of_range};
}

/// |x| for every number type (the fixed-point overload saturates |lowest()|).
template <class T, std::enable_if_t<std::is_floating_point_v<T>, int> = 0>
constexpr T abs(T x) noexcept {
  return x < T{0} ? -x : x;
}

/// A constant multiplier of any magnitude, e.g. 2/sqrt(3) or a controller gain of 40.
///
/// For q15 and q31 it is a 32-bit mantissa m and a shift s, value = m * 2^(s-31), with
/// the smallest s in [0, 30] that keeps |m| < 2^31: the constant keeps 31 significant
/// bits whatever its size, and `x * g` is one 32x32->64 product, one rounding and one
/// saturation. For float and double it is simply the value. Build it with
/// `gain<T>::from_double(v)`; constants beyond +/-2^30 saturate (and are counted).
template <class T, class = void>
class gain {
 public:
  constexpr gain() noexcept = default;
  static constexpr gain from_double(double v) noexcept { return gain{dqfx::from_double<T>(v)}; }
  constexpr double to_double() const noexcept { return static_cast<double>(value_); }
  friend constexpr T operator*(T x, gain g) noexcept { return x * g.value_; }
  friend constexpr T operator*(gain g, T x) noexcept { return x * g.value_; }

 private:
  constexpr explicit gain(T v) noexcept : value_{v} {}
  T value_{};
};

template <class T>
class gain<T, std::enable_if_t<is_fixed_v<T>>> {
 public:
  static constexpr int max_shift = 30;

  constexpr gain() noexcept = default;
  static constexpr gain from_double(double v) noexcept {
    if (detail::is_nan(v)) {
      detail::note_saturation();
      return gain{};
    }
    const double magnitude = v < 0 ? -v : v;
    int shift = 0;
    double limit = 1.0;  // 2^shift
    // Smallest shift whose rounded mantissa still fits in 31 bits.
    while (shift < max_shift && magnitude * 2147483648.0 / limit >= 2147483647.5) {
      ++shift;
      limit *= 2.0;
    }
    const double scaled = v * 2147483648.0 / limit;
    if (scaled >= 2147483647.5 || scaled < -2147483648.5) {
      detail::note_saturation();
      return gain{v < 0 ? INT32_MIN : INT32_MAX, shift};
    }
    return gain{static_cast<std::int32_t>(detail::round_half_away(scaled)), shift};
  }
  constexpr std::int32_t mantissa() const noexcept { return mantissa_; }
  constexpr int shift() const noexcept { return shift_; }
  constexpr double to_double() const noexcept {
    return static_cast<double>(mantissa_) / 2147483648.0 *
           static_cast<double>(std::int64_t{1} << shift_);
  }

  /// x * g rounded to nearest once and saturated once.
  friend constexpr T operator*(T x, gain g) noexcept {
    if constexpr (T::fraction_bits == 15) {
      // q15 and a constant below 2^13: the same value as one rounded 16x32 product (no
      // 64-bit shift by a variable amount; 16x16 products on ARMv6-M).
      if (g.shift_ <= 13) return T::saturated(detail::rounded_product16(x.raw(), g.mantissa_, 31 - g.shift_));
    }
    // |raw| <= 2^31 and |m| <= 2^31: the product fits in 63 bits for q15 and q31.
    const std::int64_t p = std::int64_t{x.raw()} * std::int64_t{g.mantissa_};
    return T::saturated(detail::round_shift(p, 31 - g.shift_));
  }
  friend constexpr T operator*(gain g, T x) noexcept { return x * g; }

 private:
  constexpr gain(std::int32_t m, int s) noexcept : mantissa_{m}, shift_{s} {}
  std::int32_t mantissa_{0};
  int shift_{0};
};

/// A sum of products kept wide (q15: 32-bit at 2^-30, q31: 64-bit at 2^-62), rounded to
/// nearest and saturated once by `result()`. Exact while every partial sum stays within
/// (-2, 2); beyond that the accumulator itself saturates (a counted event) rather than
/// wrap. For float and double it is a plain running sum in T.
template <class T, class = void>
class accumulator {
 public:
  constexpr accumulator() noexcept = default;
  constexpr explicit accumulator(T start) noexcept : sum_{start} {}
  constexpr accumulator& add_product(T a, T b) noexcept {
    sum_ = sum_ + a * b;
    return *this;
  }
  constexpr accumulator& subtract_product(T a, T b) noexcept {
    sum_ = sum_ - a * b;
    return *this;
  }
  constexpr T result() const noexcept { return sum_; }

 private:
  T sum_{};
};

template <class T>
class accumulator<T, std::enable_if_t<is_fixed_v<T>>> {
  using wide = typename T::wide_type;
  static constexpr int bits = T::fraction_bits;

 public:
  constexpr accumulator() noexcept = default;
  constexpr explicit accumulator(T start) noexcept
      : sum_{static_cast<wide>(wide{start.raw()} * (wide{1} << bits))} {}
  constexpr accumulator& add_product(T a, T b) noexcept {
    sum_ = detail::saturating_add(sum_, static_cast<wide>(wide{a.raw()} * wide{b.raw()}));
    return *this;
  }
  constexpr accumulator& subtract_product(T a, T b) noexcept {
    // -(a*b) written as a*(-b) in wide arithmetic: exact, since |a*b| <= 2^(2*bits).
    sum_ = detail::saturating_add(sum_, static_cast<wide>(wide{a.raw()} * -wide{b.raw()}));
    return *this;
  }
  constexpr T result() const noexcept { return T::saturated(detail::round_shift(sum_, bits)); }

 private:
  wide sum_{0};
};

/// a*b + c*d with a single rounding (the building block of Park and inverse Park).
template <class T>
constexpr T sum_of_products(T a, T b, T c, T d) noexcept {
  return accumulator<T>{}.add_product(a, b).add_product(c, d).result();
}

/// a*b - c*d with a single rounding.
template <class T>
constexpr T difference_of_products(T a, T b, T c, T d) noexcept {
  return accumulator<T>{}.add_product(a, b).subtract_product(c, d).result();
}

}  // namespace dqfx
