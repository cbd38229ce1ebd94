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
