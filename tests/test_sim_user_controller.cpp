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

// Your controller: the current loop every PWM period, the speed loop every 10th, the angle
// from a 4096-count encoder, the currents from 12-bit ADC codes (10 mA per code).
class my_controller {
 public:
  dqfx::phases<number> operator()(const sim::readings& r, const sim::command& c, sim::probe& probe) {
    const dqfx::angle rotor = dqfx::electrical(dqfx::angle::from_raw(r.encoder_count << 20), 4);
    if (period_++ % 10 == 0) {
      // Half-turns travelled in 0.5 ms, times 2.0, is the electrical speed in per unit.
      const std::int32_t moved = dqfx::difference(rotor, last_);
      last_ = rotor;
      speed_ = number::from_raw(static_cast<std::int16_t>(moved / 65536)) * speed_scale_;
      const number setpoint = dqfx::from_double<number>(c.speed * 4 / base.base_speed);
      iq_ = speed_loop_.step(setpoint - speed_);
    }
    dqfx::current_loop_input<number> in;
    in.current = {adc_.current(r.current_code[0]), adc_.current(r.current_code[1]), adc_.current(r.current_code[2])};
    in.rotor = dqfx::sincos_of<number>(rotor);
    in.speed = speed_;
    in.setpoint = {number{}, iq_};
    in.bus_voltage = dqfx::from_double<number>(24.0 / base.base_voltage);
    probe.angle = rotor.radians();  // recorded beside the true angle
    probe.iq_setpoint = dqfx::to_double(iq_) * base.base_current;
    return current_loop_.step(in).duty;
  }

 private:
  dqfx::current_loop<number> current_loop_{current_gains};
  dqfx::pi_regulator<number, dqfx::conditional_integration> speed_loop_{speed_gains};
  dqfx::current_channel<number> adc_ = dqfx::current_channel<number>::from_amplifier({12, 0}, 0.01, base.base_current);
  dqfx::gain<number> speed_scale_ = dqfx::gain<number>::from_double(pi / (10 / pwm_hz) / base.base_speed);
  dqfx::angle last_{};
  number speed_{}, iq_{};
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

  const sim::step_figures start = sim::step_response(r.records, &sim::record::speed, 0.01, 0.15, target);
  CHECK(start.settling_time < 0.06);
  CHECK(start.overshoot < 0.05);
  const sim::disturbance_figures load = sim::disturbance_response(r.records, &sim::record::speed, 0.15, 0.3, target);
  CHECK(load.largest_deviation > -0.1 * target);
  CHECK(std::fabs(load.steady_state_error) < 0.01 * target);
  // One encoder count in 0.5 ms is 3 rad/s: the coarse speed shows in iq.
  CHECK(sim::ripple(r.records, &sim::record::iq, 0.25, 0.3).rms < 0.5);  // A
  CHECK(sim::angle_error(r.records, 0.01, 0.3).largest_degrees < 1.0);   // electrical
}
