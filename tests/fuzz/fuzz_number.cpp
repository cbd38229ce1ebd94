// SPDX-License-Identifier: MIT
// Fuzz harness: the number layer. Every fixed-point result must equal the exact result
// (128-bit integers, tests/reference/exact_integer.hpp) rounded as documented and
// saturated; conversions must round, saturate and map NaN to zero; binary angles must
// wrap exactly.
#include <cmath>

#include "dqfx/angle.hpp"
#include "dqfx/number.hpp"
#include "fuzz_input.hpp"
#include "reference/exact_integer.hpp"

namespace {

using namespace dqfx_fuzz;
using dqfx_ref::int128;

template <class T>
using raw_of = typename T::raw_type;

/// The exact product or sum at T's scale, rounded half up and saturated.
template <class T>
raw_of<T> rounded_saturated(int128 numerator, int shift) {
  return dqfx_ref::clamp_to<raw_of<T>>(dqfx_ref::round_div_half_up(numerator, dqfx_ref::pow2(shift)));
}

template <class T>
void arithmetic(byte_reader& in) {
  using raw = raw_of<T>;
  constexpr int bits = T::fraction_bits;
  const T a = in.any<T>(), b = in.any<T>(), c = in.any<T>(), d = in.any<T>();
  const int128 ea = a.raw(), eb = b.raw(), ec = c.raw(), ed = d.raw();
  DQFX_FUZZ_CHECK((a + b).raw() == dqfx_ref::clamp_to<raw>(ea + eb));
  DQFX_FUZZ_CHECK((a - b).raw() == dqfx_ref::clamp_to<raw>(ea - eb));
  DQFX_FUZZ_CHECK((-a).raw() == dqfx_ref::clamp_to<raw>(-ea));
  DQFX_FUZZ_CHECK(dqfx::abs(a).raw() == dqfx_ref::clamp_to<raw>(ea < 0 ? -ea : ea));
  DQFX_FUZZ_CHECK((a * b).raw() == rounded_saturated<T>(ea * eb, bits));
  DQFX_FUZZ_CHECK(dqfx::sum_of_products(a, b, c, d).raw() == rounded_saturated<T>(ea * eb + ec * ed, bits));
  DQFX_FUZZ_CHECK(dqfx::difference_of_products(a, b, c, d).raw() ==
                  rounded_saturated<T>(ea * eb - ec * ed, bits));
  DQFX_FUZZ_CHECK((a < b) == (ea < eb) && (a == b) == (ea == eb));
}

/// A chain of products in an accumulator: the wide sum saturates at the wide type's
/// limits (never wraps), then the result rounds once and saturates once.
template <class T>
void accumulation(byte_reader& in) {
  using wide = typename T::wide_type;
  constexpr int bits = T::fraction_bits;
  const bool with_start = in.flag();
  const T start = in.any<T>();
  dqfx::accumulator<T> acc = with_start ? dqfx::accumulator<T>{start} : dqfx::accumulator<T>{};
  int128 model = with_start ? int128{start.raw()} * dqfx_ref::pow2(bits) : 0;
  const unsigned n = in.choice(9);
  for (unsigned i = 0; i < n; ++i) {
    const bool subtract = in.flag();
    const T a = in.any<T>(), b = in.any<T>();
    const int128 p = int128{a.raw()} * int128{b.raw()};
    if (subtract) {
      acc.subtract_product(a, b);
    } else {
      acc.add_product(a, b);
    }
    model = dqfx_ref::clamp_to<wide>(subtract ? model - p : model + p);
  }
  DQFX_FUZZ_CHECK(acc.result().raw() == rounded_saturated<T>(model, bits));
}

/// gain<T>: the stored constant is within its documented distance of k, and x * g is
/// the stored product rounded once and saturated.
template <class T>
void gains(byte_reader& in) {
  const double k = in.flag() ? in.any_double() : std::ldexp(static_cast<double>(in.unit<double>()), static_cast<int>(in.choice(40)) - 8);
  const auto g = dqfx::gain<T>::from_double(k);
  const T x = in.any<T>();
  const int s = g.shift();
  DQFX_FUZZ_CHECK(s >= 0 && s <= 30);
  const int128 m = g.mantissa();
  DQFX_FUZZ_CHECK((x * g).raw() == rounded_saturated<T>(int128{x.raw()} * m, 31 - s));
  DQFX_FUZZ_CHECK((g * x) == (x * g));
  if (std::isnan(k)) {
    DQFX_FUZZ_CHECK(m == 0);
  } else if (std::fabs(k) <= 1073741823.5) {
    // Up to the largest constant held, (2^31 - 1) * 2^-1: |stored - k| <= 2^(s-32), half
    // a mantissa step. (Beyond it the constant saturates, a counted event.)
    const long double stored = std::ldexp(static_cast<long double>(m), s - 31);
    DQFX_FUZZ_CHECK(std::fabs(stored - static_cast<long double>(k)) <= std::ldexp(1.0L, s - 32));
  }
}

/// from_double: NaN to zero, round half away from zero, saturate.
template <class T>
void conversion(byte_reader& in) {
  const double v = in.flag() ? in.any_double() : in.unit<double>() * 1.5;
  const T x = dqfx::from_double<T>(v);
  if constexpr (dqfx::is_fixed_v<T>) {
    raw_of<T> expected = 0;
    if (!std::isnan(v)) {
      const long double scaled = std::ldexp(static_cast<long double>(v), T::fraction_bits);
      const long double hi = static_cast<long double>(std::numeric_limits<raw_of<T>>::max());
      const long double lo = static_cast<long double>(std::numeric_limits<raw_of<T>>::min());
      // roundl: half away from zero (ISO/IEC 9899:2011, 7.12.9.6).
      const long double r = scaled > hi + 1 ? hi + 1 : (scaled < lo - 1 ? lo - 1 : std::roundl(scaled));
      expected = static_cast<raw_of<T>>(r > hi ? hi : (r < lo ? lo : r));
    }
    DQFX_FUZZ_CHECK(x.raw() == expected);
    DQFX_FUZZ_CHECK(dqfx::to_double(x) == std::ldexp(static_cast<double>(x.raw()), -T::fraction_bits));
  } else {
    if (std::isnan(v)) {
      DQFX_FUZZ_CHECK(x == T{0});
    } else if (v > static_cast<double>(std::numeric_limits<T>::max())) {
      DQFX_FUZZ_CHECK(x == std::numeric_limits<T>::max());
    } else if (v < static_cast<double>(std::numeric_limits<T>::lowest())) {
      DQFX_FUZZ_CHECK(x == std::numeric_limits<T>::lowest());
    } else {
      DQFX_FUZZ_CHECK(x == static_cast<T>(v));
    }
  }
}

/// Binary angles: sums and differences wrap exactly; from_turns never fails.
template <class T>
void angles(byte_reader& in) {
  const dqfx::angle a = in.angle(), b = in.angle();
  DQFX_FUZZ_CHECK(static_cast<std::uint32_t>((a + b).raw()) == static_cast<std::uint32_t>(a.raw() + b.raw()));
  const std::int32_t d = dqfx::difference(b, a);
  DQFX_FUZZ_CHECK((a + dqfx::angle::from_raw(static_cast<std::uint32_t>(static_cast<std::int64_t>(d) & 0xFFFFFFFF))) == b);
  DQFX_FUZZ_CHECK(dqfx::electrical(a, 1) == a);
  const dqfx::angle t = dqfx::angle::from_turns(in.any_double());
  static_cast<void>(t);

  // angle_rate: the step is the speed times the scale, rounded, and advance adds it.
  const double base = std::ldexp(static_cast<double>(in.unit<double>()), static_cast<int>(in.choice(16)));
  const double sample = 1.0 / 20000.0;
  const auto rate = dqfx::angle_rate<T>::from_base(base, sample);
  const T speed = in.mostly_unit<T>();
  const std::int32_t step = rate.step_raw(speed);
  DQFX_FUZZ_CHECK(dqfx::difference(rate.advance(a, speed), a) == step);
  if (!is_finite(speed) && speed != speed) DQFX_FUZZ_CHECK(step == 0);
}

template <class T>
void run(byte_reader& in) {
  if constexpr (dqfx::is_fixed_v<T>) {
    switch (in.choice(5)) {
      case 0: arithmetic<T>(in); break;
      case 1: accumulation<T>(in); break;
      case 2: gains<T>(in); break;
      case 3: conversion<T>(in); break;
      default: angles<T>(in); break;
    }
  } else {
    if (in.flag()) {
      conversion<T>(in);
    } else {
      angles<T>(in);
    }
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  with_type(in.choice(4), [&](auto type) { run<decltype(type)>(in); });
  return 0;
}
