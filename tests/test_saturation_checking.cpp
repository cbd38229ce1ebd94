// SPDX-License-Identifier: MIT
// Built only into dqfx_tests_checked, with DQFX_COUNT_SATURATION: every clamp in the
// number layer is counted, and operations that stay in range count nothing.

#include <doctest/doctest.h>

#include <cstdint>
#include <limits>
#include <type_traits>

#include "dqfx/angle.hpp"
#include "dqfx/fixed.hpp"
#include "dqfx/number.hpp"
#include "saturation_probe.hpp"

#if !defined(DQFX_COUNT_SATURATION)
#error "test_saturation_checking.cpp belongs to the DQFX_COUNT_SATURATION build"
#endif

using dqfx::q15;
using dqfx::q31;

namespace {

/// Saturation events counted while running f.
template <class F>
std::uint64_t events_during(F&& f) {
  dqfx::reset_saturation_events();
  f();
  return dqfx::saturation_events();
}

constexpr double nan_value = std::numeric_limits<double>::quiet_NaN();
constexpr double inf_value = std::numeric_limits<double>::infinity();

// Keeps results alive so the operations are really performed.
template <class T> void keep(T v) { asm volatile("" : : "g"(&v) : "memory"); }

}  // namespace

TEST_CASE("checked build: the counter exists") {
  static_assert(dqfx::saturation_checking);
  static_assert(std::is_same_v<saturation_probe::events_type, std::uint64_t>);
}

TEST_CASE_TEMPLATE("checked build: each fixed-point clamp is one event", T, q15, q31) {
  const T hi = T::max(), lo = T::lowest(), half = dqfx::from_double<T>(0.5);
  CHECK(events_during([&] { keep(hi + hi); }) == 1);
  CHECK(events_during([&] { keep(lo + lo); }) == 1);
  CHECK(events_during([&] { keep(lo - hi); }) == 1);
  CHECK(events_during([&] { keep(hi - lo); }) == 1);
  CHECK(events_during([&] { keep(-lo); }) == 1);
  CHECK(events_during([&] { keep(dqfx::abs(lo)); }) == 1);
  CHECK(events_during([&] { keep(lo * lo); }) == 1);
  CHECK(events_during([&] { T x = hi; x += half; keep(x); }) == 1);
  CHECK(events_during([&] { keep(T::saturated(std::int64_t{1} << 40)); }) == 1);

  // gain: a product beyond the range, and constants that cannot be represented.
  const auto forty = dqfx::gain<T>::from_double(40.0);
  CHECK(events_during([&] { keep(half * forty); }) == 1);
  CHECK(events_during([&] { keep(-half * forty); }) == 1);
  CHECK(events_during([&] { keep(dqfx::gain<T>::from_double(1e12)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::gain<T>::from_double(nan_value)); }) == 1);

  // from_double: out of range either way, infinities, NaN.
  CHECK(events_during([&] { keep(dqfx::from_double<T>(1.0)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::from_double<T>(-1.5)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::from_double<T>(1e300)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::from_double<T>(-inf_value)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::from_double<T>(nan_value)); }) == 1);

  // Accumulator: a result beyond the range is one event; the corner (-1)(-1)+(-1)(-1),
  // whose wide sum also reaches its own limit, is reported (wide clamp and final clamp).
  CHECK(events_during([&] { keep(dqfx::sum_of_products(hi, hi, half, half)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::difference_of_products(lo, hi, half, half)); }) == 1);
  CHECK(events_during([&] { keep(dqfx::sum_of_products(lo, lo, lo, lo)); }) >= 1);
  CHECK(events_during([&] {
          dqfx::accumulator<T> acc{hi};
          acc.add_product(half, half);
          keep(acc.result());
        }) == 1);
}

TEST_CASE("checked build: float and double conversions count their clamps") {
  CHECK(events_during([] { keep(dqfx::from_double<float>(1e300)); }) == 1);
  CHECK(events_during([] { keep(dqfx::from_double<float>(-1e300)); }) == 1);
  CHECK(events_during([] { keep(dqfx::from_double<float>(nan_value)); }) == 1);
  CHECK(events_during([] { keep(dqfx::from_double<double>(nan_value)); }) == 1);
  CHECK(events_during([] { keep(dqfx::from_double<double>(inf_value)); }) == 1);
  CHECK(events_during([] { keep(dqfx::from_double<float>(0.1)); }) == 0);
  CHECK(events_during([] { keep(dqfx::from_double<double>(-1e300)); }) == 0);
}

TEST_CASE("checked build: angle steps that do not fit are counted") {
  // A scale of more than half a turn per sample cannot be represented.
  CHECK(events_during([] { keep(dqfx::angle_rate<q15>::from_base(1e6, 1e-3)); }) == 1);
  const auto rate = dqfx::angle_rate<float>::from_base(1000.0, 1e-4);
  CHECK(events_during([&] { keep(rate.step_raw(std::numeric_limits<float>::quiet_NaN())); }) == 1);
  CHECK(events_during([&] { keep(rate.step_raw(0.5f)); }) == 0);
}

TEST_CASE_TEMPLATE("checked build: operations that stay in range count nothing", T, q15, q31) {
  std::uint64_t n = events_during([] {
    for (int i = -1000; i < 1000; ++i) {
      const T x = dqfx::from_double<T>(i / 2003.0);  // |x| < 0.5
      const T y = dqfx::from_double<T>((999 - i) / 4003.0);  // |y| < 0.5
      keep(x + y);
      keep(x - y);
      keep(-x);
      keep(dqfx::abs(x));
      keep(x * y);
      keep(T::lowest() * y);
      keep(x * dqfx::gain<T>::from_double(0.9));
      keep(dqfx::sum_of_products(x, y, y, x));
      keep(dqfx::difference_of_products(x, y, y, x));
      keep(dqfx::to_double(x));
    }
    keep(-T::max());
    keep(dqfx::abs(T::max()));
    keep(T::lowest() + T::max());
  });
  CHECK(n == 0);
}

TEST_CASE("checked build: constant evaluation is not counted") {
  dqfx::reset_saturation_events();
  constexpr q15 c = q15::max() + q15::max();
  constexpr q31 d = dqfx::from_double<q31>(3.0);
  static_assert(c == q15::max() && d == q31::max());
  CHECK(dqfx::saturation_events() == 0);
}
