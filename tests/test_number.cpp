// SPDX-License-Identifier: MIT
// The number interface over q15, q31, float and double: traits, from_double/to_double,
// gain<T>, accumulator<T>, sum_of_products, difference_of_products. Fixed-point results
// are compared with an exact 128-bit integer reference; conversions with the C library's
// long double rounding; float/double results with the standard rounding-error model.

#include <doctest/doctest.h>

#include <cfloat>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <random>
#include <type_traits>
#include <vector>

#include "dqfx/number.hpp"
#include "reference/exact_integer.hpp"

using dqfx::q15;
using dqfx::q31;
using dqfx_ref::int128;

// The long double reference below needs a 64-bit significand (x86 extended precision).
static_assert(std::numeric_limits<long double>::digits >= 64, "tests need 80-bit long double");

namespace {

template <class T> using raw_t = typename T::raw_type;
constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();
constexpr double infinity = std::numeric_limits<double>::infinity();

template <class T> T raw(std::int64_t r) { return T::from_raw(static_cast<raw_t<T>>(r)); }

/// Reference conversion to a fixed-point raw value: NaN -> 0, otherwise v * 2^f rounded
/// half away from zero by roundl (ISO/IEC 9899:2011, 7.12.9.6) and clamped to the range.
/// v * 2^f is exact in long double for every finite double.
template <class T>
raw_t<T> reference_from_double(double v) {
  if (std::isnan(v)) return 0;
  const long double r = std::roundl(std::ldexp(static_cast<long double>(v), T::fraction_bits));
  if (r >= static_cast<long double>(std::numeric_limits<raw_t<T>>::max()))
    return std::numeric_limits<raw_t<T>>::max();
  if (r <= static_cast<long double>(std::numeric_limits<raw_t<T>>::min()))
    return std::numeric_limits<raw_t<T>>::min();
  return static_cast<raw_t<T>>(r);
}

double from_bits(std::uint64_t bits) {
  double d;
  std::memcpy(&d, &bits, sizeof d);
  return d;
}

template <class T>
std::vector<raw_t<T>> corner_raws() {
  constexpr std::int64_t lo = std::numeric_limits<raw_t<T>>::min();
  constexpr std::int64_t hi = std::numeric_limits<raw_t<T>>::max();
  const std::int64_t v[] = {lo, lo + 1, lo / 2 - 1, lo / 2, lo / 2 + 1, -3, -1, 0,
                            1,  2,      hi / 2,     hi / 2 + 1, hi / 2 + 2, hi - 1, hi};
  std::vector<raw_t<T>> out;
  for (std::int64_t x : v) out.push_back(static_cast<raw_t<T>>(x));
  return out;
}

template <class T>
raw_t<T> random_raw(std::mt19937_64& rng) {
  return static_cast<raw_t<T>>(static_cast<std::int64_t>(rng()) >> (64 - 8 * sizeof(raw_t<T>)));
}

// Exact a*b + c*d (sign -1: a*b - c*d) rounded once, ties toward +infinity, clamped.
template <class T>
raw_t<T> exact_products(int128 a, int128 b, int128 c, int128 d, int sign) {
  return dqfx_ref::clamp_to<raw_t<T>>(
      dqfx_ref::round_div_half_up(a * b + sign * c * d, dqfx_ref::pow2(T::fraction_bits)));
}

}  // namespace

TEST_CASE("number_traits: limits, lsb and names") {
  using dqfx::number_traits;
  static_assert(number_traits<q15>::is_fixed && number_traits<q31>::is_fixed);
  static_assert(!number_traits<float>::is_fixed && !number_traits<double>::is_fixed);
  static_assert(number_traits<q15>::lsb == 1.0 / 32768.0);
  static_assert(number_traits<q31>::lsb == 1.0 / 2147483648.0);
  static_assert(number_traits<float>::lsb == FLT_EPSILON);
  static_assert(number_traits<double>::lsb == DBL_EPSILON);
  static_assert(number_traits<q15>::max() == q15::max() && number_traits<q31>::lowest() == q31::lowest());
  static_assert(number_traits<float>::max() == FLT_MAX && number_traits<double>::lowest() == -DBL_MAX);
  static_assert(dqfx::is_number_v<q15> && dqfx::is_number_v<q31> && dqfx::is_number_v<float> &&
                dqfx::is_number_v<double>);
  static_assert(!dqfx::is_number_v<int> && !dqfx::is_number_v<long double>);
  CHECK(std::strcmp(number_traits<q15>::name, "q15") == 0);
  CHECK(std::strcmp(number_traits<q31>::name, "q31") == 0);
  CHECK(std::strcmp(number_traits<float>::name, "float") == 0);
  CHECK(std::strcmp(number_traits<double>::name, "double") == 0);
}

TEST_CASE("from_double: constant expressions") {
  using dqfx::from_double;
  static_assert(from_double<q15>(0.5).raw() == 16384);
  static_assert(from_double<q15>(-1.0) == q15::lowest());
  static_assert(from_double<q15>(1.0) == q15::max());  // +1 is out of range: saturates
  static_assert(from_double<q31>(-0.25).raw() == -(1 << 29));
  static_assert(from_double<q15>(not_a_number).raw() == 0);
  static_assert(from_double<q31>(infinity) == q31::max() && from_double<q31>(-infinity) == q31::lowest());
  static_assert(from_double<float>(0.1) == 0.1f && from_double<double>(0.1) == 0.1);
  static_assert(dqfx::to_double(q15::from_raw(-16384)) == -0.5);
  static_assert(dqfx::to_double(q31::lowest()) == -1.0);
  static_assert(noexcept(from_double<q15>(0.0)) && noexcept(dqfx::to_double(q15{})));
}

TEST_CASE_TEMPLATE("from_double: rounding to nearest, ties away from zero", T, q15, q31) {
  using dqfx::from_double;
  const double lsb = dqfx::number_traits<T>::lsb;
  CHECK(from_double<T>(0.5 * lsb).raw() == 1);
  CHECK(from_double<T>(-0.5 * lsb).raw() == -1);
  CHECK(from_double<T>(1.5 * lsb).raw() == 2);
  CHECK(from_double<T>(2.5 * lsb).raw() == 3);  // away from zero, not to even
  CHECK(from_double<T>(-2.5 * lsb).raw() == -3);
  // The largest double below half an LSB rounds down (a naive floor(x + 0.5) gets 1).
  CHECK(from_double<T>(std::nextafter(0.5, 0.0) * lsb).raw() == 0);
  CHECK(from_double<T>(-std::nextafter(0.5, 0.0) * lsb).raw() == 0);
  CHECK(from_double<T>(std::nextafter(0.5, 1.0) * lsb).raw() == 1);
  CHECK(from_double<T>(-0.0).raw() == 0);
  CHECK(from_double<T>(std::numeric_limits<double>::denorm_min()).raw() == 0);
  // Saturation: values at or beyond max + 1/2 LSB, and below lowest - 1/2 LSB.
  CHECK(from_double<T>(1.0 - 0.5 * lsb) == T::max());
  CHECK(from_double<T>(1.0 - 0.75 * lsb) == T::max());
  CHECK(from_double<T>(1.0 - 1.5 * lsb) == T::max());  // a tie, away from zero
  CHECK(from_double<T>(1.0 - 1.75 * lsb).raw() == T::max().raw() - 1);
  CHECK(from_double<T>(-1.0 - 0.5 * lsb) == T::lowest());
  CHECK(from_double<T>(-1.0 - 0.25 * lsb) == T::lowest());
  CHECK(from_double<T>(1e300) == T::max());
  CHECK(from_double<T>(-1e300) == T::lowest());
  CHECK(from_double<T>(DBL_MAX) == T::max());
  CHECK(from_double<T>(infinity) == T::max());
  CHECK(from_double<T>(-infinity) == T::lowest());
  CHECK(from_double<T>(not_a_number).raw() == 0);
  CHECK(from_double<T>(-not_a_number).raw() == 0);
}

TEST_CASE("from_double and to_double: q15 round trip, all 65536 values") {
  int wrong = 0;
  for (std::int32_t r = -32768; r <= 32767; ++r) {
    const q15 x = raw<q15>(r);
    const double exact = std::ldexp(static_cast<double>(r), -15);
    wrong += int{dqfx::to_double(x) != exact};
    wrong += int{dqfx::from_double<q15>(exact) != x};
    // Just inside the rounding interval of r on either side still gives r.
    wrong += int{dqfx::from_double<q15>(exact + 0.4999 / 32768.0) != x && r != 32767};
    wrong += int{dqfx::from_double<q15>(exact - 0.4999 / 32768.0) != x};
  }
  CHECK(wrong == 0);
}

TEST_CASE_TEMPLATE("from_double: a million random doubles of every kind against roundl", T, q15, q31) {
  // Uniform values around the range, and raw 64-bit patterns (every exponent, NaNs,
  // infinities, subnormals).
  std::mt19937_64 rng(T::fraction_bits == 15 ? 0x9151u : 0x9131u);
  std::uniform_real_distribution<double> around(-1.25, 1.25);
  long wrong = 0;
  for (int i = 0; i < 1'000'000; ++i) {
    const double v = (i % 2 == 0) ? around(rng) : from_bits(rng());
    wrong += int{dqfx::from_double<T>(v).raw() != reference_from_double<T>(v)};
    if (i % 2 == 0) {
      const T x = T::from_raw(random_raw<T>(rng));
      wrong += int{dqfx::to_double(x) != std::ldexp(static_cast<double>(x.raw()), -T::fraction_bits)};
      wrong += int{dqfx::from_double<T>(dqfx::to_double(x)) != x};
    }
  }
  CHECK(wrong == 0);
}

TEST_CASE_TEMPLATE("from_double: float and double", T, float, double) {
  using dqfx::from_double;
  constexpr double hi = static_cast<double>(std::numeric_limits<T>::max());
  // In range: the IEEE conversion (round to nearest even), bit for bit.
  std::mt19937_64 rng(0xf10a7);
  long wrong = 0;
  for (int i = 0; i < 100'000; ++i) {
    const double v = from_bits(rng());
    if (std::isnan(v) || std::fabs(v) > hi) continue;
    const T r = from_double<T>(v);
    wrong += int{r != static_cast<T>(v)};
    wrong += int{dqfx::to_double(r) != static_cast<double>(static_cast<T>(v))};
  }
  CHECK(wrong == 0);
  // Out of range and infinities saturate to the largest finite value; NaN gives zero.
  CHECK(from_double<T>(infinity) == std::numeric_limits<T>::max());
  CHECK(from_double<T>(-infinity) == std::numeric_limits<T>::lowest());
  CHECK(from_double<T>(not_a_number) == T{0});
  CHECK(!std::signbit(from_double<T>(not_a_number)));
  if constexpr (std::is_same_v<T, float>) {
    CHECK(from_double<float>(1e39) == FLT_MAX);
    CHECK(from_double<float>(-1e300) == -FLT_MAX);
    CHECK(from_double<float>(1e-50) == 0.0f);  // underflow is not saturation
  }
}

// gain<T>: the constants of a current loop and a few awkward ones. Bounds, derived in
// DEVELOPERS.md terms: the constant is stored as m * 2^(s-31) with the smallest shift s
// that fits, so |stored - v| <= 2^(s-32) <= |v| * 2^-31 (for s > 0, |m| >= 2^30) and
// <= 2^-32 for |v| < 1; then x * g is rounded once: |result - x*v| <= 1/2 LSB + |x| * |stored - v|.
const double gain_constants[] = {
    1.1547005383792515,   // 2/sqrt(3) (Clarke, amplitude-invariant)
    0.57735026918962584,  // 1/sqrt(3)
    0.86602540378443865,  // sqrt(3)/2
    40.0,  -3.5,  0.5,  -0.5,  1.0,  -1.0,  0.999,  1e-3,  -2.5e-7,  1e-9,  3e-10,
    1000.0, -12345.678, 1073741823.0, -1073741824.0, 0.0};

TEST_CASE_TEMPLATE("gain: stored constant within its 2^-31 relative quantisation", T, q15, q31) {
  for (double v : gain_constants) {
    CAPTURE(v);
    const auto g = dqfx::gain<T>::from_double(v);
    const int s = g.shift();
    const std::int64_t m = g.mantissa();
    CHECK(s >= 0);
    CHECK(s <= 30);
    if (s > 0) CHECK((m >= (std::int64_t{1} << 30) || m <= -(std::int64_t{1} << 30)));  // smallest shift
    const long double stored = std::ldexp(static_cast<long double>(m), s - 31);
    CHECK(static_cast<long double>(g.to_double()) == stored);
    const long double err = std::fabs(stored - static_cast<long double>(v));
    CHECK(err <= std::ldexp(1.0L, s - 32));
    CHECK(err <= std::max(std::fabs(static_cast<long double>(v)) * std::ldexp(1.0L + std::ldexp(1.0L, -31), -31),
                          std::ldexp(1.0L, -32)));
  }
  static_assert(dqfx::gain<T>::from_double(2.0).shift() == 2);
  static_assert(dqfx::gain<T>::from_double(2.0).mantissa() == (1 << 30));
  static_assert(dqfx::gain<T>::from_double(0.0).mantissa() == 0);
  static_assert(dqfx::gain<T>::from_double(not_a_number).mantissa() == 0);  // NaN: a zero gain
  // Beyond +/-2^30 the constant saturates to the largest representable one.
  CHECK(dqfx::gain<T>::from_double(1e12).to_double() == std::ldexp(2147483647.0, -1));
  CHECK(dqfx::gain<T>::from_double(-1e12).to_double() == -1073741824.0);
}

TEST_CASE_TEMPLATE("gain: x * g rounded once and saturated, against the exact product", T, q15, q31) {
  const double lsb = dqfx::number_traits<T>::lsb;
  std::mt19937_64 rng(0x6a17);
  for (double v : gain_constants) {
    CAPTURE(v);
    const auto g = dqfx::gain<T>::from_double(v);
    const int128 m = g.mantissa();
    const int128 divisor = dqfx_ref::pow2(31 - g.shift());
    const long double quantisation = std::ldexp(1.0L, g.shift() - 32);
    long wrong = 0;
    long double worst_lsb = 0;  // |result - x*v| in LSB, where x*v is in range
    auto check_one = [&](raw_t<T> xr) {
      const T x = T::from_raw(xr);
      const T r = x * g;
      wrong += int{r.raw() != dqfx_ref::clamp_to<raw_t<T>>(dqfx_ref::round_div_half_up(xr * m, divisor))};
      wrong += int{(g * x) != r};
      const long double exact = static_cast<long double>(dqfx::to_double(x)) * static_cast<long double>(v);
      if (exact < -1.0L || exact >= 1.0L - static_cast<long double>(lsb)) return;  // saturates
      const long double e = std::fabs(static_cast<long double>(dqfx::to_double(r)) - exact);
      const long double bound = 0.5L * static_cast<long double>(lsb) +
                                std::fabs(static_cast<long double>(dqfx::to_double(x))) * quantisation;
      // exact is x*v in long double: relative error 2^-64, covered by the 2^-60 slack.
      wrong += int{e > bound * (1.0L + std::ldexp(1.0L, -60))};
      worst_lsb = std::max(worst_lsb, e / static_cast<long double>(lsb));
    };
    if constexpr (std::is_same_v<T, q15>) {
      for (std::int32_t xr = -32768; xr <= 32767; ++xr) check_one(static_cast<raw_t<T>>(xr));
    } else {
      for (raw_t<T> xr : corner_raws<T>()) check_one(xr);
      for (int i = 0; i < 200'000; ++i) check_one(random_raw<T>(rng));
    }
    CHECK(wrong == 0);
    // In range |x v| < 1, so |x| * quantisation < 2^-31 (times 1 + 2^-31): at most
    // 1/2 + 2^-16 LSB for q15 and 1/2 + 1 LSB for q31.
    CHECK(worst_lsb <= 0.5L + std::ldexp(1.0L + std::ldexp(1.0L, -30), -31) / static_cast<long double>(lsb));
  }
}

TEST_CASE_TEMPLATE("gain: saturation and the most negative value", T, q15, q31) {
  const auto forty = dqfx::gain<T>::from_double(40.0);
  CHECK(dqfx::from_double<T>(0.5) * forty == T::max());
  CHECK(dqfx::from_double<T>(-0.5) * forty == T::lowest());
  CHECK(T::lowest() * forty == T::lowest());
  CHECK(T::max() * forty == T::max());
  const auto minus_one = dqfx::gain<T>::from_double(-1.0);
  CHECK(T::lowest() * minus_one == T::max());  // -(-1) saturates
  CHECK(T::max() * minus_one == T::from_raw(static_cast<raw_t<T>>(T::lowest().raw() + 1)));
  CHECK(T::lowest() * dqfx::gain<T>::from_double(1.0) == T::lowest());
  const auto tiny = dqfx::gain<T>::from_double(1e-12);
  CHECK(T::lowest() * tiny == T{});  // below half an LSB of the result
  CHECK(dqfx::from_double<T>(0.25) * dqfx::gain<T>::from_double(4.0 - 1e-9) == T::max());
}

TEST_CASE_TEMPLATE("gain: float and double round the constant and the product", T, float, double) {
  constexpr long double u = std::numeric_limits<T>::epsilon() / 2;  // unit roundoff
  std::mt19937_64 rng(0x6a18);
  std::uniform_real_distribution<T> dist(-2, 2);
  long wrong = 0;
  for (double v : gain_constants) {
    const auto g = dqfx::gain<T>::from_double(v);
    CHECK(g.to_double() == static_cast<double>(static_cast<T>(v)));
    for (int i = 0; i < 20'000; ++i) {
      const T x = dist(rng);
      const T r = x * g;
      wrong += int{r != x * static_cast<T>(v) || (g * x) != r};
      // Two roundings (constant, product): |r - x v| <= (2u + u^2) |x v|
      // (the standard model of floating-point arithmetic: Higham, Accuracy and Stability of
      // Numerical Algorithms, 2nd ed. 2002, section 2.2; section number recalled from memory).
      const long double exact = static_cast<long double>(x) * static_cast<long double>(v);
      wrong += int{std::fabs(static_cast<long double>(r) - exact) > (2 * u + u * u) * std::fabs(exact)};
    }
  }
  CHECK(wrong == 0);
}

TEST_CASE_TEMPLATE("sum_of_products and difference_of_products: one rounding, all corners", T, q15, q31) {
  const auto corners = corner_raws<T>();
  long wrong = 0;
  for (raw_t<T> a : corners)
    for (raw_t<T> b : corners)
      for (raw_t<T> c : corners)
        for (raw_t<T> d : corners) {
          const T A = T::from_raw(a), B = T::from_raw(b), C = T::from_raw(c), D = T::from_raw(d);
          wrong += int{dqfx::sum_of_products(A, B, C, D).raw() != exact_products<T>(a, b, c, d, 1)};
          wrong += int{dqfx::difference_of_products(A, B, C, D).raw() != exact_products<T>(a, b, c, d, -1)};
        }
  CHECK(wrong == 0);
  // (-1)(-1) + (-1)(-1) = 2: the only case whose wide sum leaves (-2, 2); still max().
  CHECK(dqfx::sum_of_products(T::lowest(), T::lowest(), T::lowest(), T::lowest()) == T::max());
  CHECK(dqfx::difference_of_products(T::lowest(), T::lowest(), T::lowest(), T::max()) == T::max());
  CHECK(dqfx::difference_of_products(T::lowest(), T::max(), T::lowest(), T::lowest()) == T::lowest());
}

TEST_CASE_TEMPLATE("sum_of_products and difference_of_products: random sets", T, q15, q31) {
  std::mt19937_64 rng(0xacc0 + T::fraction_bits);
  long wrong = 0;
  for (int i = 0; i < 2'000'000; ++i) {
    const raw_t<T> a = random_raw<T>(rng), b = random_raw<T>(rng), c = random_raw<T>(rng),
                   d = random_raw<T>(rng);
    const T A = T::from_raw(a), B = T::from_raw(b), C = T::from_raw(c), D = T::from_raw(d);
    wrong += int{dqfx::sum_of_products(A, B, C, D).raw() != exact_products<T>(a, b, c, d, 1)};
    wrong += int{dqfx::difference_of_products(A, B, C, D).raw() != exact_products<T>(a, b, c, d, -1)};
    // Against the unrounded value: within 1/2 LSB whenever it is in range.
    const int128 exact2 = int128{a} * b + int128{c} * d;  // at 2^-2f
    const int128 r = dqfx::sum_of_products(A, B, C, D).raw();
    const int128 diff = r * dqfx_ref::pow2(T::fraction_bits) - exact2;  // at 2^-2f
    const int128 half = dqfx_ref::pow2(T::fraction_bits - 1);
    if (!dqfx_ref::out_of_range<raw_t<T>>(dqfx_ref::round_div_half_up(exact2, 2 * half))) {
      wrong += int{diff > half || diff < -half};
    }
  }
  CHECK(wrong == 0);
  static_assert(dqfx::sum_of_products(q15::from_raw(16384), q15::from_raw(16384), q15::from_raw(-16384),
                                      q15::from_raw(8192))
                    .raw() == 4096);
}

TEST_CASE_TEMPLATE("accumulator: start value and several products, one rounding", T, q15, q31) {
  // Partial sums stay within (-2, 2): exact until the final round and saturate.
  std::mt19937_64 rng(0xacc1 + T::fraction_bits);
  long wrong = 0;
  for (int i = 0; i < 500'000; ++i) {
    const raw_t<T> s = random_raw<T>(rng);
    raw_t<T> p[6];
    for (auto& x : p) x = static_cast<raw_t<T>>(random_raw<T>(rng) / 2);  // |x| <= 1/2
    dqfx::accumulator<T> acc{T::from_raw(s)};
    acc.add_product(T::from_raw(p[0]), T::from_raw(p[1]))
        .subtract_product(T::from_raw(p[2]), T::from_raw(p[3]))
        .add_product(T::from_raw(p[4]), T::from_raw(p[5]));
    const int128 exact = int128{s} * dqfx_ref::pow2(T::fraction_bits) + int128{p[0]} * p[1] -
                         int128{p[2]} * p[3] + int128{p[4]} * p[5];
    const raw_t<T> expected = dqfx_ref::clamp_to<raw_t<T>>(
        dqfx_ref::round_div_half_up(exact, dqfx_ref::pow2(T::fraction_bits)));
    wrong += int{acc.result().raw() != expected};
  }
  CHECK(wrong == 0);
  CHECK(dqfx::accumulator<T>{}.result() == T{});
  CHECK(dqfx::accumulator<T>{T::lowest()}.result() == T::lowest());
  // subtract_product with the most negative value: -( (-1)(-1) ) = -1, exact.
  CHECK(dqfx::accumulator<T>{}.subtract_product(T::lowest(), T::lowest()).result() == T::lowest());
  // Beyond the wide range the sum saturates instead of wrapping: four times (-1)(-1).
  dqfx::accumulator<T> big;
  for (int i = 0; i < 4; ++i) big.add_product(T::lowest(), T::lowest());
  CHECK(big.result() == T::max());
  dqfx::accumulator<T> small{T::lowest()};
  for (int i = 0; i < 4; ++i) small.add_product(T::lowest(), T::max());
  CHECK(small.result() == T::lowest());
}

TEST_CASE_TEMPLATE("sum_of_products, difference_of_products, accumulator: float and double", T, float, double) {
  // Dot product of length two: |r - exact| <= gamma_2 (|ab| + |cd|), gamma_n = n u/(1 - n u)
  // (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, section 3.1 on
  // inner products; section number recalled from memory).
  constexpr long double u = std::numeric_limits<T>::epsilon() / 2;
  constexpr long double gamma2 = 2 * u / (1 - 2 * u);
  std::mt19937_64 rng(0xacc2);
  std::uniform_real_distribution<T> dist(-1, 1);
  long wrong = 0;
  for (int i = 0; i < 200'000; ++i) {
    const T a = dist(rng), b = dist(rng), c = dist(rng), d = dist(rng);
    const long double ab = static_cast<long double>(a) * b, cd = static_cast<long double>(c) * d;
    // For double, ab and cd in long double carry 2^-64 relative error: covered by the slack.
    const long double bound = gamma2 * (std::fabs(ab) + std::fabs(cd)) * (1 + std::ldexp(1.0L, -10));
    wrong += int{std::fabs(dqfx::sum_of_products(a, b, c, d) - (ab + cd)) > bound};
    wrong += int{std::fabs(dqfx::difference_of_products(a, b, c, d) - (ab - cd)) > bound};
    wrong += int{dqfx::accumulator<T>{a}.add_product(b, c).subtract_product(d, a).result() != (a + b * c) - d * a};
  }
  CHECK(wrong == 0);
  static_assert(dqfx::sum_of_products(0.5, 0.5, 0.25, 2.0) == 0.75);
}

TEST_CASE_TEMPLATE("abs and the operators: float and double are plain IEEE arithmetic", T, float, double) {
  static_assert(dqfx::abs(T(-2.5)) == T(2.5) && dqfx::abs(T(2.5)) == T(2.5));
  static_assert(noexcept(dqfx::abs(T{})));
  CHECK(dqfx::abs(std::numeric_limits<T>::lowest()) == std::numeric_limits<T>::max());
  CHECK(dqfx::abs(-std::numeric_limits<T>::infinity()) == std::numeric_limits<T>::infinity());
  CHECK(dqfx::abs(T(-0.0)) == T{0});
  CHECK(std::isnan(dqfx::abs(std::numeric_limits<T>::quiet_NaN())));
  // No saturation for float and double: overflow gives infinity, as IEEE 754 defines.
  CHECK(std::isinf(std::numeric_limits<T>::max() + std::numeric_limits<T>::max()));
  CHECK(dqfx::from_double<T>(0.5) * dqfx::from_double<T>(0.5) == T(0.25));
}

// convert<To>(From): references written from the definitions. q31 -> q15 is the raw value
// over 2^16 rounded half away from zero by roundl (ISO/IEC 9899:2011, 7.12.9.6), clamped;
// fixed -> float is the exact value rounded to float by the compiler's long double ->
// float conversion, which rounds to nearest, ties to even (IEEE 754-2008 default rounding;
// section numbers recalled from memory, so not given).
TEST_CASE("convert: q15 -> q31 is exact for all 65536 values, and back is the identity") {
  int wrong = 0;
  for (std::int32_t r = -32768; r <= 32767; ++r) {
    const q15 x = raw<q15>(r);
    const q31 wide = dqfx::convert<q31>(x);
    wrong += wide.raw() != r * 65536 ? 1 : 0;
    wrong += dqfx::convert<q15>(wide).raw() != r ? 1 : 0;
    wrong += dqfx::convert<double>(x) != static_cast<double>(r) / 32768.0 ? 1 : 0;
    wrong += dqfx::convert<float>(x) != static_cast<float>(r) / 32768.0f ? 1 : 0;
  }
  CHECK(wrong == 0);
}

TEST_CASE("convert: q31 -> q15 rounds to nearest, ties away from zero, and saturates") {
  std::mt19937_64 rng(15);
  std::vector<std::int32_t> raws;
  for (auto r : corner_raws<q31>()) raws.push_back(r);
  for (std::int64_t t = -32768; t <= 32767; t += 257) {  // ties and their neighbours
    for (std::int64_t d : {-1, 0, 1}) {
      const std::int64_t r = t * 65536 + 32768 + d;
      if (r >= INT32_MIN && r <= INT32_MAX) raws.push_back(static_cast<std::int32_t>(r));
      const std::int64_t n = t * 65536 - 32768 + d;
      if (n >= INT32_MIN && n <= INT32_MAX) raws.push_back(static_cast<std::int32_t>(n));
    }
  }
  for (int i = 0; i < 1000000; ++i) raws.push_back(random_raw<q31>(rng));
  int wrong = 0, differs_from_double = 0;
  for (const std::int32_t r : raws) {
    const long double q = std::roundl(static_cast<long double>(r) / 65536.0L);
    const long double clamped = q > 32767 ? 32767 : (q < -32768 ? -32768 : q);
    const q15 got = dqfx::convert<q15>(raw<q31>(r));
    wrong += got.raw() != static_cast<std::int16_t>(clamped) ? 1 : 0;
    differs_from_double += got.raw() != dqfx::from_double<q15>(dqfx::to_double(raw<q31>(r))).raw() ? 1 : 0;
  }
  CHECK(wrong == 0);
  CHECK(differs_from_double == 0);
  CHECK(dqfx::convert<q15>(q31::max()).raw() == 32767);
  CHECK(dqfx::convert<q15>(q31::lowest()).raw() == -32768);
}

TEST_CASE_TEMPLATE("convert: q31 -> float and double, one rounding to nearest even", T, float, double) {
  std::mt19937_64 rng(31);
  int wrong = 0;
  auto check = [&](std::int32_t r) {
    const long double exact = static_cast<long double>(r) / 2147483648.0L;
    wrong += dqfx::convert<T>(raw<q31>(r)) != static_cast<T>(exact) ? 1 : 0;
  };
  for (auto r : corner_raws<q31>()) check(r);
  for (std::int32_t r : {0x00FFFFFF, 0x01000001, 0x7FFFFFBF, 0x7FFFFFC0, 0x40000040, 0x40000080, 0x400000C0})
    check(r);  // float ties: 25 significant bits with the last one set
  for (int i = 0; i < 1000000; ++i) check(random_raw<q31>(rng));
  CHECK(wrong == 0);
}

TEST_CASE("convert: float and double to fixed point and to each other follow from_double") {
  const double values[] = {0.0, -0.0, 0.25, -1.0, 0.999999, 1.0, -1.5, 1e-12, 3e38, 1e39, -1e300, infinity, not_a_number};
  int wrong = 0;
  for (const double v : values) {
    wrong += dqfx::convert<q15>(v).raw() != dqfx::from_double<q15>(v).raw() ? 1 : 0;
    wrong += dqfx::convert<q31>(v).raw() != dqfx::from_double<q31>(v).raw() ? 1 : 0;
    const float f = dqfx::convert<float>(v);
    const float expected = dqfx::from_double<float>(v);
    wrong += std::memcmp(&f, &expected, sizeof f) != 0 ? 1 : 0;
    if (!std::isnan(v) && std::fabs(v) <= FLT_MAX)
      wrong += dqfx::convert<double>(static_cast<float>(v)) != static_cast<double>(static_cast<float>(v)) ? 1 : 0;
  }
  CHECK(wrong == 0);
}

TEST_CASE("convert is a constant expression") {
  static_assert(dqfx::convert<q31>(q15::from_raw(-32768)).raw() == INT32_MIN);
  static_assert(dqfx::convert<q15>(q31::from_raw(0x8000)).raw() == 1);    // half: away from zero
  static_assert(dqfx::convert<q15>(q31::from_raw(-0x8000)).raw() == -1);
  static_assert(dqfx::convert<q15>(q31::from_raw(0x7FFF)).raw() == 0);
  static_assert(dqfx::convert<double>(q15::from_raw(16384)) == 0.5);
  CHECK(true);
}

TEST_CASE_TEMPLATE("checked_from_double: NaN and infinities are reported, with value 0", T, q15, q31, float, double) {
  for (const double v : {not_a_number, -not_a_number, infinity, -infinity}) {
    const dqfx::checked<T> c = dqfx::checked_from_double<T>(v);
    CHECK(c.status == dqfx::conversion_status::not_finite);
    CHECK_FALSE(c.ok());
    CHECK(dqfx::to_double(c.value) == 0.0);
  }
}

TEST_CASE_TEMPLATE("checked_from_double: the range edge is where from_double starts to saturate", T, q15, q31) {
  const double lsb = dqfx::number_traits<T>::lsb;
  const double max = dqfx::to_double(T::max());
  struct expectation {
    double v;
    bool ok;
  };
  // Within half an LSB beyond max() and lowest() the value still rounds into the range,
  // except the ties, which round away from zero and out.
  const expectation cases[] = {{0.0, true},
                               {max, true},
                               {max + lsb / 4, true},
                               {max + lsb / 2, false},
                               {1.0, false},
                               {-1.0, true},
                               {-1.0 - lsb / 4, true},
                               {-1.0 - lsb / 2, false},
                               {-2.0, false},
                               {1e300, false}};
  for (const auto& e : cases) {
    const dqfx::checked<T> c = dqfx::checked_from_double<T>(e.v);
    CAPTURE(e.v);
    CHECK(c.ok() == e.ok);
    CHECK(c.status == (e.ok ? dqfx::conversion_status::ok : dqfx::conversion_status::out_of_range));
    CHECK(c.value.raw() == reference_from_double<T>(e.v));
  }
}

TEST_CASE("checked_from_double: float and double ranges; a float value widens exactly") {
  CHECK(dqfx::checked_from_double<float>(3.0e38).ok());
  const auto big = dqfx::checked_from_double<float>(1e39);
  CHECK(big.status == dqfx::conversion_status::out_of_range);
  CHECK(big.value == FLT_MAX);
  CHECK(dqfx::checked_from_double<float>(-1e39).value == -FLT_MAX);
  CHECK(dqfx::checked_from_double<double>(1e300).ok());
  const float reading = 0.1f;
  CHECK(dqfx::checked_from_double<float>(reading).value == reading);
  static_assert(dqfx::checked_from_double<q15>(0.5).value.raw() == 16384);
  static_assert(dqfx::checked_from_double<q15>(2.0).status == dqfx::conversion_status::out_of_range);
}

TEST_CASE("from_double: NaN gives 0 for every type, float and double included (the documented choice)") {
  CHECK(dqfx::from_double<float>(not_a_number) == 0.0f);
  CHECK(dqfx::from_double<double>(not_a_number) == 0.0);
  CHECK(dqfx::from_double<q15>(not_a_number).raw() == 0);
}
