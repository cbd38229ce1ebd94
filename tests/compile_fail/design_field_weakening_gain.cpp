// SPDX-License-Identifier: MIT
// A field-weakening design with a top speed of zero divides by zero: the gain is not a
// number, and the design is refused, naming the gain.
// expect: field_weakening_gain
#include "dqfx/field_weakening.hpp"

constexpr dqfx::per_unit_base base{20.0, 60.0, 6283.0, 4};
#ifdef DQFX_SHOULD_FAIL
constexpr double top_speed = 0.0;
#else
constexpr double top_speed = 5000.0;
#endif
constexpr auto parameters =
    dqfx::design_field_weakening(base, {0.1, 0.2e-3, 0.3e-3, 0.004}, top_speed, 2 * 3.14159 * 60, 500e-6);

int main() { return parameters.check().ok() ? 0 : 1; }
