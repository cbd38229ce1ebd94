// SPDX-License-Identifier: MIT
// saturated() clamps signed wide values; an unsigned one would hide negative overflow.
// expect: a signed integer
#include <cstdint>

#include "dqfx/fixed.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  return dqfx::q15::saturated(std::uint32_t{70000}).raw();
#else
  return dqfx::q15::saturated(std::int32_t{70000}).raw() == 32767 ? 0 : 1;
#endif
}
