// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// What the firmware needs from the board. On QEMU (board_qemu.cpp) the "peripherals" are
/// a block of memory that the motor model fills and reads, the console is semihosting and
/// the PWM-period interrupt is SysTick; on a real board, map `registers` onto the ADC,
/// timer and encoder peripherals and start the period interrupt from the PWM timer.
#include <cstdint>

namespace board {

/// The peripheral registers the control reads and writes once per period.
struct registers {
  std::uint16_t adc_phase[3];     ///< phase-current samples of this period (low-side shunts)
  std::uint16_t adc_bus;          ///< bus-voltage sample
  std::uint16_t encoder_counter;  ///< quadrature counter, 16 bits, wraps
  std::uint32_t compare[3];       ///< PWM compare values for the next period
  bool bridge_enabled;            ///< gate drivers on
};
extern volatile registers peripherals;

/// Starts the PWM-period interrupt (`pwm_period_handler`, see control.hpp).
void start_period_interrupt() noexcept;
void stop_period_interrupt() noexcept;
/// Sleeps until the next period interrupt has run; false if one was missed (overrun).
bool wait_for_period() noexcept;
/// Instructions the period interrupt took (QEMU -icount; cycles on a chip): mean and
/// largest over all periods so far. Resolution: one SysTick tick (see board_qemu.cpp).
std::uint32_t handler_instructions_mean() noexcept;
std::uint32_t handler_instructions_max() noexcept;

void write(const char* text) noexcept;
void write(std::int32_t value) noexcept;
[[noreturn]] void exit(int status) noexcept;

}  // namespace board
