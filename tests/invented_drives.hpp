// SPDX-License-Identifier: MIT
#pragma once
// Three invented drives that span the range (DESIGN.md, "How we test closed-loop
// behaviour"): low inductance and high speed, high inductance and slow, strongly salient.
// None is a real product. Bases leave the bus voltage below 1 per unit.

#include <cstdint>

#include "dqfx/current_loop.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/speed_regulator.hpp"
#include "dqfx_sim/sim.hpp"

namespace dqfx_test {

namespace sim = dqfx::sim;
using sim::pi;

/// A drive for the tests: plant, bases and loop design (all invented, not real products).
struct test_drive {
  const char* label = "";
  sim::plant_parameters plant{};
  dqfx::per_unit_base base{};
  double current_bandwidth = 0, speed_bandwidth = 0, current_limit = 0;
  unsigned divider = 8;
};

inline sim::plant_parameters common_plant(double pwm, double bus, double amps_per_code, std::uint32_t counts) {
  sim::plant_parameters p;
  p.inverter.pwm_frequency = pwm;
  p.inverter.current_band = 0.5;
  p.bus.source_voltage = bus;
  p.adc.bits = 12;
  p.adc.amps_per_code = amps_per_code;
  p.adc.noise_codes = 1.0;
  p.encoder.counts_per_turn = counts;
  return p;
}

/// Low inductance, high speed: 25 uH, 2 mWb, 2 pole pairs, 24 V, 40 kHz.
inline test_drive fast_drive() {
  test_drive d{"low-L high-speed"};
  d.plant = common_plant(40e3, 24.0, 0.03, 4096);
  d.plant.motor = {0.04, 25e-6, 25e-6, 0.002, 2, 4e-6, 0.0};
  d.plant.inverter.dead_time = 0.3e-6;
  d.base = {60.0, 32.0, 2 * pi * 1200, 2};
  d.current_bandwidth = 2 * pi * 2000;
  d.speed_bandwidth = 2 * pi * 50;
  d.current_limit = 30.0;
  return d;
}

/// High inductance, slow: 12 mH, 0.15 Wb, 5 pole pairs, 320 V, 8 kHz.
inline test_drive slow_drive() {
  test_drive d{"high-L slow"};
  d.plant = common_plant(8e3, 320.0, 0.005, 2048);
  d.plant.motor = {1.5, 12e-3, 12e-3, 0.15, 5, 3e-3, 1e-3};
  d.plant.inverter.dead_time = 1e-6;
  d.base = {10.0, 400.0, 2 * pi * 220, 5};
  d.current_bandwidth = 2 * pi * 400;
  d.speed_bandwidth = 2 * pi * 10;
  d.current_limit = 6.0;
  return d;
}

/// Strongly salient (interior magnets, Lq/Ld = 3.5): 48 V, 16 kHz, inverting amplifier.
inline test_drive salient_drive() {
  test_drive d{"salient"};
  d.plant = common_plant(16e3, 48.0, -0.02, 8192);
  d.plant.motor = {0.1, 120e-6, 420e-6, 0.006, 4, 6e-5, 0.0};
  d.plant.inverter.dead_time = 0.5e-6;
  d.base = {40.0, 100.0, 2 * pi * 800, 4};  // per-unit Lq 0.84: below 1, as the design check asks
  d.current_bandwidth = 2 * pi * 800;
  d.speed_bandwidth = 2 * pi * 25;
  d.current_limit = 25.0;
  return d;
}

inline dqfx::pm_motor_data motor_data(const test_drive& d) {
  const sim::motor_parameters& m = d.plant.motor;
  return {m.resistance, m.ld, m.lq, m.flux};
}

inline dqfx::speed_regulator_parameters speed_design(const test_drive& d, double weighting) {
  const sim::motor_parameters& m = d.plant.motor;
  dqfx::speed_loop_data s{};
  s.inertia = m.inertia;
  s.flux = m.flux;
  s.bandwidth = d.speed_bandwidth;
  s.ratio = 3.0;
  s.sample_time = d.divider / d.plant.inverter.pwm_frequency;
  s.torque_limit = 1.5 * m.pole_pairs * m.flux * d.current_limit;
  s.weighting = weighting;
  return dqfx::design_speed_regulator(d.base, s);
}

constexpr double capture_clock = 10e6;  // Hz, an invented edge-capture timer

/// The drive's encoder: the simulator's counter (32 bits), edge times through a capture
/// timer of `capture_clock`, speed filtered at 8 times the speed-loop crossover, a stuck
/// counter found from the torque limit's acceleration.
inline dqfx::encoder_parameters encoder_for(const test_drive& d) {
  dqfx::encoder_parameters e{};
  e.counts_per_turn = d.plant.encoder.counts_per_turn;
  e.pole_pairs = d.plant.motor.pole_pairs;
  e.counter_period = 0;
  e.base_speed = d.base.base_speed;
  e.sample_time = 1 / d.plant.inverter.pwm_frequency;
  e.tick_frequency = capture_clock;
  e.filter_bandwidth = 8 * d.speed_bandwidth;
  // Twice the fastest the torque limit can accelerate the rotor: a frozen counter is stuck.
  const sim::motor_parameters& m = d.plant.motor;
  const double torque = 1.5 * m.pole_pairs * m.flux * d.current_limit;
  e.max_acceleration = 2 * torque / m.inertia * m.pole_pairs / d.base.base_speed;
  return e;
}

/// One period's reading of the simulator's encoder counter and capture timer.
template <class Encoder>
void read_encoder(Encoder& e, const sim::readings& r) {
  const auto ticks = [](double t) { return static_cast<std::uint32_t>(static_cast<std::uint64_t>(t * capture_clock)); };
  e.update(r.encoder_count, ticks(r.encoder_edge_time < 0 ? 0.0 : r.encoder_edge_time), ticks(r.time));
}

}  // namespace dqfx_test
