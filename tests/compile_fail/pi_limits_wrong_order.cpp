// SPDX-License-Identifier: MIT
// A constexpr regulator whose lower limit exceeds its upper limit does not compile.
// expect: pi_limits_in_wrong_order_lower_must_not_exceed_upper
#include "dqfx/pi_regulator.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr dqfx::pi_regulator<dqfx::q15> pi{dqfx::pi_parameters{1.5, 0.01, 0.0, 0.5, -0.5}};
#else
  constexpr dqfx::pi_regulator<dqfx::q15> pi{dqfx::pi_parameters{1.5, 0.01, 0.0, -0.5, 0.5}};
#endif
  return pi.limits_fault() ? 1 : 0;
}
