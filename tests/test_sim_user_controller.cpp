// SPDX-License-Identifier: MIT
// Worked example (docs/simulator.md): your own controller under the simulator in a doctest test.
// `my_controller` stands for the code you ship: your number type, scaling and kernels.
// The test gives it a motor, a board and a scenario, runs it, and judges the recording.
// The motor and board data are invented.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>

#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx_sim/sim.hpp"

namespace {

namespace sim = dqfx::sim;
using number = dqfx::q15;  // the type your firmware ships
constexpr double pi = 3.14159265358979323846;
constexpr double pwm_hz = 20e3;

// Your drive's data (invented): motor, per-unit bases, gains; all computed at compile time.
constexpr dqfx::pm_motor_data motor{0.2, 300e-6, 300e-6, 0.008};  // ohm, H, H, Wb
constexpr dqfx::per_unit_base base{20.0, 40.0, 2 * pi * 500, 4};   // A, V, electrical rad/s, pole pairs
constexpr dqfx::current_loop_parameters current_gains =
    dqfx::design_current_loop(base, motor, 2 * pi * 500, 1 / pwm_hz);
constexpr dqfx::pi_parameters speed_gains = [] {
  const double inertia = 1e-4, torque_constant = 1.5 * 4 * motor.flux;
  dqfx::pi_parameters p = base.speed_regulator(
      dqfx::symmetric_optimum_speed_loop(inertia, torque_constant, 2 * pi * 30, 10 / pwm_hz, 3.0));
  p.lower = -0.5;  // +/-10 A of iq
  p.upper = 0.5;
  return p;
}();

// The encoder: 4096 counts per turn on a free-running 32-bit counter, speed by counting
// over 16 periods above 2% of the base speed and by edge timing below, a 300 Hz filter.
constexpr dqfx::encoder_parameters encoder_design = [] {
  dqfx::encoder_parameters e{};
  e.counts_per_turn = 4096;
  e.pole_pairs = 4;
  e.counter_period = 0;  // 2^32
  e.base_speed = base.base_speed;
  e.sample_time = 1 / pwm_hz;
  e.switch_speed = 0.02;
  e.filter_bandwidth = 2 * pi * 300;
  return e;
}();

// Your controller: the current loop every PWM period, the speed loop every 10th, angle and
// speed from the library's encoder, the currents from 12-bit ADC codes (10 mA per code),
// the bus voltage from the reading, checked. Its own fault goes to the probe, so that the
// simulator records it per period.
class my_controller {
 public:
  dqfx::phases<number> operator()(const sim::readings& r, const sim::command& c, sim::probe& probe) {
    encoder_.update(r.encoder_count);
    if (period_++ % 10 == 0) {
      const number setpoint = dqfx::from_double<number>(c.speed * 4 / base.base_speed);
      iq_ = speed_loop_.step(setpoint - encoder_.speed());
    }
    // A reading that is NaN, infinite or beyond the type is reported, not read as 0 V.
    const dqfx::checked<number> bus = dqfx::checked_from_double<number>(r.bus_voltage / base.base_voltage);
    dqfx::current_loop_input<number> in;
    in.current = {adc_.current(r.current_code[0]), adc_.current(r.current_code[1]), adc_.current(r.current_code[2])};
    in.rotor = dqfx::sincos_of<number>(encoder_.electrical_angle());
    in.speed = encoder_.speed();
    in.setpoint = {number{}, iq_};
    in.bus_voltage = bus.value;
    const dqfx::current_loop_output<number> out = current_loop_.step(in);
    probe.angle = encoder_.electrical_angle().radians();  // recorded beside the true angle
    probe.iq_setpoint = dqfx::to_double(iq_) * base.base_current;
    probe.speed = dqfx::to_double(encoder_.speed()) * base.mechanical_speed();
    probe.fault = out.fault || !bus.ok() || encoder_.jump();
    return out.duty;
  }

 private:
  dqfx::current_loop<number> current_loop_{current_gains};
  dqfx::pi_regulator<number, dqfx::conditional_integration> speed_loop_{speed_gains};
  dqfx::encoder<number> encoder_{encoder_design};
  dqfx::current_channel<number> adc_ = dqfx::current_channel<number>::from_amplifier({12, 0}, 0.01, base.base_current);
  number iq_{};
  unsigned period_ = 0;
};

}  // namespace

TEST_CASE("my q15 controller: 1500 rpm within 2% in 60 ms, and holds it under a 0.3 N m load") {
  sim::plant_parameters board;  // the motor and board (invented)
  board.motor = {0.2, 300e-6, 300e-6, 0.008, 4, 1e-4, 1e-5};  // R, Ld, Lq, psi, pole pairs, J, B
  board.inverter.pwm_frequency = pwm_hz;
  board.inverter.dead_time = 300e-9;
  board.bus.source_voltage = 24.0;
  board.adc.amps_per_code = 0.01;
  board.adc.noise_codes = 1.0;
  board.encoder.counts_per_turn = 4096;

  const double target = 1500 * 2 * pi / 60;  // mechanical rad/s
  sim::scenario s;
  s.duration = 0.3;
  s.speed.step(0.01, target);
  s.load.step(0.15, 0.3);  // N m

  const sim::run_result r = sim::run(board, s, my_controller{});
  REQUIRE_MESSAGE(r.outcome.ok(), r.outcome.message());
  CHECK_MESSAGE(r.controller_status().ok(), r.controller_status().message());

  const sim::step_figures start = sim::step_response(r.records, &sim::record::speed, 0.01, 0.15, target);
  CHECK(start.settling_time < 0.06);
  CHECK(start.overshoot < 0.05);
  const sim::disturbance_figures load = sim::disturbance_response(r.records, &sim::record::speed, 0.15, 0.3, target);
  CHECK(load.largest_deviation > -0.1 * target);
  CHECK(std::fabs(load.steady_state_error) < 0.01 * target);
  CHECK(sim::ripple(r.records, &sim::record::iq, 0.25, 0.3).rms < 0.5);  // A
  CHECK(sim::angle_error(r.records, 0.01, 0.3).largest_degrees < 1.0);   // electrical
}

TEST_CASE("The simulator records the controller's own fault per period and says from when") {
  // A controller that never sets the bus voltage: the current loop faults every period.
  auto forgetful = [loop = dqfx::current_loop<number>{current_gains}](const sim::readings&, const sim::command&,
                                                                       sim::probe& probe) mutable {
    const dqfx::current_loop_output<number> out = loop.step(dqfx::current_loop_input<number>{});
    probe.fault = out.fault;
    return out.duty;
  };
  sim::plant_parameters board;
  board.motor = {0.2, 300e-6, 300e-6, 0.008, 4, 1e-4, 1e-5};
  board.inverter.pwm_frequency = pwm_hz;
  board.bus.source_voltage = 24.0;
  board.adc.amps_per_code = 0.01;
  board.encoder.counts_per_turn = 4096;
  sim::scenario s;
  s.duration = 0.01;
  const sim::run_result r = sim::run(board, s, forgetful);
  REQUIRE(r.outcome.ok());  // the plant is fine: 50% duties
  CHECK(r.periods_run == 200);
  CHECK(r.controller_faults == 200);
  CHECK(r.records.front().controller_fault);
  CHECK_FALSE(r.controller_status().ok());
  CHECK(r.controller_status().message() == "controller fault from t = 0 s to t = 0.00995 s, 200 of 200 periods");
}
