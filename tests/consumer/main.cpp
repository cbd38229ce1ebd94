// SPDX-License-Identifier: MIT
// Consumer program: builds against dqfx::dqfx and checks a few results.
#if __has_include(<dqfx/dqfx.hpp>)
#include <dqfx/dqfx.hpp>
#endif
#include <dqfx/angle.hpp>
#include <dqfx/number.hpp>

int main() {
  constexpr auto half = dqfx::from_double<dqfx::q15>(0.5);
  static_assert(half.raw() == 16384, "q15 constants are computed at compile time");
  const auto quarter = half * half;
  const bool ok = quarter.raw() == 8192 && dqfx::angle::from_degrees(90.0).raw() == 0x40000000u &&
                  dqfx::to_double(dqfx::from_double<dqfx::q31>(-0.25)) == -0.25;
  return ok ? 0 : 1;
}
