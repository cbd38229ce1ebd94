// SPDX-License-Identifier: MIT
// Fuzz harness: the angle and speed estimators (tracking PLL, incremental encoder, Hall
// sensors, flux observer) under any design parameters and any sequence of readings.
// Invariants: no undefined behaviour; speeds (and the observer's flux) never NaN, for any
// design and any input; a design outside the documented rules raises `parameter_fault()`;
// a non-finite float input raises the input fault and never reaches the estimate; the PLL's error is the wrapped
// difference between the reading and its prediction, exactly; an encoder jump or an
// invalid Hall state raises the sample flag and the sticky fault and holds angle and
// speed; an encoder's position stays inside the turn; an encoder on a shaft within
// max_speed takes every true reading, rejects every glitch outside its window and gives
// the exact position for each accepted reading.
#include <array>
#include <cmath>

#include "dqfx/encoder.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/hall.hpp"
#include "dqfx/tracking_pll.hpp"
#include "fuzz_input.hpp"

namespace {

using namespace dqfx_fuzz;

/// A design parameter: sometimes any double, mostly a positive value of sensible size.
double parameter(byte_reader& in, double typical) {
  if (in.choice(8) == 0) return in.any_double();
  return typical * std::ldexp(1.0 + std::fabs(in.unit<double>()), static_cast<int>(in.choice(12)) - 6);
}

template <class T>
bool not_nan(T v) {
  if constexpr (dqfx::is_fixed_v<T>) {
    return true;
  } else {
    return v == v;
  }
}

/// The estimators' shared design rule, computed here in long double: the base speed moves
/// at least one binary-angle unit (2^-32 turn) and less than half a turn per sample. True
/// when the design clearly breaks it (a margin of 0.1 % keeps rounding at the edges out).
bool breaks_speed_scale(double base_speed, double sample_time) {
  const long double units = static_cast<long double>(base_speed) * sample_time * 683565275.57643158978L;
  return !(units >= 0.999L && units < 2147483648.0L * 1.001L);
}

/// A capture timer that is negative, not a number, or wraps within a sample.
bool breaks_tick_frequency(double tick_frequency, double sample_time) {
  return !(tick_frequency >= 0.0) ||
         static_cast<long double>(tick_frequency) * sample_time >= 4294967296.0L * 1.001L;
}

template <class T>
void pll(byte_reader& in) {
  dqfx::tracking_pll_parameters p{};
  p.natural_frequency = parameter(in, 300.0);
  p.damping = parameter(in, 1.0);
  p.base_speed = parameter(in, 3000.0);
  p.sample_time = parameter(in, 1e-4);
  dqfx::tracking_pll<T> loop{p};
  if (breaks_speed_scale(p.base_speed, p.sample_time)) DQFX_FUZZ_CHECK(loop.parameter_fault());
  const unsigned steps = in.choice(32);
  for (unsigned k = 0; k < steps; ++k) {
    const dqfx::angle before = loop.electrical_angle();
    switch (in.choice(4)) {
      case 0: {
        const dqfx::angle measured = in.angle();
        const dqfx::angle predicted = loop.next();
        loop.update(measured);
        DQFX_FUZZ_CHECK(loop.error() == dqfx::difference(measured, predicted));
        break;
      }
      case 1: {
        const dqfx::sincos<T> measured{in.mostly_unit<T>(), in.mostly_unit<T>()};
        const dqfx::angle predicted = loop.next();
        loop.update(measured);
        if (!is_finite(measured.sin) || !is_finite(measured.cos)) {
          DQFX_FUZZ_CHECK(loop.fault());
          DQFX_FUZZ_CHECK(loop.electrical_angle() == predicted);  // coasts at the held speed
        }
        break;
      }
      case 2: loop.coast(); break;
      default: {
        const dqfx::angle at = in.angle();
        const T speed = in.mostly_unit<T>();
        loop.reset(at, speed);
        DQFX_FUZZ_CHECK(loop.electrical_angle() == at);
        if (!is_finite(speed)) DQFX_FUZZ_CHECK(loop.fault() && loop.speed() == T{});
        break;
      }
    }
    DQFX_FUZZ_CHECK(not_nan(loop.speed()));
    if (loop.parameter_fault() && loop.speed() == T{}) DQFX_FUZZ_CHECK(loop.next() == loop.electrical_angle());
    static_cast<void>(before);
  }
}

template <class T>
void encoder(byte_reader& in) {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = in.flag() ? in.bits<std::uint32_t>() : 4u * (1u + in.bits<std::uint16_t>() % 4096u);
  p.pole_pairs = 1u + in.choice(8);
  p.counter_period = in.flag() ? 65536u : (in.flag() ? 0u : p.counts_per_turn);
  p.offset = in.angle();
  p.base_speed = parameter(in, 3000.0);
  p.sample_time = parameter(in, 1e-4);
  p.tick_frequency = in.flag() ? 0.0 : parameter(in, 1e7);
  p.switch_speed = parameter(in, 0.05);
  p.filter_bandwidth = in.flag() ? 0.0 : parameter(in, 500.0);
  p.max_speed = parameter(in, 1.0);
  dqfx::encoder<T> sensor{p};
  if (breaks_speed_scale(p.base_speed, p.sample_time) || breaks_tick_frequency(p.tick_frequency, p.sample_time)) {
    DQFX_FUZZ_CHECK(sensor.parameter_fault());
  }
  std::uint32_t count = in.bits<std::uint32_t>(), ticks = 0;
  const unsigned steps = in.choice(48);
  for (unsigned k = 0; k < steps; ++k) {
    if (in.choice(32) == 0) sensor.reset();
    const dqfx::angle angle_before = sensor.electrical_angle();
    const T speed_before = sensor.speed();
    count += static_cast<std::uint32_t>(static_cast<std::int32_t>(static_cast<std::int8_t>(in.bits<std::uint8_t>())));
    if (in.choice(16) == 0) count = in.bits<std::uint32_t>();  // a glitch or a real jump
    ticks += in.bits<std::uint16_t>();
    if (in.flag()) {
      sensor.update(count, ticks - in.bits<std::uint8_t>(), ticks);
    } else {
      sensor.update(count);
    }
    DQFX_FUZZ_CHECK(not_nan(sensor.speed()) && not_nan(sensor.raw_speed()));
    if (sensor.jump()) {
      DQFX_FUZZ_CHECK(sensor.fault());
      DQFX_FUZZ_CHECK(sensor.electrical_angle() == angle_before);
      DQFX_FUZZ_CHECK(sensor.speed() == speed_before);
    }
    if (!sensor.parameter_fault()) DQFX_FUZZ_CHECK(sensor.position() < p.counts_per_turn);
  }
}

/// An encoder on a shaft that moves at most `max_step` counts per sample, with glitched
/// readings that lie outside the documented window (max_step per sample since the last
/// good reading). Invariants: a true reading is never rejected; a glitch always is; an
/// accepted reading gives the shaft's position exactly (within half a count of it); the
/// position is lost only after `max_missed()` glitches in a row, and stays lost.
template <class T>
void encoder_tracking(byte_reader& in) {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = 4u * (1u + in.bits<std::uint16_t>() % 4096u);
  p.pole_pairs = 1u + in.choice(8);
  p.counter_period = in.flag() ? 65536u : (in.flag() ? 0u : p.counts_per_turn);
  p.base_speed = 3000.0;
  p.sample_time = 1e-4;
  p.max_speed = 0.05 + 4.0 * std::fabs(in.unit<double>());
  p.max_rejected = 1u + in.choice(64);
  dqfx::encoder<T> sensor{p};
  if (sensor.parameter_fault()) return;
  const std::int64_t reach = sensor.max_step();
  const std::int64_t period = p.counter_period == 0 ? (std::int64_t{1} << 32) : p.counter_period;
  const std::int64_t cpt = p.counts_per_turn;
  auto reading = [&](std::int64_t count) { return static_cast<std::uint32_t>(((count % period) + period) % period); };
  std::int64_t shaft = in.bits<std::uint32_t>(), last_good = shaft;
  sensor.update(reading(shaft));
  const std::int64_t first = reading(shaft) % cpt;
  std::int64_t travelled = 0;
  std::uint32_t missed = 0;
  const unsigned steps = 8u * in.choice(64);
  for (unsigned k = 0; k < steps; ++k) {
    const std::int64_t step = static_cast<std::int64_t>(in.bits<std::uint16_t>() % (2 * reach + 1)) - reach;
    shaft += step;
    travelled += step;
    std::int64_t read = shaft;
    if (in.choice(8) == 0) {
      // A glitch, if it lies outside the window (else it would be motion: skip it).
      const std::int64_t glitched = shaft + static_cast<std::int32_t>(in.bits<std::uint32_t>());
      std::int64_t d = (std::int64_t{reading(glitched)} - std::int64_t{reading(last_good)}) % period;
      if (2 * d >= period) d -= period;
      if (2 * d < -period) d += period;
      if (std::llabs(d) > reach * (missed + 1)) read = glitched;
    }
    const bool was_lost = sensor.lost();
    sensor.update(reading(read));
    if (was_lost) {
      DQFX_FUZZ_CHECK(sensor.lost());
      continue;
    }
    if (read != shaft) {
      DQFX_FUZZ_CHECK(sensor.jump());
      DQFX_FUZZ_CHECK(sensor.lost() == (++missed >= sensor.max_missed()));
      continue;
    }
    DQFX_FUZZ_CHECK(!sensor.jump() && !sensor.lost());
    missed = 0;
    last_good = shaft;
    DQFX_FUZZ_CHECK(sensor.position() == static_cast<std::uint32_t>((((first + travelled) % cpt) + cpt) % cpt));
  }
}

template <class T>
void hall(byte_reader& in) {
  dqfx::hall_parameters p{};
  std::array<std::uint8_t, 6> order{1, 3, 2, 6, 4, 5};
  if (in.flag()) {
    for (auto& s : order) s = static_cast<std::uint8_t>(in.choice(8));  // often not a valid table
  }
  p.table = dqfx::hall_table::evenly(order, in.angle());
  if (in.choice(4) == 0) p.table.start[in.choice(8)] = in.angle();  // a misplaced sensor
  p.base_speed = parameter(in, 3000.0);
  p.sample_time = parameter(in, 1e-4);
  p.tick_frequency = in.flag() ? 0.0 : parameter(in, 1e7);
  p.minimum_speed = parameter(in, 0.005);
  dqfx::hall_sensor<T> sensor{p};
  if (breaks_speed_scale(p.base_speed, p.sample_time) || breaks_tick_frequency(p.tick_frequency, p.sample_time)) {
    DQFX_FUZZ_CHECK(sensor.parameter_fault());
  }
  std::uint32_t ticks = 0;
  unsigned position = in.choice(6);
  const unsigned steps = in.choice(48);
  for (unsigned k = 0; k < steps; ++k) {
    const dqfx::angle angle_before = sensor.electrical_angle();
    const T speed_before = sensor.speed();
    // Mostly a neighbour of the present state, sometimes anything (0 and 7 included).
    const unsigned move = in.choice(8);
    position = (position + (move == 0 ? 5u : (move == 1 ? 1u : 0u))) % 6u;
    const std::uint8_t state = move == 7 ? static_cast<std::uint8_t>(in.bits<std::uint8_t>()) : order[position];
    ticks += in.bits<std::uint16_t>();
    if (in.flag()) {
      sensor.update(state, ticks - in.bits<std::uint8_t>(), ticks);
    } else {
      sensor.update(state);
    }
    DQFX_FUZZ_CHECK(not_nan(sensor.speed()));
    DQFX_FUZZ_CHECK(sensor.direction() >= -1 && sensor.direction() <= 1);
    if ((state & 7u) == 0 || (state & 7u) == 7) DQFX_FUZZ_CHECK(sensor.bad_state() || sensor.parameter_fault());
    if (sensor.bad_state()) {
      DQFX_FUZZ_CHECK(sensor.fault());
      DQFX_FUZZ_CHECK(sensor.electrical_angle() == angle_before);
      DQFX_FUZZ_CHECK(sensor.speed() == speed_before);
    }
  }
}

template <class T>
void observer(byte_reader& in) {
  dqfx::flux_observer_parameters p{};
  p.resistance = parameter(in, 0.05);
  p.ld = parameter(in, 0.1);
  p.lq = in.flag() ? p.ld : parameter(in, 0.12);
  p.flux = parameter(in, 0.5);
  p.convergence_rate = parameter(in, 500.0);
  p.base_speed = parameter(in, 3000.0);
  p.sample_time = parameter(in, 1e-4);
  p.pll_frequency = parameter(in, 300.0);
  p.pll_damping = parameter(in, 1.0);
  p.minimum_speed = parameter(in, 0.05);
  dqfx::flux_observer<T> estimate{p};
  // The radial correction gain is at least Ts * convergence_rate / (2 psi^2) (the state
  // scale is at least 1); beyond the +/-2^30 of a gain the design must be refused.
  const long double correction =
      static_cast<long double>(p.sample_time) * p.convergence_rate / (2.0L * p.flux * p.flux);
  if (breaks_speed_scale(p.base_speed, p.sample_time) || correction > 2147483648.0L) {
    DQFX_FUZZ_CHECK(estimate.parameter_fault());
  }
  const unsigned steps = in.choice(32);
  for (unsigned k = 0; k < steps; ++k) {
    if (in.choice(16) == 0) {
      const dqfx::angle at = in.angle();  // read in order: argument order is unspecified
      const T speed = in.mostly_unit<T>();
      estimate.reset(at, speed);
      if (!is_finite(speed)) DQFX_FUZZ_CHECK(estimate.fault() && estimate.speed() == T{});
    }
    // Any value, finite ones far beyond the per-unit range included.
    const dqfx::stationary<T> i{in.mostly_unit<T>(), in.mostly_unit<T>()};
    const dqfx::stationary<T> v{in.mostly_unit<T>(), in.mostly_unit<T>()};
    estimate.update(i, v);
    const bool finite = is_finite(i.alpha) && is_finite(i.beta) && is_finite(v.alpha) && is_finite(v.beta);
    if (!finite && !estimate.parameter_fault()) DQFX_FUZZ_CHECK(estimate.fault());  // a faulted design ignores input
    DQFX_FUZZ_CHECK(not_nan(estimate.speed()));
    const dqfx::stationary<T> f = estimate.flux();
    DQFX_FUZZ_CHECK(not_nan(f.alpha) && not_nan(f.beta));
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  const unsigned which = in.choice(4);
  with_type(in.choice(4), [&](auto type) {
    using T = decltype(type);
    switch (which) {
      case 0: pll<T>(in); break;
      case 1:
        if (in.flag()) {
          encoder<T>(in);
        } else {
          encoder_tracking<T>(in);
        }
        break;
      case 2: hall<T>(in); break;
      default: observer<T>(in); break;
    }
  });
  return 0;
}
