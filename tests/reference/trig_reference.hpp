// SPDX-License-Identifier: MIT
#pragma once
// Independent reference for the trigonometric kernels: textbook long double formulas
// from the C library (sinl, cosl, atan2l, hypotl; ISO/IEC 9899:2011, 7.12), written
// without any dqfx code, and the error measures the tests and the accuracy report share.

#include <cmath>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"

namespace dqfx_reference {

inline const long double pi = std::acos(-1.0L);

/// Exact radians of a binary angle (2^32 units per turn; exact in long double).
inline long double radians_of_raw(std::uint32_t raw) {
  return static_cast<long double>(raw) * (2.0L * pi / 4294967296.0L);
}

inline long double sin_of_raw(std::uint32_t raw) { return std::sin(radians_of_raw(raw)); }
inline long double cos_of_raw(std::uint32_t raw) { return std::cos(radians_of_raw(raw)); }

/// atan2 in turns, in [0, 1).
inline long double angle_turns(long double x, long double y) {
  long double t = std::atan2(y, x) / (2.0L * pi);
  return t < 0 ? t + 1.0L : t;
}

/// Wrapped distance in turns between a binary angle and an exact angle in turns.
inline long double turn_error(std::uint32_t raw, long double turns) {
  long double d = static_cast<long double>(raw) / 4294967296.0L - turns;
  d -= std::floor(d + 0.5L);  // into [-0.5, 0.5)
  return std::fabs(d);
}

inline long double length(long double x, long double y) { return std::hypot(x, y); }

/// The exact value of any dqfx number as long double (q15/q31 raw times 2^-bits).
template <class T>
long double exact(T v) {
  if constexpr (dqfx::number_traits<T>::is_fixed) {
    return std::ldexp(static_cast<long double>(v.raw()), -dqfx::number_traits<T>::fraction_bits);
  } else {
    return static_cast<long double>(v);
  }
}

/// What a correct kernel returns for an exact real result r: r itself for float and
/// double, r saturated to [lowest, max] for q15/q31.
template <class T>
long double saturated(long double r) {
  if constexpr (dqfx::number_traits<T>::is_fixed) {
    const long double hi = exact(dqfx::number_traits<T>::max());
    const long double lo = exact(dqfx::number_traits<T>::lowest());
    return r > hi ? hi : (r < lo ? lo : r);
  } else {
    return r;
  }
}

}  // namespace dqfx_reference
