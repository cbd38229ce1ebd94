// SPDX-License-Identifier: MIT
// Linked with -Wl,--wrap=pwm_period_handler into one image only: the interrupt then also
// converts a reading through double, as a careless handler would. The no-float check must
// fail on that image (test firmware.no_float.catches_planted_double).
#include <cstdint>

extern "C" void __real_pwm_period_handler() noexcept;

volatile std::uint16_t planted_reading = 2458;
volatile std::int32_t planted_result = 0;

extern "C" void __wrap_pwm_period_handler() noexcept {
  __real_pwm_period_handler();
  planted_result = static_cast<std::int32_t>(planted_reading * 0.0098 / 32.0 * 32768.0);
}
