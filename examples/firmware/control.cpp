// SPDX-License-Identifier: MIT
// The PWM-period interrupt of the firmware. Everything it owns is built at compile time
// from drive.hpp and constant-initialised (no constructor runs at start-up, no heap), and
// the interrupt uses integer arithmetic only: no float, no double, no soft-float helper
// (the test `firmware.no_float.*` checks the image for that).
#include "control.hpp"

#include "board.hpp"
#include "dqfx/angle.hpp"
#include "dqfx/sincos.hpp"

namespace {

using number = drive::number;
using raw_type = number::raw_type;

// Conversions: ADC codes to per-unit currents and bus voltage, duties to compare values.
constexpr auto phase_channel =
    dqfx::current_channel<number>::from_amplifier(drive::adc, drive::amps_per_code, drive::base.base_current);
constexpr auto bus_channel =
    dqfx::voltage_channel<number>::from_divider(drive::adc, drive::bus_volts_per_code, drive::base.base_voltage)
        .with_limits(drive::bus_lowest, drive::bus_highest);
constexpr dqfx::centre_aligned_pwm pwm{drive::pwm_top, drive::minimum_pulse};
constexpr number half = dqfx::per_unit_constant<number>([] { return 0.5; });
// A phase is sampled only when its low-side switch conducts for 5% of the period or more.
constexpr number shortest_window = dqfx::per_unit_constant<number>([] { return 0.05; });
constexpr std::uint32_t calibration_periods = 256;
constexpr std::uint16_t calibration_spread = 32;  // codes

enum class mode : std::uint8_t { calibrating, running, tripped };

// The interrupt's state: every object has a constexpr constructor, so the whole block
// is constant-initialised (.data/.bss), and .init_array stays empty.
dqfx::current_loop<number> loop{drive::current_design};
dqfx::encoder<number, drive::encoder_window> encoder{drive::encoder_design};
dqfx::pi_regulator<number, dqfx::conditional_integration> speed_regulator{drive::speed_design};
dqfx::offset_calibration<number> calibration[3] = {
    {drive::adc, calibration_periods, calibration_spread},
    {drive::adc, calibration_periods, calibration_spread},
    {drive::adc, calibration_periods, calibration_spread}};
dqfx::three_shunt<number> shunts{};
dqfx::phases<number> applied_duty{half, half, half};
mode state = mode::calibrating;
unsigned speed_count = 0;
control::status shared{};
volatile raw_type speed_command = 0;

void switch_off(std::uint8_t reason) noexcept {
  board::peripherals.bridge_enabled = false;
  for (auto& c : board::peripherals.compare) c = pwm.period / 2;
  shared.trips = static_cast<std::uint8_t>(shared.trips | reason);
  shared.running = false;
  state = mode::tripped;
}

// Standstill, bridge off: average the phase-current codes at zero current into offsets.
void calibrate() noexcept {
  for (int p = 0; p < 3; ++p) calibration[p].add({board::peripherals.adc_phase[p], true});
  if (!calibration[0].complete()) return;
  if (!(calibration[0].accepted() && calibration[1].accepted() && calibration[2].accepted())) {
    switch_off(control::trip_calibration);
    return;
  }
  shunts = dqfx::three_shunt<number>{{phase_channel.with_offset(calibration[0].offset()),
                                      phase_channel.with_offset(calibration[1].offset()),
                                      phase_channel.with_offset(calibration[2].offset())},
                                     shortest_window};
  loop.reset();
  speed_regulator.reset();
  state = mode::running;
  shared.running = true;
  board::peripherals.bridge_enabled = true;
}

void regulate() noexcept {
  volatile board::registers& hw = board::peripherals;
  // Position and speed from the encoder counter.
  encoder.update(hw.encoder_counter);
  // The speed loop at a tenth of the rate: q current set-point from the speed error.
  if (++speed_count == drive::speed_divider) {
    speed_count = 0;
    shared.iq_setpoint = speed_regulator.step(number::from_raw(speed_command) - encoder.speed());
  }
  // Phase currents from the two shunts with the longest low-side windows of the duties
  // that were applied while they were sampled; the bus voltage with its trip limits.
  const auto current = shunts.reconstruct(
      {{hw.adc_phase[0], true}, {hw.adc_phase[1], true}, {hw.adc_phase[2], true}}, applied_duty);
  const auto bus = bus_channel.read({hw.adc_bus, true});

  dqfx::current_loop_input<number> in;
  in.current = current.current;
  in.rotor = dqfx::sincos_of<number>(encoder.electrical_angle());
  in.speed = encoder.speed();
  in.setpoint = {number{}, shared.iq_setpoint};
  in.bus_voltage = bus.voltage;
  const dqfx::current_loop_output<number> out = loop.step(in);

  const std::uint8_t trips =
      static_cast<std::uint8_t>((out.fault ? control::trip_current_loop : 0) |
                                (current.valid ? 0 : control::trip_current_reading) |
                                (bus.valid ? 0 : control::trip_bus_voltage) | (encoder.jump() ? control::trip_encoder : 0));
  if (trips != 0) {
    switch_off(trips);
    return;
  }
  const dqfx::phases<std::uint32_t> compare = pwm.compare(out.duty);
  hw.compare[0] = compare.a;
  hw.compare[1] = compare.b;
  hw.compare[2] = compare.c;
  applied_duty = out.duty;
  shared.speed = in.speed;
  shared.iq = out.current.q;
}

}  // namespace

void control::set_speed(drive::number speed) noexcept { speed_command = speed.raw(); }
control::status control::read_status() noexcept { return shared; }

extern "C" void pwm_period_handler() noexcept {
  switch (state) {
    case mode::calibrating: calibrate(); break;
    case mode::running: regulate(); break;
    case mode::tripped: break;
  }
}
