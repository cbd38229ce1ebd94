// SPDX-License-Identifier: MIT
// Wiring the current-loop step into the PWM interrupt of an invented board (48 V, 20 A,
// 20 kHz, 12-bit ADC, 4-pole-pair motor: all parameters invented). Everything the
// interrupt needs is built at compile time; the handler only reads, steps and writes.
// Builds for the host (main() below plays the interrupt) and for Cortex-M4
// (arm-none-eabi-g++ -c), where `pwm_period_handler` goes into the vector table.
#include <cstdint>
#include <cstdio>

#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/pwm.hpp"
#include "dqfx/sincos.hpp"

namespace {

using number = dqfx::q15;  // q31, float or double: the same code

constexpr double pi = 3.14159265358979323846;
constexpr double sample_time = 50e-6;
constexpr dqfx::per_unit_base base{20.0, 60.0, 2 * pi * 1000, 4};
constexpr dqfx::pm_motor_data motor{0.1, 0.15e-3, 0.2e-3, 0.004};

// Regulator gains, feed-forward constants and limits in per unit, at compile time.
constexpr dqfx::current_loop_parameters parameters =
    dqfx::design_current_loop(base, motor, 2 * pi * 500, sample_time);
constexpr dqfx::adc_format adc{12, 8};
constexpr auto shunt = dqfx::current_channel<number>::from_amplifier(adc, -0.0122, base.base_current);
// Bus voltage: a divider giving 0.0183 V per code, trips below 30 V and above 56 V.
constexpr auto bus = dqfx::voltage_channel<number>::from_divider(adc, 0.0183, base.base_voltage).with_limits(30.0, 56.0);
constexpr dqfx::centre_aligned_pwm timer{2100, 20};
// Rotor angle and speed from the position sensor (here: an encoder angle per period).
constexpr number example_speed = dqfx::from_double<number>(0.2);
constexpr auto speed_step = dqfx::angle_rate<number>::from_base(base.base_speed, sample_time);

// The state the handler owns. A constexpr-constructible loop is constant-initialised:
// no start-up code, no heap.
dqfx::current_loop<number> loop{parameters};
dqfx::angle rotor{};

// What the slow (speed or torque) loop hands over; written outside the interrupt.
volatile std::int16_t iq_setpoint_raw = 0;

// Stand-ins for the hardware registers of the invented board.
struct registers {
  std::uint16_t adc_a = 2048, adc_b = 2048, adc_c = 2048, adc_bus = 2622;
  std::uint32_t compare_a = 0, compare_b = 0, compare_c = 0;
  bool bridge_enabled = true;
} hw;

}  // namespace

/// The PWM period interrupt: sample, regulate, modulate, write.
extern "C" void pwm_period_handler() {
  dqfx::current_loop_input<number> in;
  in.current = {shunt.current(hw.adc_a), shunt.current(hw.adc_b), shunt.current(hw.adc_c)};
  in.speed = example_speed;  // from the speed estimate in a real drive
  rotor = speed_step.advance(rotor, in.speed);
  in.rotor = dqfx::sincos_of<number>(rotor);
  in.setpoint = {number{}, number::from_raw(iq_setpoint_raw)};
  // Integer arithmetic for q15/q31: no double in the interrupt. A missing, railed or
  // out-of-limit reading gives 0, which the loop answers with its fault.
  in.bus_voltage = bus.read({hw.adc_bus, true}).voltage;

  const dqfx::current_loop_output<number> out = loop.step(in);

  const dqfx::phases<std::uint32_t> compare = timer.compare(out.duty);
  hw.compare_a = compare.a;
  hw.compare_b = compare.b;
  hw.compare_c = compare.c;
  if (out.fault) hw.bridge_enabled = false;  // bad bus voltage: stop switching
}

int main() {
  iq_setpoint_raw = dqfx::from_double<number>(0.25).raw();
  for (int k = 0; k < 5; ++k) {
    pwm_period_handler();
    std::printf("period %d: compare %u %u %u of %u\n", k, static_cast<unsigned>(hw.compare_a),
                static_cast<unsigned>(hw.compare_b), static_cast<unsigned>(hw.compare_c),
                static_cast<unsigned>(timer.period));
  }
  return hw.bridge_enabled ? 0 : 1;
}
