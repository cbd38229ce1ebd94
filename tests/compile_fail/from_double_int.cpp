// SPDX-License-Identifier: MIT
// from_double converts only into the four number types.
// expect: dqfx::from_double supports q15, q31, float and double
#include "dqfx/number.hpp"

int main() {
#ifdef DQFX_SHOULD_FAIL
  return dqfx::from_double<int>(1.0);
#else
  return dqfx::from_double<dqfx::q15>(0.5).raw() == 16384 ? 0 : 1;
#endif
}
