// SPDX-License-Identifier: MIT
#pragma once
// Exact integer reference for the number-layer tests: fixed-point results are computed
// here with 128-bit integers and plain division, independently of the library's
// shift-based rounding, so a test compares the library against the exact answer.

#include <cstdint>
#include <limits>

namespace dqfx_ref {

__extension__ typedef __int128 int128;

/// floor(n / d) for d > 0 (C++ division truncates toward zero; correct it for n < 0).
constexpr int128 floor_div(int128 n, int128 d) {
  const int128 q = n / d;
  return (n % d != 0 && n < 0) ? q - 1 : q;
}

/// n / d rounded to nearest, ties toward +infinity: floor(n/d + 1/2) = floor((2n + d) / 2d).
constexpr int128 round_div_half_up(int128 n, int128 d) { return floor_div(2 * n + d, 2 * d); }

/// 2^k as a 128-bit integer.
constexpr int128 pow2(int k) { return int128{1} << k; }

/// The raw value range of a fixed-point type's storage.
template <class Raw> constexpr int128 raw_min() { return std::numeric_limits<Raw>::min(); }
template <class Raw> constexpr int128 raw_max() { return std::numeric_limits<Raw>::max(); }

/// Clamp an exact result into Raw's range (the saturation the library promises).
template <class Raw>
constexpr Raw clamp_to(int128 v) {
  if (v > raw_max<Raw>()) return std::numeric_limits<Raw>::max();
  if (v < raw_min<Raw>()) return std::numeric_limits<Raw>::min();
  return static_cast<Raw>(v);
}

/// True when an exact value lies outside Raw's range.
template <class Raw>
constexpr bool out_of_range(int128 v) {
  return v > raw_max<Raw>() || v < raw_min<Raw>();
}

}  // namespace dqfx_ref
