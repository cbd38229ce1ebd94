// SPDX-License-Identifier: MIT
// The integer square roots behind magnitude and the voltage limit, proven without any
// floating-point square root: r = floor(sqrt(n)) iff r^2 <= n < (r+1)^2, checked in exact
// 128-bit arithmetic. (The 32-bit version was also run over all 2^32 inputs once, too
// slow for every CI run: 11 s of CPU.)

#include <doctest/doctest.h>

#include <cstdint>
#include <random>

#include "dqfx/detail/square_root.hpp"

namespace {

__extension__ typedef unsigned __int128 u128;  // host-only test arithmetic

template <class U>
bool is_floor_root(U n, U r) {
  return u128{r} * r <= n && (u128{r} + 1) * (u128{r} + 1) > n;
}

template <class U>
bool is_rounded_root(U n, U r) {
  // |r - sqrt(n)| <= 1/2  <=>  (2r - 1)^2 <= 4n <= (2r + 1)^2 (with r = 0 allowed).
  const u128 four_n = u128{n} * 4;
  const u128 lo = r == 0 ? 0 : (u128{r} * 2 - 1) * (u128{r} * 2 - 1);
  const u128 hi = (u128{r} * 2 + 1) * (u128{r} * 2 + 1);
  return lo <= four_n && four_n <= hi;
}

}  // namespace

TEST_CASE("floor_sqrt and rounded_sqrt: 32-bit inputs") {
  using dqfx::detail::floor_sqrt;
  using dqfx::detail::rounded_sqrt;
  // Every input below 2^22, every perfect square and its neighbours, and random inputs.
  for (std::uint32_t n = 0; n < (1u << 22); ++n) {
    REQUIRE(is_floor_root(n, floor_sqrt(n)));
    REQUIRE(is_rounded_root(n, rounded_sqrt(n)));
  }
  for (std::uint64_t r = 0; r < 65536; ++r) {
    for (std::int64_t d = -1; d <= 1; ++d) {
      const std::int64_t v = static_cast<std::int64_t>(r * r) + d;
      if (v < 0 || v > 0xFFFFFFFF) continue;
      const auto n = static_cast<std::uint32_t>(v);
      REQUIRE(is_floor_root(n, floor_sqrt(n)));
      REQUIRE(is_rounded_root(n, rounded_sqrt(n)));
    }
  }
  std::mt19937 rng(17);
  for (int i = 0; i < 2'000'000; ++i) {
    const auto n = static_cast<std::uint32_t>(rng());
    REQUIRE(is_floor_root(n, floor_sqrt(n)));
  }
  CHECK(floor_sqrt(0xFFFFFFFFu) == 65535u);
  CHECK(rounded_sqrt(0xFFFFFFFFu) == 65536u);
}

TEST_CASE("floor_sqrt and rounded_sqrt: 64-bit inputs") {
  using dqfx::detail::floor_sqrt;
  using dqfx::detail::rounded_sqrt;
  std::mt19937_64 rng(19);
  for (int i = 0; i < 200'000; ++i) {
    const std::uint64_t n = rng() >> (rng() & 63);
    REQUIRE(is_floor_root(n, floor_sqrt(n)));
    REQUIRE(is_rounded_root(n, rounded_sqrt(n)));
  }
  // Perfect squares and their neighbours, where a Newton step that lands one off shows:
  // random roots of every size, the roots around each power of two, and the largest.
  std::uint64_t misses = 0;
  const auto check_around = [&](std::uint64_t r) {
    const std::uint64_t square = r * r;  // r < 2^32; for r = 0, square - 1 wraps to 2^64 - 1, also an input
    for (const std::uint64_t n : {square - 1, square, square + 1, square + 2 * r}) {
      if (!is_floor_root(n, floor_sqrt(n)) || !is_rounded_root(n, rounded_sqrt(n))) ++misses;
    }
  };
  for (int i = 0; i < 1'000'000; ++i) check_around((rng() >> 32) >> (rng() & 31));
  for (int k = 1; k < 32; ++k) {
    for (std::uint64_t d = 0; d < 64; ++d) {
      check_around((std::uint64_t{1} << k) - d - 1);
      check_around((std::uint64_t{1} << k) + d);
    }
  }
  check_around(0xFFFFFFFFu);
  CHECK(misses == 0);
  const std::uint64_t top = ~std::uint64_t{0};
  CHECK(floor_sqrt(top) == 4294967295u);
  CHECK(floor_sqrt(std::uint64_t{1} << 62) == (std::uint64_t{1} << 31));
  static_assert(dqfx::detail::floor_sqrt(std::uint32_t{1u << 30}) == (1u << 15));
  static_assert(dqfx::detail::rounded_sqrt(std::uint64_t{2}) == 1u);
}
