// SPDX-License-Identifier: MIT
// A magnet whose back-EMF at base speed is 1.257 times the base voltage (invented drive):
// refused, naming the per-unit flux and its value in thousandths.
// expect: per_unit_flux
// expect: 1256
#include "dqfx/current_loop.hpp"

constexpr double pi = 3.14159265358979323846;
#ifdef DQFX_SHOULD_FAIL
constexpr dqfx::per_unit_base base{20.0, 20.0, 2 * pi * 1000, 4};
#else
constexpr dqfx::per_unit_base base{20.0, 60.0, 2 * pi * 1000, 4};
#endif
constexpr auto parameters = dqfx::design_current_loop(base, {0.1, 1e-6, 1e-6, 0.004}, 2 * pi * 500, 50e-6);

int main() { return parameters.check().ok() ? 0 : 1; }
