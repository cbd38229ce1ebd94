// SPDX-License-Identifier: MIT
// A constexpr current channel on an ADC format outside 8..16 bits does not compile.
// expect: adc_bits_outside_8_to_16
#include "dqfx/current_sensing.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr auto channel = dqfx::current_channel<dqfx::q15>::from_amplifier(dqfx::adc_format{20, 0}, 0.01, 10.0);
#else
  constexpr auto channel = dqfx::current_channel<dqfx::q15>::from_amplifier(dqfx::adc_format{12, 0}, 0.01, 10.0);
#endif
  return channel.parameter_fault() ? 1 : 0;
}
