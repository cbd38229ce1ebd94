// SPDX-License-Identifier: MIT
// The speed loop (speed_regulator.hpp) in closed loop on the simulator, on three invented
// drives that span the range, in q15, q31, float and double, with the one-period PWM delay,
// dead time, ADC noise and quantisation: the symmetric optimum's designed overshoot of a
// speed step, and how much of it set-point weighting removes.
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/speed_regulator.hpp"
#include "dqfx/torque_setpoint.hpp"
#include "dqfx_sim/sim.hpp"
#include "test_support.hpp"

namespace {

namespace sim = dqfx::sim;
using dqfx::q15;
using dqfx::q31;
using dqfx_test::name;
using sim::pi;

/// A drive for the tests: plant, bases and loop design (all invented, not real products).
struct test_drive {
  const char* label = "";
  sim::plant_parameters plant{};
  dqfx::per_unit_base base{};
  double current_bandwidth = 0, speed_bandwidth = 0, current_limit = 0;
  unsigned divider = 8;
};

sim::plant_parameters common_plant(double pwm, double bus, double amps_per_code, std::uint32_t counts) {
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
test_drive fast_drive() {
  test_drive d{"low-L high-speed"};
  d.plant = common_plant(40e3, 24.0, 0.03, 4096);
  d.plant.motor = {0.04, 25e-6, 25e-6, 0.002, 2, 4e-6, 0.0};
  d.plant.inverter.dead_time = 0.3e-6;
  d.base = {60.0, 24.0, 2 * pi * 1200, 2};
  d.current_bandwidth = 2 * pi * 2000;
  d.speed_bandwidth = 2 * pi * 50;
  d.current_limit = 30.0;
  return d;
}

/// High inductance, slow: 12 mH, 0.15 Wb, 5 pole pairs, 320 V, 8 kHz.
test_drive slow_drive() {
  test_drive d{"high-L slow"};
  d.plant = common_plant(8e3, 320.0, 0.005, 2048);
  d.plant.motor = {1.5, 12e-3, 12e-3, 0.15, 5, 3e-3, 1e-3};
  d.plant.inverter.dead_time = 1e-6;
  d.base = {10.0, 320.0, 2 * pi * 220, 5};
  d.current_bandwidth = 2 * pi * 400;
  d.speed_bandwidth = 2 * pi * 10;
  d.current_limit = 6.0;
  return d;
}

/// Strongly salient (interior magnets, Lq/Ld = 3.5): 48 V, 16 kHz, inverting amplifier.
test_drive salient_drive() {
  test_drive d{"salient"};
  d.plant = common_plant(16e3, 48.0, -0.02, 8192);
  d.plant.motor = {0.1, 120e-6, 420e-6, 0.006, 4, 6e-5, 0.0};
  d.plant.inverter.dead_time = 0.5e-6;
  d.base = {40.0, 60.0, 2 * pi * 800, 4};
  d.current_bandwidth = 2 * pi * 800;
  d.speed_bandwidth = 2 * pi * 25;
  d.current_limit = 25.0;
  return d;
}

dqfx::pm_motor_data motor_data(const test_drive& d) {
  const sim::motor_parameters& m = d.plant.motor;
  return {m.resistance, m.ld, m.lq, m.flux};
}

dqfx::speed_regulator_parameters speed_design(const test_drive& d, double weighting) {
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

/// Encoder angle and speed, speed loop every `divider` periods, MTPA, current loop.
template <class T>
struct speed_controller {
  test_drive d;
  dqfx::encoder<T> encoder;
  dqfx::current_channel<T> channel;
  dqfx::current_loop<T> loop;
  dqfx::speed_regulator<T> speed;
  dqfx::torque_setpoint<T> mtpa;
  dqfx::rotating<T> setpoint{};
  unsigned count = 0;

  static dqfx::encoder_parameters encoder_design(const test_drive& d) {
    dqfx::encoder_parameters e{};
    e.counts_per_turn = d.plant.encoder.counts_per_turn;
    e.pole_pairs = d.plant.motor.pole_pairs;
    e.counter_period = 0;
    e.base_speed = d.base.base_speed;
    e.sample_time = 1 / d.plant.inverter.pwm_frequency;
    e.tick_frequency = capture_clock;
    e.filter_bandwidth = 8 * d.speed_bandwidth;
    return e;
  }

  speed_controller(const test_drive& drive, double weighting)
      : d{drive},
        encoder{encoder_design(drive)},
        channel{dqfx::current_channel<T>::from_amplifier({drive.plant.adc.bits, 0}, drive.plant.adc.amps_per_code,
                                                         drive.base.base_current)},
        loop{dqfx::design_current_loop(drive.base, motor_data(drive), drive.current_bandwidth,
                                       1 / drive.plant.inverter.pwm_frequency)},
        speed{speed_design(drive, weighting)},
        mtpa{dqfx::design_torque_setpoint(drive.base, motor_data(drive), drive.current_limit)} {}

  dqfx::phases<T> operator()(const sim::readings& r, const sim::command& c, sim::probe& p) {
    // The simulator's edge capture read as a timer of `capture_clock` (wrapping at 2^32).
    const auto ticks = [](double t) { return static_cast<std::uint32_t>(static_cast<std::uint64_t>(t * capture_clock)); };
    encoder.update(r.encoder_count, ticks(r.encoder_edge_time < 0 ? 0.0 : r.encoder_edge_time), ticks(r.time));
    const T bus = dqfx::from_double<T>(r.bus_voltage / d.base.base_voltage);
    if (count++ % d.divider == 0) {
      const T target = dqfx::from_double<T>(c.speed * d.base.pole_pairs / d.base.base_speed);
      const T torque = speed.step(target, encoder.speed());
      setpoint = mtpa(torque, encoder.speed(), bus).current;
    }
    dqfx::current_loop_input<T> in;
    in.current = {channel.current(r.current_code[0]), channel.current(r.current_code[1]),
                  channel.current(r.current_code[2])};
    in.rotor = dqfx::sincos_of<T>(encoder.electrical_angle());
    in.speed = encoder.speed();
    in.setpoint = setpoint;
    in.bus_voltage = bus;
    p.iq_setpoint = dqfx::to_double(setpoint.q) * d.base.base_current;
    p.speed = dqfx::to_double(encoder.speed()) * d.base.base_speed / d.base.pole_pairs;
    return loop.step(in).duty;
  }
};

/// Overshoot (fraction of the step) of the true speed after a step at 0.02 s to a speed
/// where the b = 1 regulator's first torque is 30 % of the limit (no saturation).
template <class T>
sim::step_figures speed_step(const test_drive& d, double weighting) {
  const dqfx::speed_regulator_parameters plain = speed_design(d, 1.0);
  const double step = 0.3 * plain.pi.upper / plain.pi.kp * d.base.base_speed / d.base.pole_pairs;  // mech rad/s
  const double settle = 10 * 3.0 / d.speed_bandwidth;
  sim::scenario s;
  s.duration = 0.02 + settle;
  s.speed = sim::profile{0.0}.step(0.02, step);
  speed_controller<T> c{d, weighting};
  const sim::run_result r = sim::run(d.plant, s, c);
  REQUIRE(r.outcome.ok());
  return sim::step_response(r.records, &sim::record::speed, 0.02, s.duration, step, 0.05);
}

}  // namespace

// Symmetric optimum (Kessler 1958; gain_design.hpp) overshoots a reference step by design;
// set-point weighting (Astrom and Hagglund, "Advanced PID Control", 2006) with b = 0 removes
// most of it, without changing the loop (same gains, same load response).
TEST_CASE_TEMPLATE("speed loop on the simulator: set-point weighting removes the designed overshoot", T, q15, q31,
                   float, double) {
  for (const test_drive& d : {fast_drive(), slow_drive(), salient_drive()}) {
    const sim::step_figures plain = speed_step<T>(d, 1.0);
    const sim::step_figures half = speed_step<T>(d, 0.5);
    const sim::step_figures weighted = speed_step<T>(d, 0.0);
    MESSAGE(name<T>(), " ", std::string{d.label}, ": overshoot b=1 ", 100 * plain.overshoot, " %, b=0.5 ",
            100 * half.overshoot, " %, b=0 ", 100 * weighted.overshoot, " %; settling (5 %) ",
            plain.settling_time * 1e3, " / ", half.settling_time * 1e3, " / ", weighted.settling_time * 1e3, " ms");
    // Measured (all types, a = 3): b = 1 21.5 to 22.2 %, b = 0 below 0.25 %.
    CHECK(plain.overshoot > 0.15);
    CHECK(half.overshoot < plain.overshoot);
    CHECK(weighted.overshoot < 0.02);
    CHECK(std::fabs(weighted.steady_state_error) < 0.05 * std::fabs(weighted.target));
  }
}
