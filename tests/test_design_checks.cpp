// SPDX-License-Identifier: MIT
// Design checks at run time: a design computed outside a constant expression is not
// refused by the compiler, so its check() names the first quantity that does not fit.
// The invented drives below differ from a sound one in one value each.

#include <doctest/doctest.h>

#include <cstring>
#include <limits>

#include "dqfx/current_loop.hpp"
#include "dqfx/field_weakening.hpp"
#include "dqfx/torque_setpoint.hpp"
#include "dqfx/per_unit.hpp"

namespace {
constexpr double pi = 3.14159265358979323846;
// Run time: read through a volatile, so that nothing below is a constant expression.
double at_run_time(double v) {
  volatile double x = v;
  return x;
}
dqfx::current_loop_parameters design(double base_voltage, dqfx::pm_motor_data motor, double sample_time = 50e-6,
                                     double bandwidth = 2 * pi * 500) {
  const dqfx::per_unit_base base{20.0, at_run_time(base_voltage), 2 * pi * 1000, 4};
  return dqfx::design_current_loop(base, motor, bandwidth, at_run_time(sample_time));
}
bool names(const dqfx::design_check& c, const char* quantity) {
  return c.quantity != nullptr && std::strcmp(c.quantity, quantity) == 0;
}
}  // namespace

TEST_CASE("design_current_loop: check() names the first value that does not fit") {
  const dqfx::pm_motor_data motor{0.1, 0.2e-3, 0.2e-3, 0.003};
  CHECK(design(60.0, motor).check().ok());
  // Base voltage 2 V: per-unit inductance 0.2e-3 * 2*pi*1000 * 20 / 2 = 12.566.
  const dqfx::design_check low_base = design(2.0, motor).check();
  CHECK(names(low_base, "per-unit d inductance"));
  CHECK(low_base.value == doctest::Approx(12.566370614359172));
  CHECK(names(design(60.0, {0.1, 0.2e-3, 60.0 / (2 * pi * 1000 * 20), 0.003}).check(), "per-unit q inductance"));
  // Flux 0.004 Wb at 2*pi*1000 rad/s is 25.1 V: above a 20 V base.
  const dqfx::design_check flux = design(20.0, {0.1, 1e-6, 1e-6, 0.004}).check();
  CHECK(names(flux, "per-unit flux"));
  CHECK(flux.value == doctest::Approx(1.2566370614359172));
  // A femtosecond sample time at a matching bandwidth: kp about L/Ts, beyond 2^30 per unit.
  CHECK(names(design(60.0, motor, 1e-15, 1e15).check(), "d regulator kp"));
  dqfx::current_loop_parameters nan_gain = design(60.0, motor);
  nan_gain.q.ki = std::numeric_limits<double>::quiet_NaN();
  CHECK(names(nan_gain.check(), "q regulator ki"));
}

TEST_CASE("Design checks are constant expressions where the design is") {
  constexpr dqfx::per_unit_base base{20.0, 60.0, 2 * pi * 1000, 4};
  constexpr auto p = dqfx::design_current_loop(base, {0.1, 0.2e-3, 0.2e-3, 0.003}, 2 * pi * 500, 50e-6);
  static_assert(p.check().ok());
  static_assert(dqfx::detail::refuse_unless(true, dqfx::detail::refused::per_unit_flux, 0.5));
  CHECK(true);
}

TEST_CASE("design_torque_setpoint and design_field_weakening: check() at run time") {
  const dqfx::per_unit_base base{20.0, at_run_time(60.0), 6283.0, 4};
  const dqfx::pm_motor_data motor{0.1, 0.2e-3, 0.3e-3, 0.004};
  CHECK(dqfx::design_torque_setpoint(base, motor, 15.0).check().ok());
  const dqfx::design_check limit = dqfx::design_torque_setpoint(base, motor, at_run_time(30.0)).check();
  CHECK(names(limit, "per-unit current limit"));
  CHECK(limit.value == 1.5);
  CHECK(dqfx::design_field_weakening(base, motor, 5000.0, 2 * pi * 60, 500e-6).check().ok());
  CHECK(names(dqfx::design_field_weakening(base, motor, at_run_time(0.0), 2 * pi * 60, 500e-6).check(),
              "field-weakening gain"));
}
