// SPDX-License-Identifier: MIT
// A constexpr speed regulator with a set-point weight outside [0, 1] does not compile.
// expect: speed_regulator_parameters_invalid
#include "dqfx/speed_regulator.hpp"

constexpr dqfx::speed_regulator_parameters parameters(double weighting) {
  dqfx::speed_regulator_parameters p{};
  p.pi = dqfx::pi_parameters{2.0, 0.05, 0.02, -0.5, 0.5};
  p.weighting = weighting;
  return p;
}

int main() {
#ifdef DQFX_SHOULD_FAIL
  constexpr dqfx::speed_regulator<dqfx::q15> r{parameters(1.5)};
#else
  constexpr dqfx::speed_regulator<dqfx::q15> r{parameters(0.5)};
#endif
  return r.parameter_fault() ? 1 : 0;
}
