// SPDX-License-Identifier: MIT
// Fixed-point storage is 16-bit (q15) or 32-bit (q31), nothing else.
// expect: dqfx::fixed supports 16-bit (q15) and 32-bit (q31) storage
#include <cstdint>

#include "dqfx/fixed.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  return dqfx::fixed<std::int8_t>{}.raw();
#else
  return dqfx::fixed<std::int16_t>{}.raw();
#endif
}
