// SPDX-License-Identifier: MIT
// sincos_of<T> against the long double reference (tests/reference/trig_reference.hpp),
// exhaustively over all 65,536 16-bit angles and on random and corner 32-bit angles,
// and the reference itself against MPFR (correctly rounded).

#include <doctest/doctest.h>
#include <mpfr.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "dqfx/sincos.hpp"
#include "reference/trig_reference.hpp"

using dqfx::angle;
using dqfx::q15;
using dqfx::q31;
namespace ref = dqfx_reference;

namespace {

/// Documented bound of sincos_of, absolute (DESIGN: within 1/2 LSB q15/q31, 1.2e-7
/// float, 1e-12 double as stated in include/dqfx/sincos.hpp).
template <class T> constexpr double sincos_bound = 0;
template <> constexpr double sincos_bound<q15> = 1.0 / 32768.0;
template <> constexpr double sincos_bound<q31> = 2.0 / 2147483648.0;
template <> constexpr double sincos_bound<float> = 1.2e-7;
template <> constexpr double sincos_bound<double> = 1e-12;

/// Angles at and next to every octant boundary: where the reductions switch branches.
std::vector<std::uint32_t> corner_angles() {
  std::vector<std::uint32_t> v;
  for (std::uint32_t k = 0; k < 8; ++k) {
    for (std::uint32_t d = 0; d < 64; ++d) {
      v.push_back((k << 29) + d);
      v.push_back((k << 29) - d);
    }
  }
  return v;
}

template <class T>
void check_angle(std::uint32_t raw, double& worst) {
  const dqfx::sincos<T> sc = dqfx::sincos_of<T>(angle::from_raw(raw));
  const long double es = std::fabs(ref::exact(sc.sin) - ref::sin_of_raw(raw));
  const long double ec = std::fabs(ref::exact(sc.cos) - ref::cos_of_raw(raw));
  worst = std::max({worst, static_cast<double>(es), static_cast<double>(ec)});
}

}  // namespace

TEST_CASE_TEMPLATE("sincos_of: exhaustive over every 16-bit angle", T, q15, q31, float, double) {
  double worst = 0;
  for (std::uint32_t i = 0; i < 65536; ++i) check_angle<T>(i << 16, worst);
  MESSAGE(std::string(dqfx::number_traits<T>::name), " worst over 16-bit angles: ", worst);
  CHECK(worst <= sincos_bound<T>);
}

TEST_CASE_TEMPLATE("sincos_of: random and corner 32-bit angles", T, q15, q31, float, double) {
  double worst = 0;
  std::mt19937 rng(20261201);
  for (int i = 0; i < 1'000'000; ++i) check_angle<T>(static_cast<std::uint32_t>(rng()), worst);
  for (std::uint32_t raw : corner_angles()) check_angle<T>(raw, worst);
  MESSAGE(std::string(dqfx::number_traits<T>::name), " worst over 32-bit angles: ", worst);
  CHECK(worst <= sincos_bound<T>);
}

TEST_CASE_TEMPLATE("sincos_of: fixed-point results stay within [-max, max]", T, q15, q31) {
  // Keeps negation exact and keeps Park's sum of two products below 2.
  std::mt19937 rng(7);
  for (int i = 0; i < 200'000; ++i) {
    const auto sc = dqfx::sincos_of<T>(angle::from_raw(static_cast<std::uint32_t>(rng())));
    REQUIRE(sc.sin > dqfx::number_traits<T>::lowest());
    REQUIRE(sc.cos > dqfx::number_traits<T>::lowest());
  }
}

TEST_CASE_TEMPLATE("sincos_of: symmetries hold exactly", T, q15, q31, float, double) {
  // sin(-x) = -sin x, cos(-x) = cos x, sin(x + pi/2) = cos x: the quadrant folding makes
  // these exact for every type, not only within the bound.
  std::mt19937 rng(11);
  for (int i = 0; i < 100'000; ++i) {
    const angle a = angle::from_raw(static_cast<std::uint32_t>(rng()));
    const auto p = dqfx::sincos_of<T>(a);
    const auto n = dqfx::sincos_of<T>(-a);
    const auto q = dqfx::sincos_of<T>(a + angle::from_raw(0x40000000u));
    REQUIRE(n.sin == -p.sin);
    REQUIRE(n.cos == p.cos);
    REQUIRE(q.sin == p.cos);
    REQUIRE(q.cos == -p.sin);
  }
}

TEST_CASE("sincos_of: handbook values and constant evaluation") {
  // sin 30 = 1/2, cos 60 = 1/2, sin 45 = sqrt(2)/2: exact values from any trigonometric
  // table (common practice; e.g. Abramowitz and Stegun, Handbook of Mathematical
  // Functions, 1964, 4.3.46).
  static_assert(dqfx::sincos_of<q15>(angle::from_degrees(90)).sin == q15::max());
  static_assert(dqfx::sincos_of<q15>(angle::from_degrees(0)).cos == q15::max());
  static_assert(dqfx::sincos_of<q15>(angle::from_degrees(180)).sin.raw() == 0);
  static_assert(dqfx::sincos_of<q15>(angle::from_degrees(30)).sin.raw() == 16384);
  static_assert(dqfx::sincos_of<q31>(angle::from_degrees(270)).sin == -q31::max());
  static_assert(dqfx::sincos_of<double>(angle::from_degrees(0)).cos == 1.0);
  CHECK(dqfx::sincos_of<q31>(angle::from_degrees(60)).cos.raw() == doctest::Approx(1073741824).epsilon(1e-9));
  CHECK(dqfx::sincos_of<float>(angle::from_degrees(30)).sin == doctest::Approx(0.5).epsilon(2e-7));
  CHECK(dqfx::sincos_of<double>(angle::from_degrees(45)).sin == doctest::Approx(std::sqrt(0.5)).epsilon(1e-12));
}

TEST_CASE("sincos_of: the q15 table samples are correctly rounded") {
  // The table is built at compile time by a Taylor series; check every entry against
  // the long double reference: round(sin(i*pi/512) * 2^16), capped at 65534 (so that an
  // interpolated value never rounds up to 1.0).
  for (std::size_t i = 0; i < dqfx::detail::quarter_sine_table.size(); ++i) {
    const long double v = std::sin(static_cast<long double>(i) * ref::pi / 512.0L) * 65536.0L;
    const long double expected = std::min(std::round(v), 65534.0L);
    REQUIRE(dqfx::detail::quarter_sine_table[i] == static_cast<std::uint16_t>(expected));
  }
  // The packed form the kernel reads: (t[i] + 1) * 2^16 + (t[i+1] - t[i]), both fields in range.
  for (std::size_t i = 0; i < dqfx::detail::quarter_sine_steps.size(); ++i) {
    const std::uint32_t lo = dqfx::detail::quarter_sine_table[i], hi = dqfx::detail::quarter_sine_table[i + 1];
    REQUIRE(hi >= lo);
    REQUIRE(hi - lo < 65536u);
    REQUIRE(dqfx::detail::quarter_sine_steps[i] == (lo + 1) * 65536u + (hi - lo));
  }
}

TEST_CASE("reference trigonometry agrees with MPFR (correctly rounded)") {
  // Outside check of the reference: MPFR, "The GNU MPFR Library" (Fousse, Hanrot,
  // Lefevre, Pelissier, Zimmermann, ACM TOMS 33(2), 2007) gives sin and cos correctly
  // rounded. The long double reference must agree within 1 ulp of double on a sample of
  // 32-bit angles, and dqfx's double kernel within its own bound of MPFR directly.
  mpfr_t x, s, c, two_pi;
  mpfr_inits2(128, x, s, c, two_pi, static_cast<mpfr_ptr>(nullptr));
  mpfr_const_pi(two_pi, MPFR_RNDN);
  mpfr_mul_ui(two_pi, two_pi, 2, MPFR_RNDN);
  std::mt19937 rng(5);
  double worst_reference = 0, worst_double = 0;
  for (int i = 0; i < 20'000; ++i) {
    const std::uint32_t raw = i < 8 ? static_cast<std::uint32_t>(i) << 29 : static_cast<std::uint32_t>(rng());
    mpfr_set_ui(x, raw, MPFR_RNDN);
    mpfr_mul(x, x, two_pi, MPFR_RNDN);
    mpfr_div_2ui(x, x, 32, MPFR_RNDN);
    mpfr_sin_cos(s, c, x, MPFR_RNDN);
    const double ms = mpfr_get_d(s, MPFR_RNDN), mc = mpfr_get_d(c, MPFR_RNDN);
    worst_reference = std::max({worst_reference,
                                static_cast<double>(std::fabs(ref::sin_of_raw(raw) - ms)),
                                static_cast<double>(std::fabs(ref::cos_of_raw(raw) - mc))});
    const auto d = dqfx::sincos_of<double>(angle::from_raw(raw));
    worst_double = std::max({worst_double, std::fabs(d.sin - ms), std::fabs(d.cos - mc)});
  }
  mpfr_clears(x, s, c, two_pi, static_cast<mpfr_ptr>(nullptr));
  mpfr_free_cache();
  MESSAGE("reference vs MPFR: ", worst_reference, ", dqfx double vs MPFR: ", worst_double);
  CHECK(worst_reference <= 2.3e-16);  // 1 ulp of double at 1.0
  CHECK(worst_double <= sincos_bound<double>);
}
