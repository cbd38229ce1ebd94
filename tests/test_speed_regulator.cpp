// SPDX-License-Identifier: MIT
// The speed loop (speed_regulator.hpp): against a textbook double weighted PI with ramp
// in closed loop on an inertia; bad input; a constexpr design.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <random>
#include <string>

#include "dqfx/speed_regulator.hpp"
#include "reference/speed_loop_reference.hpp"
#include "test_support.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx_test::lsb;
using dqfx_test::name;
using dqfx_test::two_pi;

// Invented drive (the demo motor's data, not a real product): 4 pole pairs, 11 mWb,
// 2e-4 kg m^2 with load, speed loop at 2 kHz (every 10th period of 20 kHz).
constexpr dqfx::per_unit_base base = dqfx_test::demo_base;
constexpr double speed_ts = 0.5e-3, inertia = 2e-4, flux = 0.011;

constexpr dqfx::speed_loop_data invented_speed_loop(double weighting, double acceleration) {
  dqfx::speed_loop_data m{};
  m.inertia = inertia;
  m.flux = flux;
  m.bandwidth = two_pi * 30;
  m.ratio = 3.0;
  m.sample_time = speed_ts;
  m.torque_limit = 1.5 * 4 * flux * 20.0;  // 20 A of q current
  m.acceleration = acceleration;            // mechanical rad/s^2
  m.speed_limit = 1200.0;                   // mechanical rad/s (0.76 pu)
  m.weighting = weighting;
  return m;
}

// A constexpr regulator: the design is checked and converted at compile time.
constexpr dqfx::speed_regulator<q15> compile_time{dqfx::design_speed_regulator(base, invented_speed_loop(0.0, 5e4))};
static_assert(!compile_time.parameter_fault());
static_assert(compile_time.torque_limit() > q15{});

/// Torque to electrical per-unit speed change per sample of the inertia (no friction).
constexpr double plant_gain = base.torque() / inertia * speed_ts * 4 / base.base_speed;

/// Runs the textbook loop on a simulated inertia with load steps and target steps and
/// ramps, feeds the same measurements to the dqfx regulator, and returns the largest
/// torque difference in units of kp * LSB (float: kp * eps): an LSB of speed that the two
/// loops round differently reaches the torque through kp.
template <class T, class AW>
double largest_difference(double weighting, double acceleration) {
  const dqfx::speed_regulator_parameters p = dqfx::design_speed_regulator(base, invented_speed_loop(weighting, acceleration));
  dqfx::speed_regulator<T, AW> r{p};
  REQUIRE_FALSE(r.parameter_fault());
  reference::weighted_speed_pi ref;
  ref.kp = p.pi.kp;
  ref.ki = p.pi.ki;
  ref.kt = p.pi.kt;
  ref.b = weighting;
  ref.hi = dqfx::to_double(r.torque_limit());
  ref.lo = -ref.hi;
  ref.step_limit = p.ramp_step;
  ref.speed_limit = dqfx::to_double(dqfx::from_double<T>(p.speed_limit));
  std::mt19937 random{7};
  std::uniform_real_distribution<double> pick{-0.9, 0.9};
  // Each regulator closes its own loop (an integrator open to rounding would drift
  // apart without bound); both see speeds rounded to T.
  double y = 0, z = 0, target = 0, load = 0, worst = 0;
  for (int k = 0; k < 20000; ++k) {
    if (k % 2000 == 0) target = pick(random);  // beyond the speed limit at times
    if (k % 2000 == 1000) load = 0.3 * pick(random) * ref.hi;
    const double u = ref.step(dqfx::to_double(dqfx::from_double<T>(target)), dqfx::to_double(dqfx::from_double<T>(y)));
    const double v = dqfx::to_double(r.step(dqfx::from_double<T>(target), dqfx::from_double<T>(z)));
    worst = std::fmax(worst, std::fabs(u - v));
    y += plant_gain * (u - load);
    z += plant_gain * (v - load);
  }
  return worst / (lsb<T>() * p.pi.kp);
}

}  // namespace

// Set-point weighting in filter form is the weighted PI exactly (speed_regulator.hpp);
// the reference is the law as Astrom and Hagglund write it ("Advanced PID Control", 2006).
TEST_CASE_TEMPLATE("speed_regulator: matches the textbook weighted PI with ramp and back-calculation", T, q15, q31,
                   float, double) {
  // Measured at most 7.2 (q15), 31 (q31), 15 (float), 13 (double; 0 for b = 1, where the
  // arithmetic is the reference's).
  const double bound = std::is_same_v<T, q31> ? 48.0 : 32.0;
  for (double b : {0.0, 0.5, 1.0}) {
    for (double acceleration : {0.0, 2e4}) {
      const double worst = largest_difference<T, dqfx::back_calculation>(b, acceleration);
      MESSAGE(name<T>(), " b=", b, " ramp ", acceleration, " rad/s^2: torque within ", worst, " kp*LSB");
      CHECK(worst <= bound);
    }
  }
}

TEST_CASE_TEMPLATE("speed_regulator: ramp, limits, restart rule and bad input", T, q15, q31, float, double) {
  const dqfx::speed_regulator_parameters p = dqfx::design_speed_regulator(base, invented_speed_loop(0.0, 2e4));
  dqfx::speed_regulator<T> r{p};
  // The ramp: 2e4 rad/s^2 * 0.5 ms * 4 / base speed = 0.0064 per unit per sample.
  for (int k = 0; k < 10; ++k) r.step(dqfx::from_double<T>(0.5), T{});
  CHECK(dqfx::to_double(r.reference()) == doctest::Approx(10 * p.ramp_step).epsilon(1e-3));
  // The target is clamped to the speed limit; the torque to its limit.
  for (int k = 0; k < 400; ++k) r.step(dqfx::number_traits<T>::max(), T{});
  CHECK(dqfx::to_double(r.reference()) == doctest::Approx(p.speed_limit).epsilon(1e-3));
  CHECK(dqfx::to_double(r.step(dqfx::number_traits<T>::max(), T{})) == doctest::Approx(p.pi.upper).epsilon(1e-3));
  // Restart at the measured speed: no reference step, the first torque is the
  // proportional reaction to the error only.
  r.reset(dqfx::from_double<T>(0.3));
  CHECK(dqfx::to_double(r.reference()) == doctest::Approx(0.3).epsilon(1e-3));
  CHECK(std::fabs(dqfx::to_double(r.step(dqfx::from_double<T>(0.3), dqfx::from_double<T>(0.3)))) < 1e-3);
  CHECK_FALSE(r.input_fault());
  if constexpr (!dqfx::number_traits<T>::is_fixed) {
    const T nan = std::numeric_limits<T>::quiet_NaN(), inf = std::numeric_limits<T>::infinity();
    const T held = r.reference();
    const T out = r.step(nan, dqfx::from_double<T>(0.3));
    CHECK(r.input_fault());
    CHECK(r.reference() == held);
    CHECK(out == out);
    CHECK(r.step(dqfx::from_double<T>(0.3), inf) == T{});
    r.clear_faults();
    CHECK_FALSE(r.input_fault());
    r.reset(nan, nan);
    CHECK(r.reference() == T{});
  }
  // Parameters that break a rule give a regulator that outputs 0.
  dqfx::speed_regulator_parameters bad = p;
  bad.weighting = 1.5;
  dqfx::speed_regulator<T> refused{bad};
  CHECK(refused.parameter_fault());
  CHECK(refused.step(dqfx::from_double<T>(0.5), T{}) == T{});
}
