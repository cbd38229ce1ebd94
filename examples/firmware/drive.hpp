// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The drive this firmware is written for: an invented board (24 V bus, 20 kHz
/// centre-aligned PWM, three low-side shunts on a 12-bit ADC, a 1024-line encoder) and an
/// invented 4-pole-pair motor. Every value here is invented for the example; replace them
/// with your own. All of it is evaluated at compile time: nothing below costs a cycle or
/// a byte of start-up code in the image.
#include <cstdint>

#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/fixed.hpp"
#include "dqfx/gain_design.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/pwm.hpp"

#ifndef FIRMWARE_NUMBER
#define FIRMWARE_NUMBER q15  // or q31: the same firmware (CMake builds both)
#endif

namespace drive {

using number = dqfx::FIRMWARE_NUMBER;

constexpr double pi = 3.14159265358979323846;

// Board (invented).
constexpr double pwm_frequency = 20e3;                  // Hz
constexpr double sample_time = 1.0 / pwm_frequency;     // one control period
constexpr std::uint32_t pwm_top = 2100;                 // centre-aligned timer: 84 MHz / 2 / 20 kHz
constexpr std::uint32_t minimum_pulse = 20;             // compare counts the gate driver needs
constexpr dqfx::adc_format adc{12, 8};                  // 12 bits, 8 codes from each rail are railed
constexpr double amps_per_code = 30.0 / 4096;           // shunt amplifier: +/-15 A over the ADC range
constexpr double bus_volts_per_code = 40.0 / 4096;      // bus divider: 40 V at full scale
constexpr double bus_volts = 24.0;                      // nominal supply
constexpr double bus_lowest = 12.0, bus_highest = 30.0; // under- and over-voltage trips, V
constexpr std::uint32_t encoder_counts = 4096;          // 1024 lines, 4x decoding, 16-bit counter

// Motor (invented): resistance, Ld, Lq, magnet flux; inertia of rotor and load.
constexpr dqfx::pm_motor_data motor{0.25, 0.4e-3, 0.4e-3, 0.006};
constexpr unsigned pole_pairs = 4;
constexpr double inertia = 2e-5;                               // kg m^2
constexpr double torque_constant = 1.5 * pole_pairs * 0.006;   // N m / A (amplitude-invariant)

// Per-unit bases: 10 A, 32 V (above the bus, so the bus voltage fits q15), 6000 rpm.
constexpr dqfx::per_unit_base base{10.0, 32.0, 2 * pi * 400, pole_pairs};

// Current loop: internal-model PI at 400 Hz bandwidth with the motor's feed-forward.
constexpr dqfx::current_loop_parameters current_design =
    dqfx::design_current_loop(base, motor, 2 * pi * 400, sample_time);

// Speed loop every `speed_divider` periods: symmetric optimum at 15 Hz, q current limited
// to `current_limit`.
constexpr unsigned speed_divider = 10;
constexpr double current_limit = 5.0;  // A
constexpr dqfx::pi_parameters speed_design = [] {
  dqfx::pi_parameters p = base.speed_regulator(dqfx::symmetric_optimum_speed_loop(
      inertia, torque_constant, 2 * pi * 15, speed_divider * sample_time, 3.0));
  p.lower = -base.current(current_limit);
  p.upper = base.current(current_limit);
  return p;
}();

// Encoder: counting over 32 periods above 2% speed, edge timing below, a 150 Hz filter.
constexpr dqfx::encoder_parameters encoder_design = [] {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = encoder_counts;
  p.pole_pairs = pole_pairs;
  p.counter_period = 65536;
  p.base_speed = base.base_speed;
  p.sample_time = sample_time;
  p.switch_speed = 0.02;
  p.filter_bandwidth = 2 * pi * 150;
  p.max_speed = 1.0;
  return p;
}();
constexpr std::size_t encoder_window = 32;

// The application's speed command (set by main) and the test's load, in SI.
constexpr double speed_rpm = 3000.0;
constexpr double load_torque = 0.05;  // N m, about 30% of the current limit's torque

}  // namespace drive
