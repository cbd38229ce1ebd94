// SPDX-License-Identifier: MIT
// A constexpr bus-voltage channel with a non-positive scale does not compile.
// expect: voltage_channel_needs_positive_scale
#include "dqfx/current_sensing.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr double volts_per_code = 0.0;
#else
  constexpr double volts_per_code = 0.01;
#endif
  constexpr auto bus = dqfx::voltage_channel<dqfx::q15>::from_divider(dqfx::adc_format{12, 0}, volts_per_code, 32.0);
  return bus.parameter_fault() ? 1 : 0;
}
