// SPDX-License-Identifier: MIT
// A per-unit constant that q15 cannot hold (25 A against a 20 A base is 1.25) is refused,
// and the diagnostic shows the value (1250 thousandths).
// expect: the per-unit value is outside the range of the chosen type
// expect: 1250
#include "dqfx/per_unit.hpp"

constexpr dqfx::per_unit_base base{20.0, 28.0, 3000.0, 4};  // invented drive

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr dqfx::q15 limit = dqfx::per_unit_constant<dqfx::q15>([] { return base.current(25.0); });
#else
  constexpr dqfx::q15 limit = dqfx::per_unit_constant<dqfx::q15>([] { return base.current(15.0); });
#endif
  return limit.raw() > 0 ? 0 : 1;
}
