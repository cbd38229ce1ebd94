// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Sine and cosine of a binary angle, together, for q15, q31, float and double.
///
/// Error against the exact sine and cosine of the exact angle (proven in
/// tests/test_sincos.cpp, figures printed by the accuracy report):
///   q15   within 1 LSB (0.86 LSB except where |exact| > max(), which saturates)
///   q31   within 2 LSB
///   float within 1.2e-7 absolute
///   double within 1e-12 absolute
/// q15 and q31 results stay within [-max(), max()], so negating them is always exact.
/// Fixed-point paths use integer arithmetic only (no libm, no FPU, no division).

#include <array>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"

namespace dqfx {
namespace detail {

/// sin(x), |x| <= pi/2, by its Taylor series: only used to build tables at compile time.
constexpr double taylor_sin(double x) noexcept {
  double term = x, sum = x;
  for (int k = 1; k < 16; ++k) {
    term *= -x * x / static_cast<double>((2 * k) * (2 * k + 1));
    sum += term;
  }
  return sum;
}

/// Quarter-wave sine, 256 intervals, unsigned 2^-16 units (one bit finer than q15, which
/// keeps the stored rounding to 0.25 q15 LSB). Entry 256 is sin(pi/2) = 65536 clamped to
/// 65535; entry 257 pads the table so the cosine of angle 0 may read one past.
constexpr std::array<std::uint16_t, 258> make_quarter_sine_table() noexcept {
  std::array<std::uint16_t, 258> t{};
  for (std::size_t i = 0; i < t.size(); ++i) {
    const double v = taylor_sin(static_cast<double>(i) * (3.14159265358979323846 / 512.0));
    const double scaled = v * 65536.0 + 0.5;
    t[i] = scaled >= 65535.0 ? std::uint16_t{65535} : static_cast<std::uint16_t>(scaled);
  }
  return t;
}
inline constexpr std::array<std::uint16_t, 258> quarter_sine_table = make_quarter_sine_table();

/// Sine and cosine of the angle within the first quadrant, `pos` in [0, 2^30).
template <class T> struct quadrant_sincos;

template <> struct quadrant_sincos<q15> {
  /// Linear interpolation of the table at a 30-bit quadrant position (0..2^30 inclusive).
  static constexpr std::int16_t sine(std::uint32_t pos) noexcept {
    const std::uint32_t index = pos >> 22;
    const std::uint32_t fraction = (pos >> 6) & 0xFFFFu;
    const std::uint32_t lo = quarter_sine_table[index];
    const std::uint32_t hi = quarter_sine_table[index + 1];
    // Exact in 32 bits: lo*2^16 + (hi-lo)*fraction <= hi*2^16 < 2^32.
    const std::uint32_t v = (lo << 16) + (hi - lo) * fraction;
    const std::uint32_t rounded = ((v >> 16) + 1) >> 1;  // 2^-32 -> 2^-15, to nearest
    return static_cast<std::int16_t>(rounded > 32767u ? 32767u : rounded);
  }
  static constexpr sincos<q15> eval(std::uint32_t pos) noexcept {
    return {q15::from_raw(sine(pos)), q15::from_raw(sine((1u << 30) - pos))};
  }
};

/// Minimax polynomials on one octant: with u = x / (pi/4) in [0, 1] and z = u^2,
/// sin x = u * P(z) and cos x = Q(z). Coefficients from cmake/scripts/fit_trig.py.
template <> struct quadrant_sincos<q31> {
  // P and Q at 2^-33 (two guard bits above q31); P[0] and Q[0..1] need 64 bits.
  static constexpr std::int64_t P[] = {6746518852, -693598665, 21392309, -314146, 2651};
  static constexpr std::int64_t Q[] = {8589934592, -2649351743, 136187638, -2799821, 30334};

  /// sin and cos of r * (pi/4) / 2^29, r in [0, 2^29].
  static constexpr sincos<q31> octant(std::uint32_t r) noexcept {
    const std::int64_t u = std::int64_t{r} * 2;               // 2^-30, exact
    const std::int64_t z = round_shift(u * u, 30);             // 2^-30
    std::int64_t s = P[4];
    for (int k = 3; k >= 0; --k) s = P[k] + round_shift(s * z, 30);
    std::int64_t c = Q[4];
    for (int k = 3; k >= 1; --k) c = Q[k] + round_shift(c * z, 30);
    // u * s < 2^30 * 0.79 * 2^33 < 2^63; cos(0) = 1 saturates to max().
    const std::int64_t sine = round_shift(u * s, 32);
    const std::int64_t cosine = (std::int64_t{1} << 31) + round_shift(c * z, 32);
    return {q31::from_raw(static_cast<std::int32_t>(sine)),
            q31::from_raw(static_cast<std::int32_t>(cosine > INT32_MAX ? INT32_MAX : cosine))};
  }
  static constexpr sincos<q31> eval(std::uint32_t pos) noexcept {
    if (pos <= (1u << 29)) return octant(pos);
    const sincos<q31> m = octant((1u << 30) - pos);  // sin(pi/2 - x) = cos x
    return {m.cos, m.sin};
  }
};

template <class F> struct octant_polynomials;
template <> struct octant_polynomials<float> {
  static constexpr float P[] = {0.785398152543f, -0.0807453672754f, 0.00248987197596f,
                                -3.58772627615e-5f};
  static constexpr float Q[] = {1.0f, -0.308425135838f, 0.0158543277521f,
                                -0.000325942008255f, 3.53133481033e-6f};
};
template <> struct octant_polynomials<double> {
  static constexpr double P[] = {0.78539816339744829111,  -0.080745512188280090511,
                                 0.0024903945701852525274, -0.000036576204146601669736,
                                 3.1336160202421117516e-7, -1.7571336601951771575e-9,
                                 6.8723101636276378239e-12};
  static constexpr double Q[] = {1.0, -0.30842513753403925935, 0.015854344243753308804,
                                 -0.00032599188652459890433, 3.5908592490733900385e-6,
                                 -2.4609562920203263445e-8, 1.136719721123484915e-10};
};

template <class F, std::size_t N>
constexpr F horner(const F (&c)[N], F z) noexcept {
  F acc = c[N - 1];
  for (std::size_t k = N - 1; k-- > 0;) acc = c[k] + acc * z;
  return acc;
}

template <class F> struct floating_quadrant_sincos {
  using poly = octant_polynomials<F>;
  static constexpr sincos<F> octant(std::uint32_t r) noexcept {
    // r is reduced in integer first, so the conversion is the only rounding of the angle.
    const F u = static_cast<F>(r) * static_cast<F>(1.0 / 536870912.0);
    const F z = u * u;
    return {u * horner(poly::P, z), horner(poly::Q, z)};
  }
  static constexpr sincos<F> eval(std::uint32_t pos) noexcept {
    if (pos <= (1u << 29)) return octant(pos);
    const sincos<F> m = octant((1u << 30) - pos);
    return {m.cos, m.sin};
  }
};
template <> struct quadrant_sincos<float> : floating_quadrant_sincos<float> {};
template <> struct quadrant_sincos<double> : floating_quadrant_sincos<double> {};

}  // namespace detail

/// Sine and cosine of `a`, computed together (one reduction, shared by Park and inverse
/// Park). Timing does not depend on the angle beyond one branch on the octant.
template <class T>
constexpr sincos<T> sincos_of(angle a) noexcept {
  static_assert(is_number_v<T>, "dqfx::sincos_of supports q15, q31, float and double");
  const std::uint32_t quadrant = a.raw() >> 30;
  const sincos<T> f = detail::quadrant_sincos<T>::eval(a.raw() & 0x3FFFFFFFu);
  switch (quadrant) {
    case 0: return {f.sin, f.cos};
    case 1: return {f.cos, -f.sin};
    case 2: return {-f.sin, -f.cos};
    default: return {-f.cos, f.sin};
  }
}

}  // namespace dqfx
