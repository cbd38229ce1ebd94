// SPDX-License-Identifier: MIT
// q15 and q31: construction, saturating + - negate abs, rounding multiply. Each operation
// is compared with an exact 128-bit integer reference (tests/reference/exact_integer.hpp):
// exhaustively over all q15 values for one-input operations, over dense grids plus all
// corner pairs for q15 two-input operations, and over large random sets for q31.

#include <doctest/doctest.h>

#include <cstdint>
#include <limits>
#include <random>
#include <type_traits>
#include <vector>

#include "dqfx/fixed.hpp"
#include "reference/exact_integer.hpp"
#include "saturation_probe.hpp"

using dqfx::q15;
using dqfx::q31;
using dqfx_ref::int128;

namespace {

template <class T> using raw_t = typename T::raw_type;

// Values where saturation, rounding and sign handling change behaviour.
template <class T>
std::vector<raw_t<T>> corner_raws() {
  using R = raw_t<T>;
  constexpr std::int64_t lo = std::numeric_limits<R>::min();
  constexpr std::int64_t hi = std::numeric_limits<R>::max();
  constexpr std::int64_t half = -(lo / 2);
  const std::int64_t v[] = {lo,       lo + 1,   lo + 2,   -half - 1, -half, -half + 1, -3, -2, -1, 0,
                            1,        2,        3,        half - 1,  half,  half + 1,  hi - 2,
                            hi - 1,   hi};
  std::vector<R> out;
  for (std::int64_t x : v) out.push_back(static_cast<R>(x));
  return out;
}

// The exact results of the operations, clamped: what the library must return.
template <class T> raw_t<T> exact_add(int128 a, int128 b) { return dqfx_ref::clamp_to<raw_t<T>>(a + b); }
template <class T> raw_t<T> exact_sub(int128 a, int128 b) { return dqfx_ref::clamp_to<raw_t<T>>(a - b); }
template <class T> raw_t<T> exact_mul(int128 a, int128 b) {
  return dqfx_ref::clamp_to<raw_t<T>>(
      dqfx_ref::round_div_half_up(a * b, dqfx_ref::pow2(T::fraction_bits)));
}

// Compares the three two-input operations with the reference for one pair; returns the
// number of mismatches (0 to 3).
template <class T>
int mismatches(raw_t<T> a, raw_t<T> b) {
  const T x = T::from_raw(a), y = T::from_raw(b);
  return int{(x + y).raw() != exact_add<T>(a, b)} + int{(x - y).raw() != exact_sub<T>(a, b)} +
         int{(x * y).raw() != exact_mul<T>(a, b)};
}

}  // namespace

TEST_CASE_TEMPLATE("fixed: layout, limits and construction", T, q15, q31) {
  using R = raw_t<T>;
  static_assert(sizeof(T) == sizeof(R));
  static_assert(std::is_trivially_copyable_v<T>);
  static_assert(T::fraction_bits == static_cast<int>(sizeof(R)) * 8 - 1);
  static_assert(T{}.raw() == 0);
  static_assert(T::from_raw(R{123}).raw() == 123);
  static_assert(T::max().raw() == std::numeric_limits<R>::max());
  static_assert(T::lowest().raw() == std::numeric_limits<R>::min());
  static_assert(noexcept(T{} + T{}) && noexcept(T{} * T{}) && noexcept(-T{}) && noexcept(dqfx::abs(T{})));
  static_assert(dqfx::is_fixed_v<T> && !dqfx::is_fixed_v<R> && !dqfx::is_fixed_v<float>);

  // saturated() takes any signed integer at the format's scale.
  CHECK(T::saturated(std::int64_t{1} << 40) == T::max());
  CHECK(T::saturated(-(std::int64_t{1} << 40)) == T::lowest());
  CHECK(T::saturated(std::int64_t{-7}).raw() == -7);
  CHECK(T::saturated(std::int64_t{std::numeric_limits<R>::max()} + 1) == T::max());
  CHECK(T::saturated(std::int64_t{std::numeric_limits<R>::min()} - 1) == T::lowest());

  // Comparisons follow the raw value.
  for (R a : corner_raws<T>()) {
    for (R b : corner_raws<T>()) {
      const T x = T::from_raw(a), y = T::from_raw(b);
      CHECK((x == y) == (a == b));
      CHECK((x != y) == (a != b));
      CHECK((x < y) == (a < b));
      CHECK((x <= y) == (a <= b));
      CHECK((x > y) == (a > b));
      CHECK((x >= y) == (a >= b));
    }
  }
}

TEST_CASE("fixed: constexpr arithmetic") {
  // Saturation and rounding are usable in constant expressions.
  static_assert(q15::max() + q15::max() == q15::max());
  static_assert(q15::lowest() - q15::max() == q15::lowest());
  static_assert(-q15::lowest() == q15::max());
  static_assert(dqfx::abs(q31::lowest()) == q31::max());
  static_assert(q31::lowest() * q31::lowest() == q31::max());
  // 1 * 0.5 LSB is a tie: toward +infinity, so +0.5 LSB -> 1 and -0.5 LSB -> 0.
  static_assert((q15::from_raw(1) * q15::from_raw(16384)).raw() == 1);
  static_assert((q15::from_raw(-1) * q15::from_raw(16384)).raw() == 0);
  static_assert((q15::from_raw(3) * q15::from_raw(16384)).raw() == 2);
  static_assert((q15::from_raw(-3) * q15::from_raw(16384)).raw() == -1);
  static_assert((q31::from_raw(-1) * q31::from_raw(1 << 30)).raw() == 0);
  constexpr q15 sum = [] {
    q15 a = q15::from_raw(30000);
    a += q15::from_raw(30000);  // saturates
    a -= q15::from_raw(1);
    a *= q15::from_raw(16384);  // halves
    return a;
  }();
  static_assert(sum.raw() == 16383);
  CHECK(sum.raw() == 16383);
}

TEST_CASE("q15 negate and abs: exhaustive over all 65536 values") {
  int wrong = 0;
  for (std::int32_t a = -32768; a <= 32767; ++a) {
    const q15 x = q15::from_raw(static_cast<std::int16_t>(a));
    const std::int16_t neg = dqfx_ref::clamp_to<std::int16_t>(-int128{a});
    const std::int16_t mag = dqfx_ref::clamp_to<std::int16_t>(a < 0 ? -int128{a} : int128{a});
    wrong += int{(-x).raw() != neg} + int{dqfx::abs(x).raw() != mag};
  }
  CHECK(wrong == 0);
}

TEST_CASE_TEMPLATE("fixed: the most negative value through negate", T, q15, q31) {
  // -(-1) = +1 is out of range: the answer is max(), not a wrap back to lowest().
  CHECK(-T::lowest() == T::max());
  CHECK(-(-T::lowest()) == T::from_raw(static_cast<raw_t<T>>(-T::max().raw())));
  CHECK(-T::max() == T::from_raw(static_cast<raw_t<T>>(T::lowest().raw() + 1)));
}

TEST_CASE_TEMPLATE("fixed: the most negative value through abs", T, q15, q31) {
  CHECK(dqfx::abs(T::lowest()) == T::max());
  CHECK(dqfx::abs(T::from_raw(static_cast<raw_t<T>>(T::lowest().raw() + 1))) == T::max());
  CHECK(dqfx::abs(T::max()) == T::max());
  CHECK(dqfx::abs(T{}) == T{});
}

TEST_CASE_TEMPLATE("fixed: the most negative value through multiply", T, q15, q31) {
  // (-1)(-1) = +1 saturates to max(); every other product with -1 is exact negation.
  CHECK(T::lowest() * T::lowest() == T::max());
  CHECK(T::lowest() * T::max() == T::from_raw(static_cast<raw_t<T>>(T::lowest().raw() + 1)));
  CHECK(T::max() * T::lowest() == T::lowest() * T::max());
  CHECK(T::lowest() * T{} == T{});
  const auto r = static_cast<raw_t<T>>(12345);
  CHECK(T::lowest() * T::from_raw(r) == T::from_raw(static_cast<raw_t<T>>(-r)));
}

TEST_CASE("q15 + - *: every value against a grid, and all corner pairs") {
  // All 65536 left operands times a grid of right operands (every 251st value plus the
  // corners), then both orders: about 2 x 17 million pairs per operation.
  std::vector<std::int16_t> grid = corner_raws<q15>();
  for (std::int32_t b = -32768; b <= 32767; b += 251) grid.push_back(static_cast<std::int16_t>(b));
  long wrong = 0;
  for (std::int32_t a = -32768; a <= 32767; ++a) {
    for (std::int16_t b : grid) {
      wrong += mismatches<q15>(static_cast<std::int16_t>(a), b);
      wrong += mismatches<q15>(b, static_cast<std::int16_t>(a));
    }
  }
  CHECK(wrong == 0);
}

TEST_CASE("q15 *: rounding ties go toward +infinity") {
  // Products a*b whose exact value ends in exactly half an LSB: a = odd * 2^k and
  // b = odd * 2^(14-k). Every such a in range, against a few such b of both signs.
  long ties = 0, wrong = 0;
  for (int k = 0; k <= 14; ++k) {
    for (std::int32_t a = -32768 + (1 << k); a <= 32767; a += 2 << k) {
      for (std::int32_t odd : {-32767 >> k, -3, -1, 1, 5, 32767 >> k}) {
        const std::int32_t b = (odd | 1) * (1 << (14 - k));
        if (b < -32768 || b > 32767) continue;
        const std::int64_t p = std::int64_t{a} * b;
        if (((p % 32768) + 32768) % 32768 != 16384) continue;  // not a tie (cannot happen)
        ++ties;
        const std::int64_t up = (p + 16384) / 32768;  // exact: p + 2^14 is a multiple of 2^15
        const q15 r = q15::from_raw(static_cast<std::int16_t>(a)) * q15::from_raw(static_cast<std::int16_t>(b));
        wrong += int{r.raw() != dqfx_ref::clamp_to<std::int16_t>(up)};
      }
    }
  }
  CHECK(ties > 100000);
  CHECK(wrong == 0);
}

TEST_CASE("q31 + - * negate abs: corner pairs and four million random pairs") {
  long wrong = 0;
  for (std::int32_t a : corner_raws<q31>()) {
    for (std::int32_t b : corner_raws<q31>()) wrong += mismatches<q31>(a, b);
  }
  std::mt19937_64 rng(0x5eed0031);
  std::uniform_int_distribution<std::int32_t> any(std::numeric_limits<std::int32_t>::min(),
                                                  std::numeric_limits<std::int32_t>::max());
  // Half the left operands near the ends of the range, where sums and products saturate.
  std::uniform_int_distribution<std::int32_t> near_end(0, 1 << 20);
  for (int i = 0; i < 4'000'000; ++i) {
    std::int32_t a = any(rng);
    const std::int32_t b = any(rng);
    if (i % 4 == 1) a = std::numeric_limits<std::int32_t>::max() - near_end(rng);
    if (i % 4 == 3) a = std::numeric_limits<std::int32_t>::min() + near_end(rng);
    wrong += mismatches<q31>(a, b);
    const q31 x = q31::from_raw(a);
    wrong += int{(-x).raw() != dqfx_ref::clamp_to<std::int32_t>(-int128{a})};
    wrong += int{dqfx::abs(x).raw() != dqfx_ref::clamp_to<std::int32_t>(a < 0 ? -int128{a} : int128{a})};
  }
  CHECK(wrong == 0);
}

TEST_CASE("saturation checking is off, and absent, in normal builds") {
  static_assert(!dqfx::saturation_checking);
  // The counter does not exist at all when checking is off (nothing to pay for): a
  // fallback found by the same unqualified lookup is chosen only if dqfx has none.
  static_assert(std::is_same_v<saturation_probe::events_type, saturation_probe::absent>);
}

TEST_CASE("saturate_signed and saturate_unsigned: the exact clamp, at every width used, in and out of range") {
  // On cores with __ARM_FEATURE_SAT these are SSAT/USAT; the host runs the portable
  // definition, and the Cortex-M golden vectors (bench/target) prove that both give the
  // same q15 results. The reference is the clamp itself in 128-bit integers.
  std::vector<std::int32_t> values = {std::numeric_limits<std::int32_t>::min(), std::numeric_limits<std::int32_t>::max()};
  for (int k = 0; k < 31; ++k) {
    const std::int32_t p = std::int32_t{1} << k;
    for (std::int32_t v : {p - 1, p, p + 1, -p - 1, -p, -p + 1}) values.push_back(v);
  }
  std::mt19937 random{12};
  for (int i = 0; i < 200000; ++i) values.push_back(static_cast<std::int32_t>(random()));
  int wrong = 0;
  for (std::int32_t v : values) {
    const int128 x = v;
    wrong += int{dqfx::detail::saturate_signed<16>(v) != dqfx_ref::clamp_to<std::int16_t>(x)};
    wrong += int{dqfx::detail::saturate_signed<32>(v) != v};
    wrong += int{dqfx::detail::saturate_signed<30>(v) != (x > (1 << 29) - 1 ? (1 << 29) - 1 : (x < -(1 << 29) ? -(1 << 29) : v))};
    wrong += int{dqfx::detail::saturate_unsigned<15>(v) != (v > 32767 ? 32767 : (v < 0 ? 0 : v))};
    wrong += int{dqfx::detail::saturate_unsigned<16>(v) != (v > 65535 ? 65535 : (v < 0 ? 0 : v))};
  }
  CHECK(wrong == 0);
  static_assert(dqfx::detail::saturate_signed<16>(40000) == 32767 && dqfx::detail::saturate_signed<16>(-40000) == -32768);
  static_assert(dqfx::detail::saturate_unsigned<15>(-1) == 0 && dqfx::detail::saturate_unsigned<15>(32768) == 32767);
}
