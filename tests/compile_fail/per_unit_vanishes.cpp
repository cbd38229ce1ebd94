// SPDX-License-Identifier: MIT
// A nonzero per-unit constant that rounds to zero in q15 (5 uA of a 20 A base) is refused.
// expect: the value is nonzero but rounds to zero
#include "dqfx/per_unit.hpp"

constexpr dqfx::per_unit_base base{20.0, 28.0, 3000.0, 4};  // invented drive

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr dqfx::q15 offset = dqfx::per_unit_constant<dqfx::q15>([] { return base.current(5e-6); });
#else
  constexpr dqfx::q31 offset = dqfx::per_unit_constant<dqfx::q31>([] { return base.current(5e-6); });
#endif
  return offset.raw() > 0 ? 0 : 1;
}
