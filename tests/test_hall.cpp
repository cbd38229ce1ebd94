// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <array>
#include <cmath>
#include <cstdint>
#include <string>

#include "dqfx/hall.hpp"
#include "dqfx/hall_learner.hpp"
#include "dqfx_sim/sensors.hpp"
#include "reference/pmsm_model.hpp"
#include "test_support.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

using dqfx_test::name;

// Invented drive: 20 kHz, speed 1.0 = 1000 Hz electrical, 10 MHz capture timer.
using dqfx_test::base_speed;  // 1000 Hz electrical
using dqfx_test::ts;          // 20 kHz
using dqfx_test::two_pi;
constexpr double tick_hz = 10e6;

// Invented sensor placement: states 1,3,2,6,4,5 turning forward, the first beginning at
// -30 degrees; each edge also moved by a few degrees (misplaced sensors), as the true
// rotor angles where the states begin.
constexpr std::array<std::uint8_t, 6> sequence{1, 3, 2, 6, 4, 5};
constexpr std::array<double, 6> misplacement{2.0, -3.0, 1.5, 0.0, -2.5, 3.0};  // degrees

dqfx::hall_table true_table() {
  dqfx::hall_table t{};
  for (std::size_t k = 0; k < 6; ++k) {
    t.start[sequence[k]] = dqfx::angle::from_degrees(-30.0 + 60.0 * static_cast<double>(k) + misplacement[k]);
  }
  return t;
}

// The state the sensors show at electrical angle `theta` (rad), for a table.
std::uint8_t state_at(const dqfx::hall_table& t, double theta) {
  const dqfx::angle a = dqfx::angle::from_radians(theta);
  std::uint8_t best = 0;
  std::uint32_t nearest = 0xFFFFFFFFu;
  for (std::uint8_t s : sequence) {
    const std::uint32_t behind = (a - t.start[s]).raw();  // how far past the start of s
    if (behind < nearest) {
      nearest = behind;
      best = s;
    }
  }
  return best;
}

dqfx::hall_parameters parameters(const dqfx::hall_table& t, double tick_frequency = tick_hz) {
  return {t, base_speed, ts, tick_frequency, 0.005};
}

std::uint32_t ticks_of(double t) {
  return static_cast<std::uint32_t>(static_cast<std::uint64_t>(std::llround(t * tick_hz)) & 0xFFFFFFFFu);
}

double degrees_between(dqfx::angle a, double radians) {
  return std::fabs(reference::wrap(a.radians() - radians)) * 180 / reference::pi;
}

// Runs a rotor at constant electrical speed (per unit) past the sensors; the capture
// timer holds the exact time of the latest state change (found by bisection on the
// angle). Returns the largest angle error after the first two edges.
template <class T>
double constant_speed_error(double speed, bool capture, T* last_speed = nullptr, int samples = 20000,
                            bool nominal_table = false) {
  const dqfx::hall_table table = true_table();
  const dqfx::hall_table nominal = dqfx::hall_table::evenly(sequence, dqfx::angle::from_degrees(-30));
  dqfx::hall_sensor<T> h{parameters(nominal_table ? nominal : table, capture ? tick_hz : 0.0)};
  const double w = speed * base_speed;  // rad/s
  double edge_time = 0, worst = 0;
  std::uint8_t previous = state_at(table, 0.2);
  int edges = 0;
  for (int k = 0; k < samples; ++k) {
    const double t = k * ts;
    const std::uint8_t s = state_at(table, 0.2 + w * t);
    if (s != previous) {
      double lo = t - ts, hi = t;
      for (int i = 0; i < 60; ++i) {
        const double mid = 0.5 * (lo + hi);
        (state_at(table, 0.2 + w * mid) == s ? hi : lo) = mid;
      }
      edge_time = hi;
      previous = s;
      ++edges;
    }
    if (capture) {
      h.update(s, ticks_of(edge_time), ticks_of(t));
    } else {
      h.update(s);
    }
    if (edges > 2) worst = std::fmax(worst, degrees_between(h.electrical_angle(), 0.2 + w * t));
  }
  if (last_speed != nullptr) *last_speed = h.speed();
  return worst;
}

}  // namespace

TEST_CASE_TEMPLATE("hall_sensor: interpolation error below 5 electrical degrees at constant speed", T, q15, q31,
                   float, double) {
  // With an edge-capture timer, over the whole speed range, both directions.
  for (double speed : {0.01, 0.05, 0.2, 0.5, 0.9, -0.3}) {
    T measured{};
    const double worst = constant_speed_error<T>(speed, true, &measured);
    MESSAGE(name<T>(), " at ", speed, " pu, capture timer: max angle error ", worst, " deg, speed ",
            to_double(measured));
    CHECK(worst < 5.0);
    CHECK(to_double(measured) == doctest::Approx(speed).epsilon(2e-3));
  }
  // With the nominal (evenly spaced) table instead of the learned one, the sensors'
  // misplacement shows: an edge is off by up to 3 degrees and a sector's width by up to
  // 5.5 degrees, which also scales the speed by up to 10 %; the angle error stays within
  // their sum, 8.5 degrees. The 5-degree figure needs a learned (or measured) table.
  for (double speed : {0.05, 0.5}) {
    const double worst = constant_speed_error<T>(speed, true, nullptr, 20000, true);
    MESSAGE(name<T>(), " at ", speed, " pu, capture timer, nominal table: max angle error ", worst, " deg");
    CHECK(worst < 8.5);
  }
  // Timed by the sample clock, each edge is placed at the sample after it, and the speed
  // from two such edges is off by up to a sample in the interval: the angle error is up to
  // two samples of travel (18 degrees per sample at 1 pu; measured here 1.2 to 1.6 samples, and
  // up to 1.84 on another invented drive).
  for (double speed : {0.01, 0.05, 0.1, 0.2, 0.5, -0.3}) {
    const double worst = constant_speed_error<T>(speed, false);
    const double samples = worst / (18.0 * std::fabs(speed));
    MESSAGE(name<T>(), " at ", speed, " pu, sample clock: max angle error ", worst, " deg = ", samples,
            " samples of travel");
    CHECK(samples < 2.0);
  }
}

TEST_CASE_TEMPLATE("hall_sensor: interpolation never runs past the next expected edge", T, q15, q31, float,
                   double) {
  const dqfx::hall_table table = true_table();
  dqfx::hall_sensor<T> h{parameters(table)};
  // Run at 0.2 pu, then the rotor stops dead inside a sector.
  const double w = 0.2 * base_speed;
  double theta = 0.2, t = 0, edge_time = 0;
  std::uint8_t previous = state_at(table, theta);
  int k = 0;
  for (; k < 2000; ++k) {
    t = k * ts;
    theta = 0.2 + w * t;
    const std::uint8_t s = state_at(table, theta);
    if (s != previous) {
      edge_time = t;  // within a sample: good enough here
      previous = s;
    }
    h.update(s, ticks_of(edge_time), ticks_of(t));
  }
  const std::uint8_t stopped_in = h.state();
  // The next expected edge going forward is the start of the next state in the sequence.
  std::size_t at = 0;
  while (sequence[at] != stopped_in) ++at;
  const dqfx::angle next_edge = table.start[sequence[(at + 1) % 6]];
  for (int n = 0; n < 30000; ++n, ++k) {
    t = k * ts;
    h.update(stopped_in, ticks_of(edge_time), ticks_of(t));
    // Never past the edge: the remaining distance to it stays >= 0 (signed, forward).
    CHECK(dqfx::difference(next_edge, h.electrical_angle()) >= 0);
    CHECK(to_double(h.speed()) >= 0.0);
  }
  // Standing still: speed 0, the middle of the sector, direction unknown.
  CHECK(h.speed() == T{});
  CHECK(h.direction() == 0);
  const double middle = (table.start[stopped_in] + dqfx::angle::from_raw((next_edge - table.start[stopped_in]).raw() / 2)).degrees();
  CHECK(h.electrical_angle().degrees() == doctest::Approx(middle).epsilon(1e-6));
}

TEST_CASE_TEMPLATE("hall_sensor: direction, and the speed decays as a bound when edges are late", T, q15, q31,
                   float, double) {
  T measured{};
  constant_speed_error<T>(-0.2, true, &measured, 4000);
  CHECK(to_double(measured) < -0.19);
  const dqfx::hall_table table = true_table();
  dqfx::hall_sensor<T> h{parameters(table)};
  // Two forward edges, 1 ms apart, across the sector of state 3 (from 1 to 3 to 2).
  h.update(1, 0, 0);
  h.update(3, ticks_of(0.0001), ticks_of(0.0001));
  h.update(2, ticks_of(0.0011), ticks_of(0.0011));
  CHECK(h.direction() == 1);
  const double width = (table.start[2] - table.start[3]).radians();
  CHECK(to_double(h.speed()) == doctest::Approx(width / 0.001 / base_speed).epsilon(1e-3));
  // 3 ms later still no edge: the speed is at most the sector's width over 3 ms.
  h.update(2, ticks_of(0.0011), ticks_of(0.0041));
  const double room = (table.start[6] - table.start[2]).radians();
  CHECK(to_double(h.speed()) == doctest::Approx(room / 0.003 / base_speed).epsilon(1e-3));
  // Reversal: back into 3 gives the edge angle exactly and an unknown speed (0).
  h.update(3, ticks_of(0.005), ticks_of(0.005));
  CHECK(h.electrical_angle() == table.start[2]);
  CHECK(h.speed() == T{});
  CHECK(h.direction() == 0);
}

TEST_CASE_TEMPLATE("hall_sensor: invalid states and impossible jumps are flagged and the estimate holds", T, q15,
                   q31, float, double) {
  const dqfx::hall_table table = true_table();
  dqfx::hall_sensor<T> h{parameters(table, 0.0)};
  const double w = 0.1 * base_speed;
  for (int k = 0; k < 3000; ++k) h.update(state_at(table, w * k * ts));
  const dqfx::angle held_angle = h.electrical_angle();
  const T held_speed = h.speed();
  const std::uint8_t held_state = h.state();
  for (std::uint8_t bad : {std::uint8_t{0}, std::uint8_t{7}}) {
    h.update(bad);
    CHECK(h.bad_state());
    CHECK(h.fault());
    CHECK(h.electrical_angle() == held_angle);
    CHECK(h.speed() == held_speed);
    CHECK(h.state() == held_state);
  }
  // A jump to the opposite state (180 degrees) for one sample: flagged and held.
  std::size_t at = 0;
  while (sequence[at] != held_state) ++at;
  const std::uint8_t opposite = sequence[(at + 3) % 6];
  h.update(opposite);
  CHECK(h.bad_state());
  CHECK(h.electrical_angle() == held_angle);
  CHECK(h.speed() == held_speed);
  h.update(held_state);  // the glitch is over
  CHECK_FALSE(h.bad_state());
  // Seen twice in a row it is real: restart there as from standstill.
  h.update(opposite);
  h.update(opposite);
  CHECK_FALSE(h.bad_state());
  CHECK(h.state() == opposite);
  CHECK(h.speed() == T{});
  h.clear_faults();
  CHECK_FALSE(h.fault());
}

TEST_CASE("hall_sensor: tables that are not six sectors of 20..100 degrees are refused") {
  dqfx::hall_table t = true_table();
  t.start[3] = t.start[1];  // two states beginning at one angle
  CHECK(dqfx::hall_sensor<q15>{parameters(t)}.parameter_fault());
  t = true_table();
  t.start[2] = t.start[3] + dqfx::angle::from_degrees(10);
  CHECK(dqfx::hall_sensor<float>{parameters(t)}.parameter_fault());
  constexpr dqfx::hall_sensor<q31> good{dqfx::hall_parameters{
      dqfx::hall_table::evenly(sequence, dqfx::angle::from_degrees(-30)), base_speed, ts, 0.0, 0.005}};
  static_assert(!good.parameter_fault());
}

namespace {

// Forced slow rotation for learning: the field turns at `rate` (rad per sample) and the
// rotor lags it by `lag` (rad) in the direction of motion (friction), invented.
dqfx::hall_learner::result_type learn(bool both_ways, double lag, bool glitch = false) {
  const dqfx::hall_table table = true_table();
  dqfx::hall_learner learner;
  const double rate = two_pi / 4000;  // one electrical turn in 0.2 s
  double forced = 0;
  for (int k = 0; k < 8000; ++k) {  // two turns forward
    forced += rate;
    const std::uint8_t s = glitch && k == 3000 ? 7 : state_at(table, forced - lag);
    learner.observe(dqfx::angle::from_radians(forced), s);
  }
  if (both_ways) {
    for (int k = 0; k < 8000; ++k) {  // and two back
      forced -= rate;
      learner.observe(dqfx::angle::from_radians(forced), state_at(table, forced + lag));
    }
  }
  return learner.result();
}

}  // namespace

TEST_CASE("hall_learner: learns the table from a forced slow rotation, the lag cancelled both ways") {
  const dqfx::hall_table truth = true_table();
  const double lag = 4.0 * reference::pi / 180;
  const dqfx::hall_learner::result_type both = learn(true, lag);
  CHECK(both.ok);
  double worst = 0;
  for (std::uint8_t s : sequence) worst = std::fmax(worst, std::fabs(dqfx::difference(both.table.start[s], truth.start[s]) * 360.0 / 4294967296.0));
  MESSAGE("learned both ways: max edge error ", worst, " deg (forced step 0.09 deg, lag 4 deg)");
  CHECK(worst < 0.1);
  // One way only: the lag stays in the table.
  const dqfx::hall_learner::result_type one = learn(false, lag);
  CHECK(one.ok);
  for (std::uint8_t s : sequence) {
    CHECK(dqfx::difference(one.table.start[s], truth.start[s]) * 360.0 / 4294967296.0 == doctest::Approx(4.0).epsilon(0.03));
  }
  // The learned table drives the sensor as well as the true one.
  dqfx::hall_sensor<q15> h{parameters(both.table)};
  CHECK_FALSE(h.parameter_fault());
  // An invalid state seen during learning is counted.
  CHECK(learn(true, lag, true).invalid == 1);
  // Too little rotation: not every boundary seen.
  dqfx::hall_learner short_run;
  for (int k = 0; k < 100; ++k) short_run.observe(dqfx::angle::from_degrees(k * 0.5), state_at(truth, k * 0.5 * reference::pi / 180));
  CHECK_FALSE(short_run.result().ok);
}

TEST_CASE_TEMPLATE("hall_sensor: on the simulator's Hall signals (dqfx::sim)", T, q15, float) {
  // The simulator of issue 6 places sensor a high over [0, 180) electrical degrees, b over
  // [120, 300), c over [240, 60), late by `offset`: forward order 5, 1, 3, 2, 6, 4 from 0.
  dqfx::sim::hall_parameters hp{};
  hp.offset = 2.0 * reference::pi / 180;  // invented placement error
  const dqfx::hall_table table = dqfx::hall_table::evenly({5, 1, 3, 2, 6, 4}, dqfx::angle::from_degrees(2.0));
  dqfx::hall_sensor<T> h{parameters(table, 0.0)};
  REQUIRE_FALSE(h.parameter_fault());
  const double w = 0.05 * base_speed;
  double worst = 0;
  for (int k = 0; k < 20000; ++k) {
    const double theta = 0.3 + w * k * ts;
    h.update(dqfx::sim::hall_state(hp, theta));
    CHECK_FALSE(h.bad_state());
    if (k > 2000) worst = std::fmax(worst, degrees_between(h.electrical_angle(), theta));
  }
  MESSAGE(name<T>(), " on dqfx::sim::hall_state at 0.05 pu (sample clock): max angle error ", worst, " deg");
  CHECK(worst < 5.0);
}
