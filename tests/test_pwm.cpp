// SPDX-License-Identifier: MIT
// Duty to compare value for a centre-aligned timer, minimum pulses and dead-time
// compensation. The compensation is checked against an independent time-domain model
// of one inverter leg with dead time, written here.

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <type_traits>

#include "dqfx/pwm.hpp"

using dqfx::q15;
using dqfx::q31;

namespace {

template <class T> double value_of(T x) { return dqfx::to_double(x); }

/// One inverter leg over one period of an up-down counter 0..P..0 (2P ticks), simulated
/// on a fine time grid. The high-side gate command is on while the counter is below
/// `compare`; each switch turns on `dead_ticks` after the other has turned off. While both
/// are off the free-wheeling diodes set the phase: low for current out of the leg (i > 0),
/// high for current into it. Returns the average phase voltage relative to the bus.
double leg_average(std::uint32_t period, std::uint32_t compare, double dead_ticks, double current) {
  const int substeps = 16;
  const long n = 2L * period * substeps;
  auto gate = [&](long k) {  // high-side command at sub-step k (cyclic)
    k = ((k % n) + n) % n;
    const double t = (static_cast<double>(k) + 0.5) / substeps;
    const double counter = t <= period ? t : 2.0 * period - t;
    return counter < compare;
  };
  const long dead = std::lround(dead_ticks * substeps);
  double high_time = 0;
  for (long k = 0; k < n; ++k) {
    // A switch conducts when its command has been on for the whole last dead time.
    bool high_on = true, low_on = true;
    for (long j = 0; j <= dead; ++j) {
      high_on = high_on && gate(k - j);
      low_on = low_on && !gate(k - j);
    }
    const bool at_top = high_on || (!low_on && current < 0);
    high_time += at_top ? 1.0 : 0.0;
  }
  return high_time / static_cast<double>(n);
}

}  // namespace

TEST_CASE_TEMPLATE("0 % and 100 % are reached exactly and the compare value rounds to nearest", T, q15, q31, float, double) {
  for (const std::uint32_t period : {0u, 1u, 2u, 3u, 100u, 4250u, 65535u, 1000000u}) {
    const dqfx::centre_aligned_pwm pwm{period, 0};
    CHECK(pwm.compare(T{}) == 0);
    CHECK(pwm.compare(dqfx::full_duty<T>()) == period);
    CHECK(pwm.compare(dqfx::from_double<T>(-0.25)) == 0);
    CHECK(pwm.compare(dqfx::from_double<T>(0.5)) == (period + 1) / 2);
    std::mt19937 rng{period};
    std::uniform_real_distribution<double> any{0.0, 1.0};
    for (int i = 0; i < 20000; ++i) {
      const T d = dqfx::from_double<T>(any(rng));
      if (d == dqfx::full_duty<T>()) continue;
      const double exact = value_of(d) * period;
      const double slack = std::is_same_v<T, float> ? period * 1.2e-7 : 1e-9;
      const std::uint32_t c = pwm.compare(d);
      CHECK(std::fabs(static_cast<double>(c) - exact) <= 0.5 + slack);
    }
  }
}

TEST_CASE("q15 compare values are monotonic in the duty, exhaustively") {
  for (const std::uint32_t period : {4250u, 32768u, 65535u}) {
    const dqfx::centre_aligned_pwm pwm{period, 0};
    std::uint32_t previous = 0;
    for (int r = -32768; r <= 32767; ++r) {
      const std::uint32_t c = pwm.compare(q15::from_raw(static_cast<std::int16_t>(r)));
      CHECK(c >= previous);
      CHECK(c <= period);
      previous = c;
    }
    CHECK(previous == period);
  }
}

TEST_CASE_TEMPLATE("NaN duties give half the period", T, float, double) {
  const dqfx::centre_aligned_pwm pwm{4000, 0};
  CHECK(pwm.compare(std::numeric_limits<T>::quiet_NaN()) == 2000);
  CHECK(pwm.compare(std::numeric_limits<T>::infinity()) == 4000);
  CHECK(pwm.compare(-std::numeric_limits<T>::infinity()) == 0);
  CHECK(pwm.compare(static_cast<T>(7.5)) == 4000);
}

TEST_CASE("Pulses shorter than the minimum are dropped or stretched, whichever is nearer") {
  const dqfx::centre_aligned_pwm pwm{4000, 20};
  for (std::uint32_t c = 0; c <= 4000; ++c) {
    const std::uint32_t out = pwm.limit_pulse(c);
    // No on-pulse and no off-pulse shorter than the minimum survives.
    CHECK((out == 0 || out >= 20));
    CHECK((out == 4000 || out <= 3980));
    // Untouched outside the short-pulse bands; inside, the nearer end.
    if (c >= 20 && c <= 3980) CHECK(out == c);
    if (c > 0 && c < 20) CHECK(out == (c < 10 ? 0u : 20u));
    if (c > 3980 && c < 4000) CHECK(out == (4000 - c < 10 ? 4000u : 3980u));
  }
  // A minimum above half the period is held to half the period.
  const dqfx::centre_aligned_pwm tight{10, 8};
  CHECK(tight.limit_pulse(3) == 5);
  CHECK(tight.limit_pulse(1) == 0);
  CHECK(tight.limit_pulse(9) == 10);
  // Through the duty interface as well.
  CHECK(pwm.compare(dqfx::from_double<double>(0.001)) == 0);   // 4 counts -> dropped
  CHECK(pwm.compare(dqfx::from_double<double>(0.004)) == 20);  // 16 counts -> stretched
}

TEST_CASE_TEMPLATE("Dead-time correction is duty_loss times the current sign, ramped in a band", T, q15, q31, float, double) {
  const double loss = 0.02, band = 0.05;
  const auto comp = dqfx::dead_time_compensation<T>::from_ratio(loss, band);
  const double tolerance = dqfx::is_fixed_v<T> ? 3 * dqfx::number_traits<T>::lsb : 1e-6;
  for (int k = -1000; k <= 1000; ++k) {
    const double i = k * 1e-3;
    const T current = dqfx::from_double<T>(i);
    const double expected = loss * std::fmax(-1.0, std::fmin(1.0, value_of(current) / band));
    CHECK(std::fabs(value_of(comp.correction(current)) - expected) <= tolerance);
  }
  // Odd symmetry, continuity at the band edges, and nothing for zero current.
  CHECK(comp.correction(T{}) == T{});
  CHECK(std::fabs(value_of(comp.correction(dqfx::from_double<T>(0.3))) + value_of(comp.correction(dqfx::from_double<T>(-0.3)))) <= tolerance);
  CHECK(std::fabs(value_of(comp.correction(dqfx::from_double<T>(band))) - loss) <= tolerance);
  // Duties stay in [0, 1].
  const T full = dqfx::full_duty<T>();
  const auto out = comp.apply(dqfx::phases<T>{full, T{}, dqfx::from_double<T>(0.5)},
                              dqfx::phases<T>{dqfx::from_double<T>(0.9), dqfx::from_double<T>(-0.9), dqfx::from_double<T>(0.01)});
  CHECK(out.a == full);
  CHECK(out.b == T{});
  CHECK(std::fabs(value_of(out.c) - (0.5 + loss * 0.2)) <= tolerance);
  // from_times is the same ratio.
  const auto same = dqfx::dead_time_compensation<T>::from_times(1e-6, 50e-6, band);
  CHECK(std::fabs(value_of(same.correction(dqfx::from_double<T>(0.5))) - loss) <= tolerance);
}

TEST_CASE_TEMPLATE("NaN currents and duties never reach the output", T, float, double) {
  const auto comp = dqfx::dead_time_compensation<T>::from_ratio(0.02, 0.05);
  const T nan = std::numeric_limits<T>::quiet_NaN();
  CHECK(comp.correction(nan) == T{});
  const auto out = comp.apply(dqfx::phases<T>{nan, static_cast<T>(0.3), static_cast<T>(0.3)},
                              dqfx::phases<T>{static_cast<T>(0.1), nan, std::numeric_limits<T>::infinity()});
  CHECK(out.a == static_cast<T>(0.5));
  CHECK(out.b == static_cast<T>(0.3));
  CHECK(std::fabs(static_cast<double>(out.c) - 0.32) < 1e-6);
}

// The dead-time effect: with positive current the phase loses t_dead/T_pwm of its duty,
// with negative current it gains as much (Y. Murai, T. Watanabe and H. Iwasaki,
// "Waveform distortion and correction circuit for PWM inverters with switching
// lag-times", IEEE Trans. Industry Applications, 1987; recalled from memory). The
// independent leg model above reproduces it, and the compensated compare values restore
// the commanded duty to within one timer tick.
TEST_CASE_TEMPLATE("Compensated duties give the commanded average voltage in a leg model with dead time", T, q15, q31, float, double) {
  const std::uint32_t period = 500;   // counter top; one PWM period is 2 * period ticks
  const double dead_ticks = 10;       // dead time in ticks
  const double loss = dead_ticks / (2.0 * period);
  const dqfx::centre_aligned_pwm pwm{period, 0};
  const auto comp = dqfx::dead_time_compensation<T>::from_times(dead_ticks, 2.0 * period, 0.02);
  for (const double duty : {0.2, 0.5, 0.73}) {
    for (const double i : {0.5, -0.5}) {
      const T d = dqfx::from_double<T>(duty);
      // Uncompensated: the average moves by the loss, against the current.
      const double plain = leg_average(period, pwm.compare(d), dead_ticks, i);
      CHECK(std::fabs(plain - (duty - (i > 0 ? loss : -loss))) <= 1.0 / period);
      const T fixed_duty = comp.apply(dqfx::phases<T>{d, d, d}, dqfx::phases<T>{dqfx::from_double<T>(i), T{}, T{}}).a;
      const double compensated = leg_average(period, pwm.compare(fixed_duty), dead_ticks, i);
      CHECK(std::fabs(compensated - duty) <= 1.0 / period);
    }
  }
}

TEST_CASE("PWM conversion is a constant expression") {
  constexpr dqfx::centre_aligned_pwm pwm{4000, 10};
  static_assert(pwm.compare(q15::max()) == 4000 && pwm.compare(q15{}) == 0);
  static_assert(pwm.compare(0.25) == 1000);
  constexpr auto comp = dqfx::dead_time_compensation<q15>::from_ratio(0.01, 0.1);
  static_assert(comp.correction(q15::max()).raw() == dqfx::from_double<q15>(0.01).raw());
  CHECK(pwm.compare(0.5f) == 2000);
}
