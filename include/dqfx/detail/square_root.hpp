// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Integer square roots for the fixed-point kernels (magnitude, voltage limits): exact
/// floor and round-to-nearest results, identical on every core, no libm, no FPU.

#include <array>
#include <cstdint>

#include "dqfx/fixed.hpp"  // leading_zeros

namespace dqfx::detail {

/// floor(sqrt(n)) digit by digit: a fixed number of iterations, no division, no table.
/// The portable fallback, and the fastest choice on cores without a divider (ARMv6-M).
template <class U>
constexpr U bitwise_floor_sqrt(U n) noexcept {
  U root = 0;
  for (U bit = U{1} << (sizeof(U) * 8 - 2); bit != 0; bit >>= 2) {
    if (n >= root + bit) {
      n -= root + bit;
      root = (root >> 1) + bit;
    } else {
      root >>= 1;
    }
  }
  return root;
}

/// Seeds for Newton's method: sqrt((i + 64.5) * 2^24) for the top byte i + 64 of a
/// normalised 32-bit value; within 2^-8 relative of the root over each interval.
constexpr std::array<std::uint16_t, 192> make_sqrt_seeds() noexcept {
  std::array<std::uint16_t, 192> t{};
  for (std::uint32_t i = 0; i < t.size(); ++i) {
    const std::uint64_t v = ((std::uint64_t{i} + 64) << 24) + (std::uint64_t{1} << 23);
    t[i] = static_cast<std::uint16_t>(bitwise_floor_sqrt(v));
  }
  return t;
}
inline constexpr std::array<std::uint16_t, 192> sqrt_seeds = make_sqrt_seeds();

/// floor(sqrt(n)) for 32-bit n: a table seed good to 2^-8, one integer Newton step (one
/// divide) and one correction. Integer Newton from any positive start never lands below
/// the floor, and from this seed it lands at most one above.
constexpr std::uint32_t floor_sqrt(std::uint32_t n) noexcept {
#if defined(__ARM_ARCH_6M__)
  return bitwise_floor_sqrt(n);  // no divide instruction: digits are cheaper
#else
  if (n == 0) return 0;
  const int shift = leading_zeros(n) & ~1;  // even, so the root shifts by half of it
  const std::uint32_t normalised = n << shift;  // in [2^30, 2^32)
  const std::uint32_t seed =
      (std::uint32_t{sqrt_seeds[(normalised >> 24) - 64]} >> (shift / 2)) | 1u;  // never 0
  const std::uint32_t root = (seed + n / seed) >> 1;
  return std::uint64_t{root} * root > n ? root - 1 : root;
#endif
}

/// floor(sqrt(n)) for 64-bit n. Above 2^32: n normalised to m = n * 4^k in [2^62, 2^64),
/// the root of its top 32 bits (16 bits, above) and one Newton step for the low 16 bits in
/// one 32-bit division; that lands within [-1, +2] of the floor, which two squares down
/// and one up settle. ARMv6-M (no divide, no 32x32->64 multiply): digit by digit.
constexpr std::uint64_t floor_sqrt(std::uint64_t n) noexcept {
  if (n <= 0xFFFFFFFFu) return floor_sqrt(static_cast<std::uint32_t>(n));
#if defined(__ARM_ARCH_6M__)
  return bitwise_floor_sqrt(n);
#else
  const int shift = __builtin_clzll(n) & ~1;
  const std::uint64_t m = n << shift;
  const auto top = static_cast<std::uint32_t>(m >> 32);  // in [2^30, 2^32)
  const std::uint32_t high = floor_sqrt(top);             // in [2^15, 2^16)
  const std::uint32_t rest = top - high * high;           // <= 2 high, so rest << 15 < 2^32
  // sqrt(m) = high*2^16 + d with d = (rest*2^32 + low - d^2) / (high*2^17): the step
  // rest*2^15 / high misses d by less than one either way before rounding down.
  std::uint64_t root = (std::uint64_t{high} << 16) + (rest << 15) / high;
  if (root > 0xFFFFFFFFu) root = 0xFFFFFFFFu;  // floor(sqrt(m)) < 2^32
  if (root * root > m) --root;
  if (root * root > m) --root;
  if (root < 0xFFFFFFFFu && (root + 1) * (root + 1) <= m) ++root;
  return root >> (shift / 2);
#endif
}

/// sqrt(n) rounded to nearest (ties cannot occur for integers).
template <class U>
constexpr U rounded_sqrt(U n) noexcept {
  const U root = floor_sqrt(n);
  // Round up when n >= (root + 1/2)^2, i.e. n - root^2 > root.
  return n - root * root > root ? root + 1 : root;
}

}  // namespace dqfx::detail
