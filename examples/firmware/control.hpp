// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The firmware's control: the PWM-period interrupt and what it shares with the
/// application (the speed command in, a status out).
#include <cstdint>

#include "drive.hpp"

namespace control {

/// Why the bridge was switched off (bits).
enum trip : std::uint8_t {
  trip_current_loop = 1,     ///< the loop's fault: bus voltage not usable
  trip_current_reading = 2,  ///< fewer than two usable phase-current samples
  trip_bus_voltage = 4,      ///< bus sample missing, railed, under- or over-voltage
  trip_encoder = 8,          ///< impossible encoder step
  trip_calibration = 16,     ///< ADC offsets not accepted (current flowing, noise)
};

/// Written by the interrupt each period, read by the application.
struct status {
  drive::number speed{};       ///< electrical speed from the encoder, per unit
  drive::number iq_setpoint{}; ///< output of the speed loop
  drive::number iq{};          ///< measured q current
  std::uint8_t trips = 0;      ///< `trip` bits; the bridge stays off once set
  bool running = false;        ///< calibrated, bridge on
};

/// Speed command, electrical per unit (raw value of drive::number), set by the application.
void set_speed(drive::number speed) noexcept;
status read_status() noexcept;

}  // namespace control

/// The PWM-period interrupt: sample, estimate, regulate, modulate, write.
extern "C" void pwm_period_handler() noexcept;
