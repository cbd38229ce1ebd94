// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Polar form of a stationary vector: its angle (atan2) as a binary angle, and its length.
///
/// angle_of, against the exact atan2 of the exact inputs, for vectors of length >= 0.05:
///   q15 within 2^-18 turn, q31 within 2^-28 turn, float within 2^-24 turn, double within
///   2^-31 turn (the binary angle's own resolution is 2^-32 turn).
///   The origin gives angle 0. Saturated inputs are exact values like any other (the
///   most negative raw value is -1.0 exactly). A float/double NaN or infinite component
///   gives angle 0.
/// magnitude, against the exact length:
///   q15 and q31 correctly rounded (within 0.5 LSB), saturating to max() when the length
///   is 1 or more (e.g. (-1, -1) gives max()); float and double within 2 ulp. A NaN
///   component gives NaN and an infinite one +infinity; finite float inputs whose
///   squares overflow or underflow are handled by std::hypot rather than returning
///   infinity or zero.

#include <cmath>
#include <cstdint>
#include <type_traits>

#include "dqfx/angle.hpp"
#include "dqfx/detail/square_root.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"

namespace dqfx {
namespace detail {

/// Exact |raw| of a fixed-point value, in a type wide enough for sums of two of them.
template <class T> struct fixed_polar {
  using raw = typename T::raw_type;
  using uwide = std::conditional_t<sizeof(raw) == 2, std::uint32_t, std::uint64_t>;
  static constexpr uwide magnitude_of(T v) noexcept {
    const std::int64_t r = v.raw();
    return static_cast<uwide>(r < 0 ? -r : r);
  }
};

/// atan(t) in binary-angle units for t in [0, 3/7], t given at 2^-31 (so <= 2^31 * 3/7).
/// Odd minimax polynomial t * A(t^2); coefficients (units per radian folded in) from
/// cmake/scripts/fit_trig.py. N coefficients: 4 give 98 units, 6 give 0.12 units of
/// polynomial error.
template <std::size_t N> struct fixed_atan;
template <> struct fixed_atan<4> {
  static constexpr std::int64_t A[] = {683563177, -227697701, 133489373, -72329780};
};
template <> struct fixed_atan<6> {
  static constexpr std::int64_t A[] = {683565272, -227854513, 136687137,
                                       -97150394, 71132710,  -38754526};
};
template <std::size_t N>
constexpr std::uint32_t atan_units(std::int64_t t) noexcept {
  constexpr auto& a = fixed_atan<N>::A;
  const std::int64_t z = round_shift(t * t, 31);
  std::int64_t acc = a[N - 1];
  for (std::size_t k = N - 1; k-- > 0;) acc = a[k] + round_shift(acc * z, 31);
  return static_cast<std::uint32_t>(round_shift(t * acc, 31));
}

/// Per-type pieces of angle_of and magnitude: `mag` is the exact |component| in a type
/// where the kernel's sums cannot overflow, `atan_ratio(num, den)` is atan(num/den) in
/// binary-angle units for 0 <= num <= den * 3/7, den > 0.
template <class T, class = void> struct polar_recipe;

template <> struct polar_recipe<q15> : fixed_polar<q15> {
  static constexpr std::uint32_t atan_ratio(std::uint32_t num, std::uint32_t den) noexcept {
    // num < 2^15 here, so num * 2^17 fits; one hardware divide on Cortex-M3 and up.
    const std::uint32_t t17 = ((num << 17) + den / 2) / den;
    return atan_units<4>(std::int64_t{t17} * (1 << 14));
  }
};

template <> struct polar_recipe<q31> : fixed_polar<q31> {
  static constexpr std::uint32_t atan_ratio(std::uint64_t num, std::uint64_t den) noexcept {
    const std::uint64_t t31 = ((num << 31) + den / 2) / den;
    return atan_units<6>(static_cast<std::int64_t>(t31));
  }
};

template <class F>
struct polar_recipe<F, std::enable_if_t<std::is_floating_point_v<F>>> {
  static constexpr F magnitude_of(F v) noexcept { return v < F{0} ? -v : v; }
  static constexpr std::uint32_t atan_ratio(F num, F den) noexcept {
    const F t = num / den;
    const F z = t * t;
    F units;
    if constexpr (std::is_same_v<F, float>) {
      units = t * (683563177.453f + z * (-227697700.78f + z * (133489372.6f + z * -72329779.7243f)));
    } else {
      constexpr double a[] = {683565275.56986347773, -227855090.11009885714,
                              136712919.09472630244, -97647413.98032965106,
                              75862425.455496024643, -61181462.719707801678,
                              46528639.163877903618, -23927219.289574624638};
      double acc = a[7];
      for (int k = 6; k >= 0; --k) acc = a[k] + acc * z;
      units = t * acc;
    }
    // 0 <= units <= 2^28 (pi/8): the conversion is always in range.
    return static_cast<std::uint32_t>(units + F{0.5});
  }
};

}  // namespace detail

/// The angle of `v` (atan2(beta, alpha)) as a binary angle; exact quadrant wrap.
template <class T>
constexpr angle angle_of(stationary<T> v) noexcept {
  static_assert(is_number_v<T>, "dqfx::angle_of supports q15, q31, float and double");
  using recipe = detail::polar_recipe<T>;
  auto x = recipe::magnitude_of(v.alpha);
  auto y = recipe::magnitude_of(v.beta);
  if constexpr (std::is_floating_point_v<T>) {
    constexpr T big = std::numeric_limits<T>::max();
    if (!(x <= big && y <= big)) return angle{};  // NaN or infinity
  }
  if (x == decltype(x){0} && y == decltype(y){0}) return angle{};
  const bool steep = y > x;
  if (steep) {
    const auto t = x;
    x = y;
    y = t;
  }
  // Now 0 <= y <= x. Above tan = 0.4, turn by 45 degrees: atan(y/x) = pi/4 - atan((x-y)/(x+y)),
  // so the polynomial only ever sees ratios in [0, 3/7].
  bool upper = false;
  if constexpr (std::is_floating_point_v<T>) {
    if (x > T(1e30)) {  // keep x + y finite for huge (but finite) inputs
      x *= T(1e-30);
      y *= T(1e-30);
    }
    upper = y > x * T(0.4);
  } else {
    upper = 5 * y > 2 * x;  // exact in the wide unsigned type
  }
  const std::uint32_t part = upper ? recipe::atan_ratio(x - y, x + y) : recipe::atan_ratio(y, x);
  std::uint32_t turn = upper ? (1u << 29) - part : part;
  if (steep) turn = (1u << 30) - turn;
  if (v.alpha < T{}) turn = (1u << 31) - turn;
  if (v.beta < T{}) turn = 0u - turn;
  return angle::from_raw(turn);
}

/// The length of `v`, saturated to T's range.
template <class T>
constexpr T magnitude(stationary<T> v) noexcept {
  static_assert(is_number_v<T>, "dqfx::magnitude supports q15, q31, float and double");
  if constexpr (std::is_floating_point_v<T>) {
    const T squares = v.alpha * v.alpha + v.beta * v.beta;
    // Finite inputs whose squares overflow, or underflow below the normal range (where
    // they lose bits, down to zero), take the careful (slower) route.
    constexpr T smallest = std::numeric_limits<T>::min() / std::numeric_limits<T>::epsilon();
    const bool overflow = squares > std::numeric_limits<T>::max();
    const bool underflow = squares < smallest && (v.alpha != T{0} || v.beta != T{0});
    if ((overflow || underflow) && std::isfinite(v.alpha) && std::isfinite(v.beta)) {
      return std::hypot(v.alpha, v.beta);
    }
    return std::sqrt(squares);
  } else {
    using recipe = detail::polar_recipe<T>;
    const auto x = recipe::magnitude_of(v.alpha);
    const auto y = recipe::magnitude_of(v.beta);
    // x^2 + y^2 <= 2^(2*bits+1) fits the unsigned wide type exactly.
    const auto root = detail::rounded_sqrt(x * x + y * y);
    return T::saturated(static_cast<std::int64_t>(root));
  }
}

}  // namespace dqfx
