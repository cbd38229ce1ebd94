// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// A small motor, inverter and sensor model in integer arithmetic that stands in for the
/// power stage under QEMU: it reads the PWM compare values, advances the motor by one
/// period and writes the ADC samples and the encoder counter for the next one. Delete it
/// (and its call in main.cpp) on a real board.
///
/// Model, per unit (the bases of drive.hpp), Q31 numbers: the ideal inverter applies the
/// period-average phase voltages (duty - mean duty) * vdc; the d/q currents follow the
/// R-L load exactly for a constant voltage over the period (zero-order hold) with the
/// speed voltages held over the period; torque psi*iq + (Ld - Lq)*id*iq; the speed
/// follows torque minus load over the inertia (forward Euler). The shunt samples carry
/// invented offsets and a little pseudo-random noise. With the bridge off no current flows.
#include <cstdint>

#include "board.hpp"

class motor_model {
 public:
  /// Writes the samples of the motor at rest.
  void start(volatile board::registers& hw) noexcept;
  /// One PWM period with the compare values in `hw`, then the new samples.
  void advance(volatile board::registers& hw) noexcept;
  /// Load torque, per unit of the base torque (Q31 raw).
  void set_load(std::int32_t torque) noexcept { load_ = torque; }
  /// The model's own speed (Q31 raw, electrical per unit), for the summary.
  std::int32_t speed() const noexcept { return speed_; }

 private:
  void sample(volatile board::registers& hw) noexcept;
  std::int32_t noise() noexcept;

  std::int32_t id_ = 0, iq_ = 0;  // Q31 per unit
  std::int32_t speed_ = 0;        // Q31 per unit, electrical
  std::int32_t load_ = 0;         // Q31 per unit torque
  std::uint64_t position_ = 0;    // mechanical, 2^48 per turn
  std::uint32_t random_ = 12345;
};
