// SPDX-License-Identifier: MIT
// Protection monitors (protection.hpp) and the drive sequence (drive_sequence.hpp) on
// their own: trip times against the thermal relays' cold curve, debounce counts,
// hysteresis, the priority of causes, bad input; the sequence's table.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "dqfx/drive_sequence.hpp"
#include "dqfx/protection.hpp"
#include "test_support.hpp"

namespace {

using dqfx::fault_cause;
using dqfx::q15;
using dqfx::q31;
using dqfx_test::name;
using dqfx_test::two_pi;

constexpr double ts = 1e-3;  // a slow invented sample clock keeps the thermal runs short

dqfx::protection_parameters invented_limits() {
  dqfx::protection_parameters p{};
  p.sample_time = ts;
  p.peak_current = 0.9;
  p.peak_current_time = 3 * ts;
  p.continuous_current = 0.4;
  p.thermal_time_constant = 0.5;
  p.over_voltage = 0.8;
  p.under_voltage = 0.4;
  p.voltage_hysteresis = 0.05;
  p.voltage_time = 2 * ts;
  p.over_speed = 0.9;
  p.over_speed_time = 4 * ts;
  p.angle_time = 5 * ts;
  p.sensor_time = 2 * ts;
  p.adc_bits = 12;
  p.rail_time = 2 * ts;
  return p;
}

/// Balanced currents of peak `amplitude` at electrical angle `theta` (rad).
template <class T> dqfx::phases<T> balanced(double amplitude, double theta) {
  return {dqfx::from_double<T>(amplitude * std::cos(theta)), dqfx::from_double<T>(amplitude * std::cos(theta - two_pi / 3)),
          dqfx::from_double<T>(amplitude * std::cos(theta + two_pi / 3))};
}

template <class T> dqfx::protection_inputs<T> healthy() {
  dqfx::protection_inputs<T> in{};
  in.bus_voltage = dqfx::from_double<T>(0.6);
  in.current_code = {2048, 2048, 2048};
  return in;
}

/// Calls until a trip; the number of calls including the tripping one (0: none in `limit`).
template <class T, class Change>
int calls_to_trip(dqfx::protection<T>& m, Change change, fault_cause& cause, int limit = 100000) {
  for (int k = 1; k <= limit; ++k) {
    dqfx::protection_inputs<T> in = healthy<T>();
    change(in, k);
    cause = m.check(in);
    if (cause != fault_cause::none) return k;
  }
  return 0;
}

}  // namespace

// From cold, a constant current I above the continuous current Ic trips a thermal relay
// after tau * ln(I^2 / (I^2 - Ic^2)) (IEC 60255-149:2013, the cold curve; recalled from
// memory). The monitor's estimate is exact at the samples, so it trips within one sample
// after that time (fixed point: plus the trip level's rounding).
TEST_CASE_TEMPLATE("protection: I^2 t trips on the thermal relays' cold curve", T, q15, q31, float, double) {
  const dqfx::protection_parameters p = invented_limits();
  for (double ratio : {1.1, 1.5, 2.0}) {
    dqfx::protection<T> m{p};
    const double amplitude = ratio * p.continuous_current;
    fault_cause cause{};
    const int n = calls_to_trip(m, [&](auto& in, int k) { in.current = balanced<T>(amplitude, 0.05 * k); }, cause);
    const double expected = p.thermal_time_constant * std::log(ratio * ratio / (ratio * ratio - 1));
    MESSAGE(name<T>(), ": I = ", ratio, " Ic trips after ", n * ts, " s, cold curve ", expected, " s");
    CHECK(cause == fault_cause::overload);
    CHECK(n * ts >= expected - 0.002 * expected);
    CHECK(n * ts <= expected + ts + 0.002 * expected);
    CHECK(m.present());  // still hot
  }
  // Below the continuous current: never.
  dqfx::protection<T> cool{p};
  fault_cause cause{};
  CHECK(calls_to_trip(cool, [&](auto& in, int k) { in.current = balanced<T>(0.95 * p.continuous_current, 0.05 * k); },
                      cause, 5000) == 0);
}

TEST_CASE_TEMPLATE("protection: thresholds, debounce times, hysteresis and priority", T, q15, q31, float, double) {
  const dqfx::protection_parameters p = invented_limits();
  fault_cause cause{};
  SUBCASE("over-current after its 3 periods, not after 2") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int k) { in.current = balanced<T>(k % 3 == 0 ? 0.2 : 0.95, 0.0); }, cause, 30) == 0);
    dqfx::protection<T> n{p};
    CHECK(calls_to_trip(n, [&](auto& in, int) { in.current = balanced<T>(0.95, 0.0); }, cause) == 3);
    CHECK(cause == fault_cause::over_current);
  }
  SUBCASE("bus voltage with hysteresis") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int) { in.bus_voltage = dqfx::from_double<T>(0.85); }, cause) == 2);
    CHECK(cause == fault_cause::over_voltage);
    auto at = [&](double v) {
      dqfx::protection_inputs<T> in = healthy<T>();
      in.bus_voltage = dqfx::from_double<T>(v);
      return m.check(in);
    };
    at(0.78);  // back below the threshold, inside the hysteresis band
    CHECK(m.present());
    at(0.74);
    CHECK_FALSE(m.present());
    dqfx::protection<T> u{p};
    CHECK(calls_to_trip(u, [&](auto& in, int) { in.bus_voltage = dqfx::from_double<T>(0.3); }, cause) == 2);
    CHECK(cause == fault_cause::under_voltage);
  }
  SUBCASE("over-speed, both directions") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int) { in.speed = dqfx::from_double<T>(-0.95); }, cause) == 4);
    CHECK(cause == fault_cause::over_speed);
  }
  SUBCASE("angle lost only where the state needs an angle") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int) { in.angle_valid = false; }, cause, 100) == 0);
    CHECK(calls_to_trip(m, [&](auto& in, int) { in.angle_valid = false; in.angle_needed = true; }, cause) == 5);
    CHECK(cause == fault_cause::angle_lost);
  }
  SUBCASE("sensor: refused readings in consecutive periods") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int k) { in.angle_refused = k % 2 == 0; }, cause, 101) == 0);
    CHECK(calls_to_trip(m, [&](auto& in, int) { in.angle_refused = true; }, cause) == 2);
    CHECK(cause == fault_cause::sensor);
  }
  SUBCASE("ADC rail: a railed phase is judged by the rail monitor, not as a current") {
    dqfx::protection<T> m{p};
    CHECK(calls_to_trip(m, [&](auto& in, int) {
      in.current_code[1] = 4095;
      in.current = balanced<T>(0.99, 0.0);
    }, cause) == 2);
    CHECK(cause == fault_cause::adc_rail);
  }
  if constexpr (!dqfx::number_traits<T>::is_fixed) {
    SUBCASE("a reading that is not a number trips") {
      const T nan = std::numeric_limits<T>::quiet_NaN();
      dqfx::protection<T> m{p};
      CHECK(calls_to_trip(m, [&](auto& in, int) { in.current.b = nan; }, cause) == 3);
      CHECK(cause == fault_cause::over_current);
      dqfx::protection<T> v{p};
      CHECK(calls_to_trip(v, [&](auto& in, int) { in.bus_voltage = nan; }, cause) == 2);
      CHECK(cause == fault_cause::over_voltage);
      dqfx::protection<T> s{p};
      CHECK(calls_to_trip(s, [&](auto& in, int) { in.speed = -nan; }, cause) == 4);
      CHECK(cause == fault_cause::over_speed);
      CHECK(s.thermal_load() == 0.0);  // NaN currents never reached the estimate
    }
  }
}

TEST_CASE("drive_sequence: the table, a latched cause and an explicit clear") {
  using dqfx::bridge_output;
  using dqfx::drive_state;
  dqfx::sequence_parameters p{};
  p.safe = dqfx::safe_output::low_side_on;
  p.align_periods = 3;
  p.stop_periods = 10;
  dqfx::drive_sequence s{p};
  CHECK(s.state() == drive_state::stopped);
  CHECK(s.output() == bridge_output::low_side_on);
  CHECK(s.bridge_enabled());
  CHECK(s.advance(true, true) == drive_state::stopped);  // nothing without start()
  CHECK(s.start());
  CHECK_FALSE(s.start());
  CHECK(s.output() == bridge_output::half);
  CHECK(s.advance(false, true) == drive_state::calibrating);
  CHECK(s.advance(true, true) == drive_state::aligning);
  CHECK(s.output() == bridge_output::regulated);
  CHECK_FALSE(s.needs_angle());
  for (int k = 0; k < 2; ++k) CHECK(s.advance(true, true) == drive_state::aligning);
  CHECK(s.advance(true, true) == drive_state::running);
  CHECK(s.needs_angle());
  s.trip(fault_cause::over_speed);
  s.trip(fault_cause::over_current);  // the first cause stays
  CHECK(s.state() == drive_state::fault);
  CHECK(s.cause() == fault_cause::over_speed);
  CHECK(s.output() == bridge_output::low_side_on);
  CHECK_FALSE(s.start());
  CHECK(s.advance(true, true) == drive_state::fault);  // latched
  CHECK_FALSE(s.clear(false));                          // the condition is still there
  CHECK(s.clear(true));
  CHECK(s.state() == drive_state::stopped);
  CHECK(s.cause() == fault_cause::none);
  // Stopping ends when still, or after stop_periods.
  CHECK(s.start());
  s.advance(true, true);
  for (int k = 0; k < 3; ++k) s.advance(true, true);
  CHECK(s.state() == drive_state::running);
  s.stop();
  CHECK(s.state() == drive_state::stopping);
  for (int k = 0; k < 9; ++k) CHECK(s.advance(true, false) == drive_state::stopping);
  CHECK(s.advance(true, false) == drive_state::stopped);
  // A stop during calibration goes straight to stopped; all_off disables the bridge.
  dqfx::drive_sequence off{dqfx::sequence_parameters{}};
  CHECK_FALSE(off.bridge_enabled());
  off.start();
  CHECK(off.bridge_enabled());
  off.stop();
  CHECK(off.state() == drive_state::stopped);
  CHECK(off.output() == bridge_output::off);
  off.trip(fault_cause::none);
  CHECK(off.state() == drive_state::stopped);
}

// constexpr: both build at compile time.
static_assert(dqfx::drive_sequence{}.state() == dqfx::drive_state::stopped);
static_assert(!dqfx::protection<q15>{dqfx::protection_parameters{}}.present());
