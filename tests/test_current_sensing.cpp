// SPDX-License-Identifier: MIT
// ADC codes to per-unit currents, offset calibration and phase-current reconstruction,
// against long double arithmetic and a simulated set of balanced phase currents sampled
// by low-side shunts under the duties of the modulator.

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <type_traits>

#include "dqfx/current_sensing.hpp"
#include "dqfx/svm.hpp"

using dqfx::q15;
using dqfx::q31;

namespace {

using real = long double;
template <class T> real value_of(T x) { return static_cast<real>(dqfx::to_double(x)); }
template <class T> real unit() { return static_cast<real>(dqfx::number_traits<T>::lsb); }

// An invented board: 12-bit ADC on a 3.3 V reference, 5 mOhm low-side shunts with an
// amplifier gain of 10 (inverting), offset at mid-scale; per-unit base current 20 A.
constexpr double amps_per_code = -3.3 / 4096.0 / (0.005 * 10.0);
constexpr double base_amps = 20.0;
constexpr dqfx::adc_format board_adc{12, 4};

/// The code the board's ADC reads for a current (rounded, clamped to the ADC range).
std::uint16_t code_for(real per_unit, real offset_code) {
  const real code = std::round(offset_code + per_unit * base_amps / amps_per_code);
  return static_cast<std::uint16_t>(code < 0 ? 0 : (code > 4095 ? 4095 : code));
}

/// Error against an exact value, in LSB (q15/q31) or relative to max(1, |exact|).
template <class T> real error_of(T got, real exact) {
  if constexpr (dqfx::is_fixed_v<T>) {
    const real hi = value_of(T::max()), lo = value_of(T::lowest());
    exact = exact > hi ? hi : (exact < lo ? lo : exact);
    return std::fabs(value_of(got) - exact) / unit<T>();
  } else {
    return std::fabs(value_of(got) - exact) / std::fmax(1.0L, std::fabs(exact));
  }
}

/// One rounding, plus the gain's own 31-bit rounding (q15: 2^-16 LSB at most).
template <class T> real conversion_bound() {
  if constexpr (std::is_same_v<T, q15>) return 0.5L + 1.0L / 65536;
  if constexpr (std::is_same_v<T, q31>) return 1.0L;
  if constexpr (std::is_same_v<T, float>) return 1.2e-7L;
  return 2.3e-16L;
}

}  // namespace

TEST_CASE_TEMPLATE("Codes read as (code - mid-scale) / 2^bits", T, q15, q31, float, double) {
  for (unsigned bits : {8u, 10u, 12u, 14u, 16u}) {
    const auto channel = dqfx::current_channel<T>::from_amplifier(dqfx::adc_format{bits, 0}, 0.01, 10.0);
    const std::uint32_t top = (1u << bits) - 1u;
    for (std::uint32_t code = 0; code <= top; code += (bits > 12 ? 7u : 1u)) {
      const real exact = (static_cast<real>(code) - static_cast<real>(1u << (bits - 1))) / static_cast<real>(1u << bits);
      const real bound = std::is_same_v<T, q15> && bits == 16 ? 0.5L * unit<T>() : 0.0L;
      CHECK(std::fabs(value_of(channel.reading(static_cast<std::uint16_t>(code))) - exact) <= bound);
    }
  }
}

TEST_CASE_TEMPLATE("Conversion to per-unit current is one rounding of (x - offset) * gain", T, q15, q31, float, double) {
  const auto plain = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  const real gain = static_cast<real>(amps_per_code) * 4096 / base_amps;  // per unit per full range
  for (const double offset_codes : {0.0, 3.375, -11.5}) {
    const T offset = dqfx::from_double<T>(offset_codes / 4096.0);
    const auto channel = plain.with_offset(offset);
    CHECK(channel.offset() == offset);
    real worst = 0;
    for (std::uint32_t code = 0; code < 4096; ++code) {
      const real x = (static_cast<real>(code) - 2048) / 4096;
      const real exact = (x - value_of(offset)) * gain;
      worst = std::fmax(worst, error_of(channel.current(static_cast<std::uint16_t>(code)), exact));
    }
    CHECK(worst <= conversion_bound<T>());
  }
  // Worked example (Ohm's law across the shunt, common practice): 100 codes below
  // mid-scale are 100 * 3.3/4096 V = 0.0806 V at the amplifier output, 0.00806 V across
  // 5 mOhm: 1.611 A, i.e. 0.0806 per unit of 20 A (positive: the amplifier inverts).
  CHECK(std::fabs(value_of(plain.current(1948)) - 1.6113281L / 20) <= 2 * unit<T>() + 1e-6L);
}

TEST_CASE("A 16-bit ADC and a 14-bit ADC convert in all types") {
  const auto q = dqfx::current_channel<q31>::from_amplifier(dqfx::adc_format{16, 0}, 1e-4, 1.0);
  CHECK(q.current(32768 + 100).raw() == dqfx::from_double<q31>(100 * 1e-4).raw());
  const auto d = dqfx::current_channel<double>::from_amplifier(dqfx::adc_format{14, 0}, 1e-3, 2.0);
  CHECK(std::fabs(d.current(8192 - 50) - (-50 * 1e-3 / 2.0)) < 1e-15);
}

TEST_CASE_TEMPLATE("Railed and missing samples are not usable", T, q15, q31, float, double) {
  const auto channel = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  for (std::uint32_t code = 0; code < 4200; ++code) {
    const bool railed = code <= 4 || code >= 4091;
    CHECK(channel.usable(dqfx::adc_sample{static_cast<std::uint16_t>(code), true}) == !railed);
    CHECK_FALSE(channel.usable(dqfx::adc_sample{static_cast<std::uint16_t>(code), false}));
  }
}

TEST_CASE_TEMPLATE("Offset calibration averages N samples and refuses a wide spread", T, q15, q31, float, double) {
  std::mt19937 rng{23};
  std::uniform_int_distribution<int> noise{-3, 3};
  dqfx::offset_calibration<T> cal{board_adc, 256, 8};
  CHECK_FALSE(cal.complete());
  long long sum = 0;
  for (int i = 0; i < 256; ++i) {
    const auto code = static_cast<std::uint16_t>(2061 + noise(rng));
    sum += code;
    CHECK_FALSE(cal.accepted());
    CHECK(cal.offset() == T{});
    cal.add({code, true});
  }
  REQUIRE(cal.complete());
  REQUIRE(cal.accepted());
  CHECK(cal.spread() <= 6);
  const real exact = (static_cast<real>(sum) / 256 - 2048) / 4096;
  const real bound = dqfx::is_fixed_v<T> ? 0.5L * unit<T>() : 4 * unit<T>() * std::fabs(exact);
  CHECK(std::fabs(value_of(cal.offset()) - exact) <= bound);
  // More samples after completion change nothing.
  const T kept = cal.offset();
  cal.add({4000, true});
  CHECK(cal.offset() == kept);

  // A current flowing during calibration (a ramp of 20 codes) is refused.
  cal.restart();
  for (int i = 0; i < 256; ++i) cal.add({static_cast<std::uint16_t>(2040 + i * 20 / 256), true});
  CHECK(cal.complete());
  CHECK_FALSE(cal.accepted());
  CHECK(cal.offset() == T{});

  // A missing or railed sample fails the run.
  for (const dqfx::adc_sample bad : {dqfx::adc_sample{2048, false}, dqfx::adc_sample{0, true}, dqfx::adc_sample{4095, true}}) {
    dqfx::offset_calibration<T> run{board_adc, 16, 8};
    for (int i = 0; i < 15; ++i) run.add({2048, true});
    run.add(bad);
    CHECK(run.complete());
    CHECK_FALSE(run.accepted());
  }

  // The largest run at the largest 16-bit code does not overflow.
  dqfx::offset_calibration<T> big{dqfx::adc_format{16, 0}, 65536, 0};
  for (int i = 0; i < 65536; ++i) big.add({65534, true});
  CHECK(big.accepted());
  CHECK(std::fabs(value_of(big.offset()) - (65534.0L - 32768) / 65536) <= unit<T>());
}

TEST_CASE_TEMPLATE("Three shunts: the two longest low-side windows are read, the third derived", T, q15, q31, float, double) {
  const auto channel = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  const dqfx::three_shunt<T> sensor{{channel, channel, channel}, dqfx::from_double<T>(0.08)};
  // One code is amps_per_code / base_amps per unit; two codes of quantisation, plus rounding.
  const real per_code = std::fabs(static_cast<real>(amps_per_code) / base_amps);
  const real pi = std::acos(-1.0L);
  int derived_count[3] = {};
  for (int k = 0; k < 360; ++k) {
    const real t = (k + 0.25L) * pi / 180;
    const real amplitude = 0.6L;
    const real truth[3] = {amplitude * std::cos(t - 0.3L), amplitude * std::cos(t - 0.3L - 2 * pi / 3),
                           amplitude * std::cos(t - 0.3L + 2 * pi / 3)};
    const auto m = dqfx::svm(dqfx::stationary<T>{dqfx::from_double<T>(static_cast<double>(0.55L * std::cos(t))),
                                                 dqfx::from_double<T>(static_cast<double>(0.55L * std::sin(t)))});
    const dqfx::phases<dqfx::adc_sample> samples{{code_for(truth[0], 2048), true}, {code_for(truth[1], 2048), true},
                                                 {code_for(truth[2], 2048), true}};
    const auto r = sensor.reconstruct(samples, m.duty);
    REQUIRE(r.valid);
    CHECK(r.railed == 0);
    // The derived phase is the one with the largest duty (shortest low-side window).
    const real d[3] = {value_of(m.duty.a), value_of(m.duty.b), value_of(m.duty.c)};
    int largest = 0;
    for (int p = 1; p < 3; ++p) largest = d[p] > d[largest] ? p : largest;
    CHECK(r.derived_phase == largest);
    ++derived_count[largest];
    const T got[3] = {r.current.a, r.current.b, r.current.c};
    for (int p = 0; p < 3; ++p) CHECK(std::fabs(value_of(got[p]) - truth[p]) <= 2 * per_code + 2 * unit<T>());
    // Kirchhoff's current law holds in the output.
    CHECK(std::fabs(value_of(r.current.a) + value_of(r.current.b) + value_of(r.current.c)) <= 4 * unit<T>());
  }
  for (int p = 0; p < 3; ++p) CHECK(derived_count[p] == 120);
}

TEST_CASE_TEMPLATE("Three shunts: railed, missing and too-short samples are flagged and skipped", T, q15, q31, float, double) {
  const auto channel = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  const dqfx::three_shunt<T> sensor{{channel, channel, channel}, dqfx::from_double<T>(0.1)};
  const dqfx::phases<T> duty{dqfx::from_double<T>(0.2), dqfx::from_double<T>(0.5), dqfx::from_double<T>(0.7)};
  const dqfx::adc_sample good_a{2148, true}, good_b{1998, true}, good_c{1998, true};
  // All good: a and b read (smallest duties), c derived.
  auto r = sensor.reconstruct({good_a, good_b, good_c}, duty);
  CHECK((r.valid && r.derived_phase == 2 && r.railed == 0 && r.missing == 0));
  // b railed: a and c read, b derived and flagged.
  r = sensor.reconstruct({good_a, {4095, true}, good_c}, duty);
  CHECK((r.valid && r.derived_phase == 1 && r.railed == 2 && r.missing == 0));
  CHECK(r.current.b == -(r.current.a + r.current.c));
  // a missing: b and c read.
  r = sensor.reconstruct({{2148, false}, good_b, good_c}, duty);
  CHECK((r.valid && r.derived_phase == 0 && r.missing == 1));
  // c's low-side window is too short (duty 0.95 leaves 0.05 < 0.1) and a is railed:
  // only b remains, so nothing is valid and the currents are zero.
  r = sensor.reconstruct({{0, true}, good_b, good_c},
                         dqfx::phases<T>{duty.a, duty.b, dqfx::from_double<T>(0.95)});
  CHECK_FALSE(r.valid);
  CHECK((r.railed == 1 && r.missing == 4));
  CHECK((r.current.a == T{} && r.current.b == T{} && r.current.c == T{}));
}

TEST_CASE_TEMPLATE("Three shunts treat a NaN duty as no window", T, float, double) {
  const auto channel = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  const dqfx::three_shunt<T> sensor{{channel, channel, channel}, static_cast<T>(0.1)};
  const auto r = sensor.reconstruct({{2148, true}, {1998, true}, {1998, true}},
                                    dqfx::phases<T>{std::numeric_limits<T>::quiet_NaN(), static_cast<T>(0.5), static_cast<T>(0.2)});
  CHECK((r.valid && r.missing == 1 && r.derived_phase == 0));
}

TEST_CASE_TEMPLATE("Two sensors: c = -(a + b), and a bad sample invalidates the set", T, q15, q31, float, double) {
  const auto channel = dqfx::current_channel<T>::from_amplifier(board_adc, amps_per_code, base_amps);
  const dqfx::two_sensor<T> sensor{channel, channel};
  auto r = sensor.reconstruct({2148, true}, {1900, true});
  CHECK((r.valid && r.derived_phase == 2 && r.railed == 0 && r.missing == 0));
  CHECK(r.current.c == -(r.current.a + r.current.b));
  CHECK(r.current.a == channel.current(2148));
  r = sensor.reconstruct({4095, true}, {1900, true});
  CHECK((!r.valid && r.railed == 1));
  r = sensor.reconstruct({2148, true}, {1900, false});
  CHECK((!r.valid && r.missing == 2));
  CHECK((r.current.a == T{} && r.current.b == T{} && r.current.c == T{}));
}

TEST_CASE("Current conversion is a constant expression") {
  constexpr auto channel = dqfx::current_channel<q15>::from_amplifier(dqfx::adc_format{12, 0}, 0.01, 40.96);
  static_assert(channel.current(2048 + 1024).raw() == 8192);  // 1024 codes * 0.01 A = 10.24 A = 0.25 pu
  CHECK(channel.current(2048).raw() == 0);
}

// The bus voltage. An invented divider: 40 V at the full 12-bit scale (40/4096 V per code,
// a power of two ratio so that the test's own arithmetic is exact), base voltage 32 V. The
// reference is the definition of an ideal divider and converter, V = (code - zero) *
// volts_per_code (common practice), in long double.
namespace {
constexpr double bus_volts_per_code = 40.0 / 4096.0;
constexpr double bus_base = 32.0;
}  // namespace

TEST_CASE_TEMPLATE("Bus voltage: every code against (code - zero) * volts_per_code / base", T, q15, q31, float, double) {
  for (const std::uint16_t zero : {std::uint16_t{0}, std::uint16_t{37}}) {
    for (const unsigned bits : {8u, 12u, 15u, 16u}) {
      const real per_code = 40.0L / static_cast<real>(1u << bits);
      const auto channel = dqfx::voltage_channel<T>::from_divider(dqfx::adc_format{bits, 0},
                                                                  static_cast<double>(per_code), bus_base, zero);
      REQUIRE_FALSE(channel.parameter_fault());
      const real gain = per_code * static_cast<real>(1u << bits) / bus_base;
      // q15 with 16-bit codes rounds the code to 15 bits first (a half LSB, times the gain).
      const real bound = dqfx::is_fixed_v<T>
                             ? unit<T>() * (0.5L + (bits == 16 && std::is_same_v<T, q15> ? 0.5L * gain : 0.0L)) +
                                   gain * std::ldexp(1.0L, -30)
                             : 2 * unit<T>() * gain;
      real worst = 0;
      int outside = 0, high_wrong = 0;
      for (std::uint32_t code = 0; code < (1u << bits); ++code) {
        const real exact = (static_cast<real>(code) - zero) * per_code / bus_base;
        const auto m = channel.read({static_cast<std::uint16_t>(code), true});
        // Fixed point holds values below 1 only: from the code of the base voltage on, high.
        const bool beyond = dqfx::is_fixed_v<T> && exact >= 1.0L;
        const bool below = code < zero;
        // Codes 0 and the largest are rails even with a zero margin (adc_format::railed).
        const bool rail = code == 0 || code == (1u << bits) - 1;
        high_wrong += rail ? (m.railed && !m.valid ? 0 : 1)
                           : ((m.high != beyond) || (m.low != below) || (m.valid != (!beyond && !below)) ? 1 : 0);
        if (!m.valid) continue;
        const real e = std::fabs(value_of(m.voltage) - exact);
        worst = e > worst ? e : worst;
        outside += e > bound ? 1 : 0;
      }
      CAPTURE(bits);
      CAPTURE(zero);
      CAPTURE(worst / unit<T>());
      CHECK(outside == 0);
      CHECK(high_wrong == 0);
    }
  }
}

TEST_CASE_TEMPLATE("Bus voltage: rails, missing samples and the limits are flagged", T, q15, q31, float, double) {
  const auto channel = dqfx::voltage_channel<T>::from_divider(dqfx::adc_format{12, 8}, bus_volts_per_code, bus_base)
                           .with_limits(12.0, 30.0);
  // 12 V is 1228.8 codes (the first code at or above: 1229), 30 V exactly 3072 (included).
  CHECK(channel.lower_code() == 1229);
  CHECK(channel.upper_code() == 3072);
  const auto at = [&](std::uint16_t code) { return channel.read({code, true}); };
  CHECK((at(1228).low && !at(1228).valid && value_of(at(1228).voltage) == 0));
  CHECK((at(1229).valid && !at(1229).low));
  CHECK((at(3072).valid && !at(3072).high));
  CHECK((at(3073).high && !at(3073).valid));
  CHECK((at(8).railed && !at(8).valid && !at(8).low));
  CHECK((at(4095 - 8).railed && !at(4095 - 8).high));
  CHECK((at(4096).railed && !at(4096).valid));  // beyond the largest 12-bit code
  const auto missing = channel.read({2458, false});
  CHECK((missing.missing && !missing.valid && value_of(missing.voltage) == 0));
  // Limits beyond what the type holds stay at the type's range.
  const auto wide = dqfx::voltage_channel<T>::from_divider(dqfx::adc_format{12, 0}, bus_volts_per_code, bus_base)
                        .with_limits(-5.0, 100.0);
  CHECK(wide.lower_code() == 0);
  CHECK(wide.upper_code() == (dqfx::is_fixed_v<T> ? 3276 : 4095));
}

TEST_CASE_TEMPLATE("Bus voltage: a bad design reads nothing", T, q15, q31, float, double) {
  volatile double zero_scale = 0.0;  // run time: no compile-time refusal
  const auto no_scale = dqfx::voltage_channel<T>::from_divider(dqfx::adc_format{12, 0}, zero_scale, bus_base);
  const auto no_format = dqfx::voltage_channel<T>::from_divider(dqfx::adc_format{20, 0}, bus_volts_per_code, bus_base);
  for (const auto& c : {no_scale, no_format}) {
    CHECK(c.parameter_fault());
    const auto m = c.read({2000, true});
    CHECK((!m.valid && m.railed && value_of(m.voltage) == 0));
  }
}

TEST_CASE("Bus voltage conversion is a constant expression") {
  constexpr auto channel = dqfx::voltage_channel<q15>::from_divider(dqfx::adc_format{12, 8}, bus_volts_per_code, bus_base);
  // 2458 codes = 24.00390625 V = 0.75012207 per unit = 24580.0 q15 LSB.
  static_assert(channel.read({2458, true}).voltage.raw() == 24580);
  static_assert(channel.read({2458, true}).valid);
}
