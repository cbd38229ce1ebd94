// SPDX-License-Identifier: MIT
// A current limit of 30 A against a 20 A base current (invented drive) is 1.5 per unit,
// which q15/q31 cannot hold: the set-point design is refused, naming the quantity and
// showing 1.5 as 1500 thousandths.
// expect: per_unit_current_limit
// expect: 1500
#include "dqfx/torque_setpoint.hpp"

constexpr dqfx::per_unit_base base{20.0, 60.0, 6283.0, 4};
#ifdef DQFX_SHOULD_FAIL
constexpr double limit = 30.0;
#else
constexpr double limit = 15.0;
#endif
constexpr auto parameters = dqfx::design_torque_setpoint(base, {0.1, 0.2e-3, 0.3e-3, 0.004}, limit);

int main() { return parameters.check().ok() ? 0 : 1; }
