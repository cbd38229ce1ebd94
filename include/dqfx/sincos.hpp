// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Sine and cosine of a binary angle, together, for q15, q31, float and double.
///
/// Error against the exact sine and cosine of the exact angle (proven in
/// tests/test_sincos.cpp, figures printed by the accuracy report):
///   q15   within 1 LSB (0.91 LSB except where |exact| > max(), which saturates)
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
/// keeps the stored rounding to 0.25 q15 LSB). Entries are capped at 65534 (only the last
/// three are affected) so that an interpolated value can never round up to 1.0: the
/// kernel needs no clamp, and the cap costs no accuracy because 1.0 saturates anyway.
/// Entry 257 pads the table so the cosine of angle 0 may read one past.
constexpr std::array<std::uint16_t, 258> make_quarter_sine_table() noexcept {
  std::array<std::uint16_t, 258> t{};
  for (std::size_t i = 0; i < t.size(); ++i) {
    const double v = taylor_sin(static_cast<double>(i) * (3.14159265358979323846 / 512.0));
    const double scaled = v * 65536.0 + 0.5;
    t[i] = scaled >= 65534.0 ? std::uint16_t{65534} : static_cast<std::uint16_t>(scaled);
  }
  return t;
}
inline constexpr std::array<std::uint16_t, 258> quarter_sine_table = make_quarter_sine_table();

/// The table as the kernel reads it, one 32-bit word per interval i: (t[i] + 1) * 2^16 +
/// (t[i+1] - t[i]). One load per interpolation instead of two, with the rounding half
/// (2^16 at the 2^-32 scale) already added. t[i] <= 65534 and t never decreases (the
/// sine rises over the quarter, and the cap keeps that), so both fields fit.
constexpr std::array<std::uint32_t, 257> make_quarter_sine_steps() noexcept {
  std::array<std::uint32_t, 257> s{};
  for (std::size_t i = 0; i < s.size(); ++i) {
    const std::uint32_t lo = quarter_sine_table[i], hi = quarter_sine_table[i + 1];
    s[i] = hi >= lo ? ((lo + 1) << 16) + (hi - lo) : 0;  // 0: caught by the test below
  }
  return s;
}
inline constexpr std::array<std::uint32_t, 257> quarter_sine_steps = make_quarter_sine_steps();
static_assert(quarter_sine_steps[256] == (std::uint32_t{65535} << 16), "the last interval is flat at the cap");

/// Sine and cosine of the angle within the first quadrant, `pos` in [0, 2^30).
template <class T> struct quadrant_sincos;

template <> struct quadrant_sincos<q15> {
  /// Linear interpolation of the table at a 30-bit quadrant position (0..2^30 inclusive).
  static constexpr std::int16_t sine(std::uint32_t pos) noexcept {
    const std::uint32_t step = quarter_sine_steps[pos >> 22];
    const std::uint32_t fraction = (pos >> 6) & 0xFFFFu;
    // lo*2^16 + (hi-lo)*fraction + 2^16, exactly: at most hi*2^16 + 2^16 <= 65535 * 2^16.
    const std::uint32_t v = (step & 0xFFFF0000u) + (step & 0xFFFFu) * fraction;
    // 2^-32 -> 2^-15, to nearest (the half is in v already); at most 32767.
    return static_cast<std::int16_t>(v >> 17);
  }
  static constexpr sincos<q15> eval(std::uint32_t pos) noexcept {
    return {q15::from_raw(sine(pos)), q15::from_raw(sine((1u << 30) - pos))};
  }
};

/// Minimax polynomials on one octant: with u = x / (pi/4) in [0, 1] and z = u^2,
/// sin x = u * P(z) and cos x = Q(z). Coefficients from cmake/scripts/fit_trig.py
/// (the q31 ones scaled as noted and rounded to integers).
template <> struct quadrant_sincos<q31> {
  static constexpr std::int32_t high(std::int32_t a, std::int32_t b) noexcept {
    return mul_high_round(a, b);
  }
  static constexpr std::uint32_t high(std::uint32_t a, std::uint32_t b) noexcept {
    return static_cast<std::uint32_t>((std::uint64_t{a} * b + (std::uint64_t{1} << 31)) >> 32);
  }
  // Each coefficient carries two more fraction bits than the next lower one (P[k] at
  // 2^-(32+2k), Q[k] at 2^-(30+2k), Q[1] at 2^-32), so that every Horner step is one
  // high-word product by z (at 2^-30) and one add, all in 32 bits.
  static constexpr std::uint32_t P0 = 3373259426u;
  static constexpr std::int32_t P[] = {0, -1387197330, 171138468, -10052675, 339269};
  static constexpr std::int32_t Q[] = {0, -1324675872, 272375277, -22398564, 970686};

  /// sin and cos of r * (pi/4) / 2^29, r in [0, 2^29].
  static constexpr sincos<q31> octant(std::uint32_t r) noexcept {
    const std::uint32_t u = r << 2;                                  // 2^-31, exact, <= 2^31
    const auto z = static_cast<std::int32_t>(high(u, u));            // 2^-30
    const std::int32_t s = P[1] + high(P[2] + high(P[3] + high(P[4], z), z), z);
    const std::int32_t c = Q[1] + high(Q[2] + high(Q[3] + high(Q[4], z), z), z);
    // sin = u * (P0 + z * s); cos = 1 + z * c, the last product kept to 2^-31.
    const std::uint32_t sine = high(u, static_cast<std::uint32_t>(std::int64_t{P0} + high(s, z)));
    const std::int64_t cosine =
        (std::int64_t{1} << 31) + ((std::int64_t{c} * z + (std::int64_t{1} << 30)) >> 31);
    // cos(0) = 1 saturates to max().
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

/// -x for x within [-max(), max()], as every sine and cosine here is: exact, so there is
/// no saturation to check (one instruction for q15/q31 instead of a negate and a clamp).
template <class T>
constexpr T negate_within_range(T x) noexcept {
  if constexpr (is_fixed_v<T>) {
    return T::from_raw(static_cast<typename T::raw_type>(-x.raw()));
  } else {
    return -x;
  }
}

}  // namespace detail

/// Sine and cosine of `a`, computed together (one reduction, shared by Park and inverse
/// Park). Timing does not depend on the angle beyond one branch on the octant.
template <class T>
constexpr sincos<T> sincos_of(angle a) noexcept {
  static_assert(is_number_v<T>, "dqfx::sincos_of supports q15, q31, float and double");
  const std::uint32_t quadrant = a.raw() >> 30;
  sincos<T> r = detail::quadrant_sincos<T>::eval(a.raw() & 0x3FFFFFFFu);
  // Quadrants 1 and 3 turn the first-quadrant pair by 90 degrees, 2 and 3 by 180.
  if (quadrant & 1u) {
    const T s = r.sin;
    r.sin = r.cos;
    r.cos = detail::negate_within_range(s);
  }
  if (quadrant & 2u) {
    r.sin = detail::negate_within_range(r.sin);
    r.cos = detail::negate_within_range(r.cos);
  }
  return r;
}

}  // namespace dqfx
