// SPDX-License-Identifier: MIT
// to_double reads only the four number types: a raw integer is not a fraction.
// expect: dqfx::to_double supports q15, q31, float and double
#include "dqfx/number.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  return dqfx::to_double(16384u) > 0.0 ? 0 : 1;
#else
  return dqfx::to_double(dqfx::q15::from_raw(16384)) > 0.0 ? 0 : 1;
#endif
}
