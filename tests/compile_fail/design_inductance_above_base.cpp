// SPDX-License-Identifier: MIT
// A current loop designed for a base voltage of 2 V (invented drive): the per-unit
// inductance is 12.6, far outside what the loop's voltages can hold. The diagnostic names
// the quantity and shows 12.566 as 12566 thousandths.
// expect: per_unit_d_inductance
// expect: 12566
#include "dqfx/current_loop.hpp"

constexpr double pi = 3.14159265358979323846;
#ifdef DQFX_SHOULD_FAIL
constexpr dqfx::per_unit_base base{20.0, 2.0, 2 * pi * 1000, 4};
#else
constexpr dqfx::per_unit_base base{20.0, 60.0, 2 * pi * 1000, 4};
#endif
constexpr auto parameters = dqfx::design_current_loop(base, {0.1, 0.2e-3, 0.2e-3, 0.003}, 2 * pi * 500, 50e-6);

int main() { return parameters.check().ok() ? 0 : 1; }
