// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Signed fixed-point fractions q15 and q31: range [-1, 1), saturating arithmetic,
/// round-to-nearest products formed in a wide accumulator. Every operation is defined
/// for every raw input, the most negative one included.

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/saturation.hpp"

namespace dqfx {

namespace detail {

// Arithmetic (sign-propagating) right shift of a negative value is implementation-
// defined before C++20. Every compiler dqfx supports does it arithmetically; pin it
// here so a compiler that does not cannot build dqfx at all.
static_assert((-5 >> 1) == -3 && (std::int64_t{-5} >> 1) == -3,
              "dqfx needs arithmetic right shift of negative integers");

/// v clamped into [-2^(Bits-1), 2^(Bits-1) - 1]: one SSAT on cores with the saturation
/// instructions (Armv7-M and up; GCC emits it for a lone clamp but not inside a large
/// kernel), the same value from two comparisons everywhere else.
template <int Bits>
constexpr std::int32_t saturate_signed(std::int32_t v) noexcept {
  static_assert(Bits >= 1 && Bits <= 32, "SSAT takes 1 to 32 bits");
#if defined(__ARM_FEATURE_SAT)
  // The builtin behind ACLE's __ssat (arm_acle.h wraps it in a statement expression,
  // which -Wpedantic refuses); GCC declares its result unsigned, the bits are signed.
  if (!__builtin_is_constant_evaluated()) return static_cast<std::int32_t>(__builtin_arm_ssat(v, Bits));
#endif
  constexpr auto hi = static_cast<std::int32_t>((std::int64_t{1} << (Bits - 1)) - 1);
  return v > hi ? hi : (v < -hi - 1 ? -hi - 1 : v);
}

/// v clamped into [0, 2^Bits - 1] (Bits <= 31): one USAT where the core has it, two
/// comparisons elsewhere.
template <int Bits>
constexpr std::int32_t saturate_unsigned(std::int32_t v) noexcept {
  static_assert(Bits >= 0 && Bits <= 31, "USAT into a non-negative int32_t takes 0 to 31 bits");
#if defined(__ARM_FEATURE_SAT)
  if (!__builtin_is_constant_evaluated()) return static_cast<std::int32_t>(__builtin_arm_usat(v, Bits));
#endif
  return v < 0 ? 0 : (v >> Bits != 0 ? static_cast<std::int32_t>((std::int64_t{1} << Bits) - 1) : v);
}

template <class Raw> struct wide_of;
template <> struct wide_of<std::int16_t> { using type = std::int32_t; };
template <> struct wide_of<std::int32_t> { using type = std::int64_t; };

/// Clamp a wide value into Raw's range, reporting a saturation event if it clamps.
template <class Raw, class Wide>
constexpr Raw saturate_to(Wide v) noexcept {
  // Nothing to report: q15 from 32 bits is one SSAT where the core has it.
  if constexpr (!saturation_checking && std::is_same_v<Raw, std::int16_t> && std::is_same_v<Wide, std::int32_t>) {
    return static_cast<Raw>(saturate_signed<16>(v));
  }
  constexpr Wide hi = std::numeric_limits<Raw>::max();
  constexpr Wide lo = std::numeric_limits<Raw>::min();
  if (v > hi) { note_saturation(); return static_cast<Raw>(hi); }
  if (v < lo) { note_saturation(); return static_cast<Raw>(lo); }
  return static_cast<Raw>(v);
}

/// floor((v + 2^(shift-1)) / 2^shift) without the overflow of adding first.
template <class Wide>
constexpr Wide round_shift(Wide v, int shift) noexcept {
  return ((v >> (shift - 1)) + 1) >> 1;
}

/// round(a * b / 2^shift), to nearest with ties toward +infinity, for 32-bit operands.
/// |a * b| <= 2^62, so adding the half first cannot overflow and the whole costs one
/// 32x32->64 multiply, one 64-bit add and one shift (cheaper than round_shift on 32-bit
/// cores).
constexpr std::int64_t product_round_shift(std::int32_t a, std::int32_t b, int shift) noexcept {
  return (std::int64_t{a} * std::int64_t{b} + (std::int64_t{1} << (shift - 1))) >> shift;
}

/// floor((d * m + 2^(shift-1)) / 2^shift), the product of a 17-bit d (|d| < 2^16) and a
/// 32-bit m rounded at 18 <= shift <= 31, exactly and without a 64-bit shift by a
/// variable amount: the high word of (d * 2^15) * m is floor(d*m / 2^17).
constexpr std::int32_t rounded_product16_wide(std::int32_t d, std::int32_t m, int shift) noexcept {
  const auto top = static_cast<std::int32_t>((static_cast<std::int64_t>(d * 32768) * m) >> 32);
  // The same value two ways: a known shift folds the rounding constant (two
  // instructions); a run-time one (a regulator's gain) is cheaper without building it.
  if (__builtin_constant_p(shift) != 0) return (top + (1 << (shift - 18))) >> (shift - 17);
  return round_shift(top, shift - 17);
}

/// The same value from three 16x16 products, for cores without a 32x32->64 multiply.
/// m = high*2^16 + mid*2^8 + low (high signed, mid and low in [0, 256)): every partial
/// product fits in 32 bits, and d*m = v*2^16 + r with 0 <= r < 2^16.
constexpr std::int32_t rounded_product16_narrow(std::int32_t d, std::int32_t m, int shift) noexcept {
  const std::int32_t high = m >> 16, mid = (m >> 8) & 0xFF, low = m & 0xFF;
  const std::int32_t u = d * mid + ((d * low) >> 8);
  const std::int32_t v = d * high + (u >> 8);
  if (__builtin_constant_p(shift) != 0) return (v + (1 << (shift - 17))) >> (shift - 16);
  return round_shift(v, shift - 16);
}

/// The rounded 16x32 product: ARMv6-M has no 32x32->64 multiply (a library call there).
constexpr std::int32_t rounded_product16(std::int32_t d, std::int32_t m, int shift) noexcept {
#if defined(__ARM_ARCH_6M__)
  return rounded_product16_narrow(d, m, shift);
#else
  return rounded_product16_wide(d, m, shift);
#endif
}

/// floor(a * b / 2^32): the high word of one 32x32->64 product.
constexpr std::uint32_t multiply_high_wide(std::uint32_t a, std::uint32_t b) noexcept {
  return static_cast<std::uint32_t>((static_cast<std::uint64_t>(a) * b) >> 32);
}

/// The same value from four 16x16 products, for cores without a 32x32->64 multiply.
constexpr std::uint32_t multiply_high_narrow(std::uint32_t a, std::uint32_t b) noexcept {
  const std::uint32_t al = a & 0xFFFFu, ah = a >> 16, bl = b & 0xFFFFu, bh = b >> 16;
  const std::uint32_t high_low = ah * bl;
  // At most 2^32 - 1: (2^16 - 1)^2 + 2 (2^16 - 1).
  const std::uint32_t cross = ((al * bl) >> 16) + (high_low & 0xFFFFu) + al * bh;
  return ah * bh + (high_low >> 16) + (cross >> 16);
}

/// ARMv6-M has no 32x32->64 multiply (a library call there).
constexpr std::uint32_t multiply_high(std::uint32_t a, std::uint32_t b) noexcept {
#if defined(__ARM_ARCH_6M__)
  return multiply_high_narrow(a, b);
#else
  return multiply_high_wide(a, b);
#endif
}

/// Leading zero bits of n (32 for n = 0).
constexpr int leading_zeros(std::uint32_t n) noexcept { return n == 0 ? 32 : __builtin_clz(n); }

#if defined(__ARM_FEATURE_DSP) && defined(__GNUC__)
inline std::int32_t smmulr(std::int32_t a, std::int32_t b) noexcept {
  std::int32_t r = 0;
  __asm__("smmulr %0, %1, %2" : "=r"(r) : "r"(a), "r"(b));
  return r;
}
#endif

/// round(a * b / 2^32) with ties toward +infinity: the rounded high word of a 32x32->64
/// product, which never overflows 32 bits. One SMMULR on cores with the DSP extension
/// (Cortex-M4/M7; GCC does not select it by itself), the same value everywhere else.
constexpr std::int32_t mul_high_round(std::int32_t a, std::int32_t b) noexcept {
#if defined(__ARM_FEATURE_DSP) && defined(__GNUC__)
  if (!__builtin_is_constant_evaluated()) return smmulr(a, b);
#endif
  return static_cast<std::int32_t>((std::int64_t{a} * b + (std::int64_t{1} << 31)) >> 32);
}

/// Saturating addition of two wide values (for accumulators).
template <class Wide>
constexpr Wide saturating_add(Wide a, Wide b) noexcept {
  Wide r{};
  if (__builtin_add_overflow(a, b, &r)) {
    note_saturation();
    return a < 0 ? std::numeric_limits<Wide>::min() : std::numeric_limits<Wide>::max();
  }
  return r;
}

}  // namespace detail

/// A signed fraction with sizeof(Raw)*8-1 fraction bits: value = raw / 2^fraction_bits.
template <class Raw>
class fixed {
  static_assert(std::is_same_v<Raw, std::int16_t> || std::is_same_v<Raw, std::int32_t>,
                "dqfx::fixed supports 16-bit (q15) and 32-bit (q31) storage");

 public:
  using raw_type = Raw;
  /// Accumulator type: twice the width, holds a product exactly (q15: 32-bit, q31: 64-bit).
  using wide_type = typename detail::wide_of<Raw>::type;
  static constexpr int fraction_bits = std::numeric_limits<Raw>::digits;

  constexpr fixed() noexcept = default;

  static constexpr fixed from_raw(Raw r) noexcept { return fixed{r, tag{}}; }
  /// Saturates a wider integer holding a value at this format's scale.
  template <class Int>
  static constexpr fixed saturated(Int w) noexcept {
    static_assert(std::is_integral_v<Int> && std::is_signed_v<Int>, "a signed integer");
    return from_raw(detail::saturate_to<Raw>(w));
  }
  constexpr Raw raw() const noexcept { return raw_; }

  static constexpr fixed max() noexcept { return from_raw(std::numeric_limits<Raw>::max()); }
  static constexpr fixed lowest() noexcept { return from_raw(std::numeric_limits<Raw>::min()); }

  friend constexpr fixed operator+(fixed a, fixed b) noexcept {
    return saturated(wide_type{a.raw_} + wide_type{b.raw_});
  }
  friend constexpr fixed operator-(fixed a, fixed b) noexcept {
    return saturated(wide_type{a.raw_} - wide_type{b.raw_});
  }
  friend constexpr fixed operator-(fixed a) noexcept { return saturated(-wide_type{a.raw_}); }
  /// Product rounded to nearest (ties toward +infinity); (-1)*(-1) saturates to max().
  friend constexpr fixed operator*(fixed a, fixed b) noexcept {
    // |a * b| <= 2^(2*fraction_bits): adding the half first cannot overflow the wide type.
    constexpr wide_type half = wide_type{1} << (fraction_bits - 1);
    return saturated((wide_type{a.raw_} * wide_type{b.raw_} + half) >> fraction_bits);
  }
  constexpr fixed& operator+=(fixed b) noexcept { return *this = *this + b; }
  constexpr fixed& operator-=(fixed b) noexcept { return *this = *this - b; }
  constexpr fixed& operator*=(fixed b) noexcept { return *this = *this * b; }

  friend constexpr bool operator==(fixed a, fixed b) noexcept { return a.raw_ == b.raw_; }
  friend constexpr bool operator!=(fixed a, fixed b) noexcept { return a.raw_ != b.raw_; }
  friend constexpr bool operator<(fixed a, fixed b) noexcept { return a.raw_ < b.raw_; }
  friend constexpr bool operator<=(fixed a, fixed b) noexcept { return a.raw_ <= b.raw_; }
  friend constexpr bool operator>(fixed a, fixed b) noexcept { return a.raw_ > b.raw_; }
  friend constexpr bool operator>=(fixed a, fixed b) noexcept { return a.raw_ >= b.raw_; }

 private:
  struct tag {};
  constexpr fixed(Raw r, tag) noexcept : raw_{r} {}
  Raw raw_{0};
};

/// 1 sign bit + 15 fraction bits.
using q15 = fixed<std::int16_t>;
/// 1 sign bit + 31 fraction bits.
using q31 = fixed<std::int32_t>;

template <class T> struct is_fixed : std::false_type {};
template <class Raw> struct is_fixed<fixed<Raw>> : std::true_type {};
template <class T> inline constexpr bool is_fixed_v = is_fixed<T>::value;

/// |a|, saturating: abs(lowest()) is max().
template <class Raw>
constexpr fixed<Raw> abs(fixed<Raw> a) noexcept {
  return a.raw() < 0 ? -a : a;
}

}  // namespace dqfx
