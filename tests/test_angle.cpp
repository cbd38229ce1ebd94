// SPDX-License-Identifier: MIT
// dqfx::angle (32-bit binary angle) and angle_rate<T>, against a long double reference.
// Facts used: one turn is 360 degrees and 2*pi radians (definitions); the electrical
// angle of a machine with p pole pairs is p times the mechanical angle (common practice
// in every machines text; no single source); pi is taken as acosl(-1).

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>

#include "dqfx/angle.hpp"

using dqfx::angle;
using dqfx::q15;
using dqfx::q31;

static_assert(std::numeric_limits<long double>::digits >= 64, "tests need 80-bit long double");

namespace {

constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();
constexpr double infinity = std::numeric_limits<double>::infinity();
const long double pi = std::acos(-1.0L);
constexpr long double unit_per_turn = 4294967296.0L;

/// Reference from_turns: the fraction of a turn (exact in long double), rounded half
/// away from zero by roundl (ISO/IEC 9899:2011, 7.12.9.6), wrapped to [0, 2^32).
std::uint32_t reference_from_turns(long double turns) {
  if (!(std::fabs(turns) < 2147483648.0L)) return 0;
  const long double units = std::roundl((turns - std::truncl(turns)) * unit_per_turn);
  return static_cast<std::uint32_t>(static_cast<std::int64_t>(units) & 0xFFFFFFFF);
}

/// Distance in units between a binary angle and an exact angle given in turns.
long double units_between(angle a, long double turns) {
  long double d = std::fmod(static_cast<long double>(a.raw()) - turns * unit_per_turn, unit_per_turn);
  if (d >= unit_per_turn / 2) d -= unit_per_turn;
  if (d < -unit_per_turn / 2) d += unit_per_turn;
  return std::fabs(d);
}

std::int64_t reference_signed(std::uint32_t r) {
  return r < 0x80000000u ? std::int64_t{r} : std::int64_t{r} - 4294967296;
}

}  // namespace

TEST_CASE("angle: constant expressions") {
  static_assert(angle{}.raw() == 0);
  static_assert(angle::from_raw(0x12345678u).raw() == 0x12345678u);
  static_assert(angle::from_turns(0.25).raw() == 0x40000000u);
  static_assert(angle::from_turns(-0.25).raw() == 0xC0000000u);
  static_assert(angle::from_degrees(90.0).raw() == 0x40000000u);
  static_assert(angle::from_degrees(-45.0).raw() == 0xE0000000u);
  static_assert(angle::from_degrees(720.0 + 180.0).raw() == 0x80000000u);
  static_assert(angle::from_radians(3.14159265358979323846).raw() == 0x80000000u);
  static_assert((angle::from_raw(0xF0000000u) + angle::from_raw(0x20000000u)).raw() == 0x10000000u);
  static_assert((angle::from_raw(0x10000000u) - angle::from_raw(0x20000000u)).raw() == 0xF0000000u);
  static_assert((-angle::from_raw(1)).raw() == 0xFFFFFFFFu);
  static_assert(angle::from_raw(0x80000000u).signed_raw() == -2147483647 - 1);
  static_assert(dqfx::difference(angle::from_degrees(10.0), angle::from_degrees(350.0)) ==
                dqfx::difference(angle::from_degrees(20.0), angle{}));
  static_assert(dqfx::electrical(angle::from_degrees(100.0), 4).raw() == angle::from_degrees(40.0).raw());
  static_assert(noexcept(angle::from_turns(0.0)) && noexcept(dqfx::difference(angle{}, angle{})));
}

TEST_CASE("angle::from_turns: exact values, wrap, ties, bad input") {
  CHECK(angle::from_turns(0.0).raw() == 0);
  CHECK(angle::from_turns(1.0).raw() == 0);
  CHECK(angle::from_turns(-1.0).raw() == 0);
  CHECK(angle::from_turns(0.5).raw() == 0x80000000u);
  CHECK(angle::from_turns(-0.5).raw() == 0x80000000u);
  CHECK(angle::from_turns(1.5).raw() == 0x80000000u);
  CHECK(angle::from_turns(-0.75).raw() == 0x40000000u);
  CHECK(angle::from_turns(1e6 + 0.125).raw() == 0x20000000u);
  CHECK(angle::from_turns(-1e6 - 0.125).raw() == 0xE0000000u);
  CHECK(angle::from_turns(2147483647.5).raw() == 0x80000000u);
  // Half a unit is a tie: away from zero on both sides.
  CHECK(angle::from_turns(0.5 / 4294967296.0).raw() == 1);
  CHECK(angle::from_turns(-0.5 / 4294967296.0).raw() == 0xFFFFFFFFu);
  CHECK(angle::from_turns(std::nextafter(0.5, 0.0) / 4294967296.0).raw() == 0);
  CHECK(angle::from_turns(std::nextafter(1.0, 0.0)).raw() == 0);  // rounds up to a full turn
  // Documented bad input: NaN, infinities and |turns| >= 2^31 give angle 0.
  CHECK(angle::from_turns(not_a_number).raw() == 0);
  CHECK(angle::from_turns(infinity).raw() == 0);
  CHECK(angle::from_turns(-infinity).raw() == 0);
  CHECK(angle::from_turns(2147483648.0).raw() == 0);
  CHECK(angle::from_turns(-1e300).raw() == 0);
  CHECK(angle::from_radians(not_a_number).raw() == 0);
  CHECK(angle::from_degrees(infinity).raw() == 0);
}

TEST_CASE("angle::from_turns: correctly rounded for a million random doubles") {
  std::mt19937_64 rng(0xa9613);
  std::uniform_real_distribution<double> small(-4.0, 4.0);
  std::uniform_int_distribution<int> exponent(-40, 34);
  long wrong = 0;
  for (int i = 0; i < 1'000'000; ++i) {
    const double t = (i % 2 == 0) ? small(rng) : std::ldexp(small(rng), exponent(rng));
    wrong += int{angle::from_turns(t).raw() != reference_from_turns(t)};
  }
  CHECK(wrong == 0);
}

TEST_CASE("angle::from_radians and from_degrees: within 1/2 unit plus the input rounding") {
  // turns = radians * fl(1/(2 pi)) and degrees / 360 are one or two roundings of
  // relative size 2^-53 each: in units, at most |turns| * 2^32 * 2^-52 beyond the
  // 1/2 unit of the final rounding.
  std::mt19937_64 rng(0xa9614);
  std::uniform_real_distribution<double> dist(-1.0, 1.0);
  long wrong = 0;
  long double worst_radians = 0, worst_degrees = 0;
  for (int i = 0; i < 1'000'000; ++i) {
    const double scale = (i % 4 == 0) ? 1e6 : (i % 4 == 1) ? 100.0 : 7.0;
    const double r = dist(rng) * scale;
    const long double turns_r = static_cast<long double>(r) / (2 * pi);
    const long double err_r = units_between(angle::from_radians(r), turns_r);
    wrong += int{err_r > 0.5L + std::fabs(turns_r) * std::ldexp(1.0L, -20) + 1e-6L};
    if (scale < 1e6) worst_radians = std::max(worst_radians, err_r);
    const double d = dist(rng) * scale * 57.0;
    const long double turns_d = static_cast<long double>(d) / 360;
    const long double err_d = units_between(angle::from_degrees(d), turns_d);
    wrong += int{err_d > 0.5L + std::fabs(turns_d) * std::ldexp(1.0L, -21) + 1e-6L};
    if (scale < 1e6) worst_degrees = std::max(worst_degrees, err_d);
  }
  CHECK(wrong == 0);
  // Below 100 rad (and 5700 degrees) the result is the nearest binary angle or a tie away.
  CHECK(worst_radians <= 0.5L + 1e-3L);
  CHECK(worst_degrees <= 0.5L + 1e-3L);
  // Whole degrees: every one of 0..359 maps to the nearest of the 2^32 units.
  for (int deg = -720; deg <= 720; ++deg) {
    CAPTURE(deg);
    CHECK(angle::from_degrees(deg).raw() == reference_from_turns(deg / 360.0L));
  }
}

TEST_CASE("angle: turns, radians and degrees read back") {
  std::mt19937_64 rng(0xa9615);
  long wrong = 0;
  for (int i = 0; i < 100'000; ++i) {
    const auto r = static_cast<std::uint32_t>(rng());
    const angle a = angle::from_raw(r);
    wrong += int{a.turns() != std::ldexp(static_cast<double>(r), -32)};
    wrong += int{std::fabs(a.radians() - static_cast<double>(r / unit_per_turn * 2 * pi)) > 2 * 6.3 * 0x1p-53};
    wrong += int{std::fabs(a.degrees() - static_cast<double>(r / unit_per_turn * 360)) > 360 * 0x1p-53};
    wrong += int{angle::from_turns(a.turns()) != a};
  }
  CHECK(wrong == 0);
  CHECK(angle::from_raw(0xFFFFFFFFu).turns() < 1.0);
}

TEST_CASE("angle::signed_raw and difference: shortest signed rotation, half a turn reads -2^31") {
  long wrong = 0;
  for (std::uint64_t r = 0; r <= 0xFFFFFFFFu; r += 65521) {
    wrong += int{angle::from_raw(static_cast<std::uint32_t>(r)).signed_raw() !=
                 reference_signed(static_cast<std::uint32_t>(r))};
  }
  for (std::uint32_t r : {0u, 1u, 0x7FFFFFFFu, 0x80000000u, 0x80000001u, 0xFFFFFFFFu}) {
    wrong += int{angle::from_raw(r).signed_raw() != reference_signed(r)};
  }
  std::mt19937_64 rng(0xa9616);
  for (int i = 0; i < 1'000'000; ++i) {
    const auto to = static_cast<std::uint32_t>(rng()), from = static_cast<std::uint32_t>(rng());
    std::int64_t d = (std::int64_t{to} - std::int64_t{from}) % 4294967296;
    if (d >= 2147483648) d -= 4294967296;
    if (d < -2147483648) d += 4294967296;
    wrong += int{dqfx::difference(angle::from_raw(to), angle::from_raw(from)) != d};
  }
  CHECK(wrong == 0);
  CHECK(dqfx::difference(angle::from_degrees(180.0), angle{}) == -2147483647 - 1);
  CHECK(dqfx::difference(angle{}, angle::from_degrees(180.0)) == -2147483647 - 1);
  CHECK(dqfx::difference(angle::from_degrees(10.0), angle::from_degrees(350.0)) ==
        angle::from_degrees(20.0).signed_raw());
  CHECK(dqfx::difference(angle::from_degrees(350.0), angle::from_degrees(10.0)) ==
        -angle::from_degrees(20.0).signed_raw());
}

TEST_CASE("electrical: pole pairs times the mechanical angle, wrapped exactly") {
  std::mt19937_64 rng(0xa9617);
  long wrong = 0;
  for (int i = 0; i < 1'000'000; ++i) {
    const auto m = static_cast<std::uint32_t>(rng());
    const auto p = static_cast<std::uint32_t>(i % 3 == 0 ? rng() : rng() % 64);
    // p * m < 2^64 is exact in long double; fmodl is exact.
    const long double units = std::fmod(static_cast<long double>(p) * m, unit_per_turn);
    wrong += int{dqfx::electrical(angle::from_raw(m), p).raw() != static_cast<std::uint32_t>(units)};
  }
  CHECK(wrong == 0);
  const angle m = angle::from_degrees(100.0);
  CHECK(dqfx::electrical(m, 0).raw() == 0);
  CHECK(dqfx::electrical(m, 1) == m);
  // A 4-pole-pair machine at 100 degrees mechanical: 400 degrees = 40 degrees electrical.
  CHECK(dqfx::electrical(m, 4).raw() == angle::from_degrees(40.0).raw());
}

namespace {

/// Invented drive scales (base speed in rad/s, sample time in s), none from a real product.
struct rate_case {
  double base_rad_per_s, sample_s;
};
const rate_case rate_cases[] = {
    {2 * 3.14159265358979323846 * 500.0, 1.0 / 20000},  // 500 Hz electrical at 20 kHz
    {2 * 3.14159265358979323846 * 4 * 6000.0 / 60, 62.5e-6},  // 6000 rpm, 4 pole pairs, 16 kHz
    {3000.0, 1e-4},
    {1.0, 1e-6},  // a very slow scale: steps of a few units
    {-1500.0, 5e-5},  // negative scale: turns the other way
    {3.14159265358979323846 / 1e-4 * 0.999, 1e-4},  // just below half a turn per sample
};

/// The exact step in units (2^-32 turn): speed * base * dt / (2 pi) turns.
long double exact_step(long double speed, const rate_case& c) {
  return speed * static_cast<long double>(c.base_rad_per_s) * static_cast<long double>(c.sample_s) /
         (2 * pi) * unit_per_turn;
}

/// Bound on |step - exact| in units, per type (see the step_raw documentation).
template <class T> long double step_bound(long double exact) {
  if constexpr (dqfx::is_fixed_v<T>) {
    return 1.0L + std::ldexp(1.0L, -20);  // 1/2 scale quantisation * |speed| + 1/2 rounding
  } else {
    // Computed in T: the scale's rounding, the product's and the half-unit addition's,
    // each at most 2^-p relative (p = 24 or 53 significant bits), then the final
    // truncation of the rounded value (1/2 unit).
    constexpr int p = std::numeric_limits<T>::digits;
    return 0.5L + std::fabs(exact) * 3 * std::ldexp(1.0L, -p) * (1 + std::ldexp(1.0L, -p));
  }
}

template <class T> long double speed_value(T s) { return static_cast<long double>(dqfx::to_double(s)); }

}  // namespace

TEST_CASE_TEMPLATE("angle_rate::advance: step within its bound of the exact angle travelled", T, q15, q31,
                   float, double) {
  std::mt19937_64 rng(0xa9618);
  for (const rate_case& c : rate_cases) {
    CAPTURE(c.base_rad_per_s);
    CAPTURE(c.sample_s);
    const auto rate = dqfx::angle_rate<T>::from_base(c.base_rad_per_s, c.sample_s);
    long wrong = 0;
    long double worst = 0;
    auto check_one = [&](T speed, angle start) {
      const long double exact = exact_step(speed_value(speed), c);
      const std::int32_t step = rate.step_raw(speed);
      const long double err = std::fabs(static_cast<long double>(step) - exact);
      worst = std::max(worst, err);
      wrong += int{err > step_bound<T>(exact)};
      // advance() adds the step modulo one turn.
      const angle next = rate.advance(start, speed);
      wrong += int{dqfx::difference(next, start) != step};
    };
    if constexpr (std::is_same_v<T, q15>) {
      for (std::int32_t s = -32768; s <= 32767; ++s)
        check_one(q15::from_raw(static_cast<std::int16_t>(s)), angle::from_raw(static_cast<std::uint32_t>(rng())));
    } else {
      std::uniform_real_distribution<double> dist(-1.0, 1.0);
      for (int i = 0; i < 200'000; ++i)
        check_one(dqfx::from_double<T>(dist(rng)), angle::from_raw(static_cast<std::uint32_t>(rng())));
      check_one(dqfx::from_double<T>(1.0), angle::from_raw(0xFFFFFFF0u));  // max() for q31
      check_one(dqfx::from_double<T>(-1.0), angle{});
    }
    CHECK(wrong == 0);
    CHECK(worst <= step_bound<T>(exact_step(1, c)));
  }
}

TEST_CASE_TEMPLATE("angle_rate: a worked example of one electrical turn", T, q15, q31, float, double) {
  // Invented scale: base 500 Hz electrical, 20 kHz sampling, speed 0.5: 1/80 turn per
  // sample, so 80 samples make one turn (within 80 units of the per-step rounding).
  const auto rate = dqfx::angle_rate<T>::from_base(2 * 3.14159265358979323846 * 500.0, 1.0 / 20000);
  angle a = angle::from_degrees(30.0);
  for (int i = 0; i < 80; ++i) a = rate.advance(a, dqfx::from_double<T>(0.5));
  CHECK(std::abs(dqfx::difference(a, angle::from_degrees(30.0))) <= 80);
  for (int i = 0; i < 80; ++i) a = rate.advance(a, dqfx::from_double<T>(-0.5));
  CHECK(std::abs(dqfx::difference(a, angle::from_degrees(30.0))) <= 160);
}

TEST_CASE_TEMPLATE("angle_rate: bad input", T, float, double) {
  const auto rate = dqfx::angle_rate<T>::from_base(3000.0, 1e-4);
  const angle a = angle::from_raw(123456789u);
  // NaN speed: no step.
  CHECK(rate.step_raw(std::numeric_limits<T>::quiet_NaN()) == 0);
  CHECK(rate.advance(a, std::numeric_limits<T>::quiet_NaN()) == a);
  // Speeds whose step exceeds half a turn saturate to just under (or at) half a turn.
  CHECK(rate.step_raw(std::numeric_limits<T>::infinity()) == 2147483647);
  CHECK(rate.step_raw(-std::numeric_limits<T>::infinity()) == -2147483647 - 1);
  CHECK(rate.step_raw(T{1e6}) == 2147483647);
  // A scale beyond half a turn per sample is refused by saturating the scale.
  const auto too_fast = dqfx::angle_rate<T>::from_base(1e6, 1e-3);
  CHECK(too_fast.step_raw(T{1}) == 2147483647);
}

TEST_CASE_TEMPLATE("angle_rate: fixed-point corners", T, q15, q31) {
  const auto rate = dqfx::angle_rate<T>::from_base(3000.0, 1e-4);
  CHECK(rate.step_raw(T{}) == 0);
  // A scale of more than half a turn saturates: full speed is just under half a turn.
  const auto too_fast = dqfx::angle_rate<T>::from_base(1e6, 1e-3);
  CHECK(too_fast.step_raw(T::max()) >= 2147483647 - (1 << 16));
  CHECK(too_fast.step_raw(T::lowest()) == -2147483647);
  static_assert(dqfx::angle_rate<T>::from_base(0.0, 1e-4).step_raw(T::max()) == 0);
}
