// SPDX-License-Identifier: MIT
// A sample time of a femtosecond makes the proportional gain L/Ts about 5e9 per unit,
// beyond the 2^30 range of a fixed-point gain: refused, naming the regulator's kp.
// expect: regulator_kp
#include "dqfx/current_loop.hpp"

constexpr double pi = 3.14159265358979323846;
#ifdef DQFX_SHOULD_FAIL
constexpr double sample_time = 1e-15;
#else
constexpr double sample_time = 50e-6;
#endif
constexpr dqfx::per_unit_base base{20.0, 60.0, 2 * pi * 1000, 4};
constexpr auto parameters = dqfx::design_current_loop(base, {0.1, 0.2e-3, 0.2e-3, 0.003}, 1.0 / sample_time, sample_time);

int main() { return parameters.check().ok() ? 0 : 1; }
