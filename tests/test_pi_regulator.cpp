// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <string>

#include "dqfx/pi_regulator.hpp"
#include "reference/pi_reference.hpp"

namespace {

using dqfx::from_double;
using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

template <class T> double lsb() { return dqfx::number_traits<T>::lsb; }

template <class AW> constexpr reference::windup mode_of() {
  if constexpr (std::is_same_v<AW, dqfx::conditional_integration>) return reference::windup::clamping;
  if constexpr (std::is_same_v<AW, dqfx::back_calculation>) return reference::windup::tracking;
  return reference::windup::none;
}

// The documented range of the fixed-point sum kp*e + x + ff (pi_regulator.hpp).
template <class T> double sum_range() {
  if constexpr (std::is_same_v<T, q15>) return 16.0;
  if constexpr (std::is_same_v<T, q31>) return 256.0;
  return 1e300;
}

reference::pi reference_of(const dqfx::pi_parameters& p, reference::windup mode, double range) {
  reference::pi r;
  r.kp = p.kp;
  r.ki = p.ki;
  r.kt = p.kt;
  r.lo = p.lower;
  r.hi = p.upper;
  r.mode = mode;
  r.range = range;
  return r;
}

// Output error bound against the double reference in the closed-loop test below, in
// units of T's LSB (float, double: epsilon at 1.0). Measured figures in the report.
template <class T> double trajectory_bound_lsb() {
  if constexpr (std::is_same_v<T, q15>) return 3.0;
  if constexpr (std::is_same_v<T, q31>) return 16.0;
  if constexpr (std::is_same_v<T, float>) return 8.0;
  return 4.0;
}

struct trajectory_difference {
  double max = 0;           // largest |u - u_ref|
  double beyond_bound = 0;  // fraction of steps with |u - u_ref| above the bound
};

// Closed loop: PI against a first-order load y+ = a*y + (1 - a)*u, with random set-points
// held for 20..400 samples (a third of them out of reach, so the output saturates) and
// limits changed at run time. Library and reference each run their own copy of the load;
// the library sees the measurement rounded to T.
template <class T, class AW> trajectory_difference closed_loop_difference(std::uint64_t seed) {
  dqfx::pi_parameters p{};
  p.kp = 1.8;    // IMC-matched for a = 0.95, closed-loop pole 0.91
  p.ki = 0.09;
  p.kt = 0.05;
  p.lower = -0.7;
  p.upper = 0.6;
  dqfx::pi_regulator<T, AW> pi{p};
  reference::pi ref = reference_of(p, mode_of<AW>(), sum_range<T>());

  const double a = 0.95, bound = trajectory_bound_lsb<T>() * lsb<T>();
  double y = 0, y_ref = 0;
  trajectory_difference d;
  std::mt19937_64 rng{seed};
  std::uniform_real_distribution<double> setpoint_dist{-0.9, 0.9};
  std::uniform_int_distribution<int> hold_dist{20, 400};
  std::uniform_real_distribution<double> limit_dist{0.3, 0.9};
  T r{};
  int hold = 0;
  const int steps = 100000;
  for (int k = 0; k < steps; ++k) {
    if (hold-- == 0) {
      hold = hold_dist(rng);
      r = from_double<T>(setpoint_dist(rng));
      if (hold % 5 == 0) {  // new limits now and then, at run time
        const double lo = -limit_dist(rng), hi = limit_dist(rng);
        pi.set_limits(from_double<T>(lo), from_double<T>(hi));
        ref.lo = to_double(from_double<T>(lo));
        ref.hi = to_double(from_double<T>(hi));
      }
    }
    const T e = r - from_double<T>(y);
    const double u = to_double(pi.step(e));
    const double u_ref = ref.step(to_double(r) - y_ref);
    const double diff = std::fabs(u - u_ref);
    d.max = std::fmax(d.max, diff);
    if (diff > bound) d.beyond_bound += 1.0 / steps;
    y = a * y + (1 - a) * u;
    y_ref = a * y_ref + (1 - a) * u_ref;
  }
  CHECK_FALSE(pi.limits_fault());
  return d;
}

}  // namespace

TEST_CASE_TEMPLATE("pi_regulator: 100,000 closed-loop steps track the double reference", T, q15, q31,
                   float, double) {
  // Back-calculation is continuous in its inputs: the whole trajectory stays within the
  // bound. Conditional integration switches: where library and reference sit on either
  // side of the limit for one sample, one integrates and the other holds, so they part
  // by up to one integrator step ki*|e| and the loop pulls them together again within a
  // few time constants. Those samples are counted, not bounded by LSBs.
  for (std::uint64_t seed = 1; seed <= 3; ++seed) {
    const trajectory_difference tracking = closed_loop_difference<T, dqfx::back_calculation>(seed);
    const trajectory_difference clamping = closed_loop_difference<T, dqfx::conditional_integration>(seed);
    MESSAGE(std::string(dqfx::number_traits<T>::name), " seed ", seed, ": max |u - u_ref| back-calculation ",
            tracking.max / lsb<T>(), " LSB; clamping ", clamping.max / lsb<T>(), " LSB, ",
            clamping.beyond_bound * 100, "% of steps beyond ", trajectory_bound_lsb<T>(), " LSB");
    CHECK(tracking.max <= trajectory_bound_lsb<T>() * lsb<T>());
    CHECK(clamping.max <= 0.09 * 1.8);   // one integrator step at the largest error
    CHECK(clamping.beyond_bound < 0.01);
  }
}

TEST_CASE_TEMPLATE("pi_regulator: one step equals the textbook formula within one rounding", T, q15,
                   q31, float, double) {
  // Random states, errors and gains (some above 1): the proposal is kp*e + x + ff rounded
  // once and saturated once, whatever the sign of each term.
  std::mt19937_64 rng{7};
  std::uniform_real_distribution<double> unit{-0.99, 0.99};
  std::uniform_real_distribution<double> log_gain{-3.0, 1.7};
  double worst = 0;
  for (int k = 0; k < 20000; ++k) {
    dqfx::pi_parameters p{};
    p.kp = std::pow(10.0, log_gain(rng));
    dqfx::pi_regulator<T> pi{p};
    const T x = from_double<T>(unit(rng));
    const T e = from_double<T>(unit(rng) * 0.1);
    const T ff = from_double<T>(unit(rng) * 0.3);
    pi.preload(x);  // integrator = x (e = 0)
    const double exact = to_double(pi.kp().to_double() * to_double(e) + to_double(pi.integral()) + to_double(ff));
    const double clipped = dqfx::number_traits<T>::is_fixed
                               ? std::fmin(std::fmax(exact, -1.0), to_double(dqfx::number_traits<T>::max()))
                               : exact;
    // Floating point: two roundings of the sum plus that of the product, relative to
    // the size of the terms.
    const double size = std::fmax(1.0, std::fabs(exact - to_double(ff)) + std::fabs(to_double(ff)) +
                                            2 * std::fabs(to_double(pi.integral())));
    const double scale = dqfx::number_traits<T>::is_fixed ? 1.0 : size;
    worst = std::fmax(worst, std::fabs(to_double(pi.propose(e, ff).unlimited) - clipped) / scale);
  }
  // Fixed point: the sum rounded once to T; q15 also rounds kp*e to the 2^-25 state unit
  // (2^-11 LSB at most); q31's state unit is its LSB. The reference's own double rounding
  // is far below 2^-20 LSB.
  const double bound = std::is_same_v<T, q15> ? 0.5 + 1.0 / 2048
                                              : (dqfx::number_traits<T>::is_fixed ? 0.5 + 1.0 / (1 << 20) : 1.5);
  MESSAGE(std::string(dqfx::number_traits<T>::name), ": max one-step error ", worst / lsb<T>(),
          " LSB (float, double: relative to the size of the terms)");
  CHECK(worst <= bound * lsb<T>());
}

namespace {

struct recovery {
  double overshoot;    // peak above the set-point, relative to the set-point
  int settle;          // samples until within 2% for good
};

// Astrom and Hagglund, "Advanced PID Control", 2006 (integrator windup): a set-point step
// that saturates the actuator winds up an unprotected integrator, which then overshoots.
// Load y+ = a*y + (1 - a)*u with a = 0.98, output limit 0.5, set-point 0.4 (reachable,
// but the rise runs at the limit). The gains cancel the load pole and place the
// closed-loop pole at 0.9 (kp = 0.1/0.02, ki = kp*0.02), so the linear loop has no
// overshoot at all: any overshoot comes from windup.
template <class T, class AW> recovery saturating_step() {
  dqfx::pi_parameters p{};
  p.kp = 5.0;
  p.ki = 0.1;
  p.kt = 0.02;  // Tt = Ti
  p.lower = -0.5;
  p.upper = 0.5;
  dqfx::pi_regulator<T, AW> pi{p};
  const double a = 0.98, r = 0.4;
  double y = 0, peak = 0;
  int settle = 0;
  for (int k = 0; k < 4000; ++k) {
    const double u = to_double(pi.step(from_double<T>(r) - from_double<T>(y)));
    y = a * y + (1 - a) * u;
    peak = std::fmax(peak, y);
    if (std::fabs(y - r) > 0.02 * r) settle = k + 1;
  }
  return {(peak - r) / r, settle};
}

}  // namespace

TEST_CASE_TEMPLATE("pi_regulator: anti-windup recovery overshoots less than no anti-windup", T, q15,
                   q31, float, double) {
  const recovery none = saturating_step<T, dqfx::no_anti_windup>();
  const recovery clamp = saturating_step<T, dqfx::conditional_integration>();
  const recovery track = saturating_step<T, dqfx::back_calculation>();
  MESSAGE(std::string(dqfx::number_traits<T>::name), ": overshoot none ", none.overshoot * 100, "% (settles in ",
          none.settle, "), clamping ", clamp.overshoot * 100, "% (", clamp.settle,
          "), back-calculation ", track.overshoot * 100, "% (", track.settle, ")");
  CHECK(none.overshoot > 0.15);
  CHECK(clamp.overshoot < 0.001);
  CHECK(track.overshoot < 0.001);
  CHECK(clamp.settle < none.settle);
  CHECK(track.settle < none.settle);

  // The double reference shows the same picture.
  reference::pi ref;
  ref.kp = 5.0;
  ref.ki = 0.1;
  ref.kt = 0.02;
  ref.lo = -0.5;
  ref.hi = 0.5;
  double peak[3] = {};
  for (int m = 0; m < 3; ++m) {
    ref.mode = static_cast<reference::windup>(m);
    ref.x = 0;
    double y = 0;
    for (int k = 0; k < 4000; ++k) {
      y = 0.98 * y + 0.02 * ref.step(0.4 - y);
      peak[m] = std::fmax(peak[m], y);
    }
  }
  CHECK((peak[0] - 0.4) / 0.4 == doctest::Approx(none.overshoot).epsilon(0.01));
  CHECK(std::fabs((peak[1] - 0.4) / 0.4 - clamp.overshoot) < 0.001);
  CHECK(std::fabs((peak[2] - 0.4) / 0.4 - track.overshoot) < 0.001);
}

TEST_CASE_TEMPLATE("pi_regulator: output stays inside the limits, gains above one", T, q15, q31, float,
                   double) {
  dqfx::pi_parameters p{};
  p.kp = 40.0;  // a gain far above one: mantissa and shift in fixed point
  p.ki = 0.5;
  p.kt = 0.5;
  p.lower = -0.25;
  p.upper = 0.75;
  dqfx::pi_regulator<T> pi{p};
  CHECK(pi.kp().to_double() == doctest::Approx(40.0).epsilon(1e-7));
  // 40 * 0.01 = 0.4 with one rounding.
  const T e = from_double<T>(0.01);
  CHECK(std::fabs(to_double(pi.propose(e).output) - 40.0 * to_double(e)) <= 1.0 * lsb<T>() + 1e-12);
  std::mt19937_64 rng{3};
  std::uniform_real_distribution<double> unit{-1.0, 1.0};
  for (int k = 0; k < 10000; ++k) {
    const T u = pi.step(from_double<T>(unit(rng)));
    REQUIRE(u >= pi.lower());
    REQUIRE(u <= pi.upper());
  }
}

TEST_CASE_TEMPLATE("pi_regulator: limits in the wrong order are put in order and flagged", T, q15, q31,
                   float, double) {
  dqfx::pi_regulator<T> pi{};
  CHECK(pi.set_limits(from_double<T>(-0.5), from_double<T>(0.5)));
  CHECK_FALSE(pi.limits_fault());
  CHECK_FALSE(pi.set_limits(from_double<T>(0.4), from_double<T>(-0.2)));
  CHECK(pi.limits_fault());
  CHECK(pi.lower() == from_double<T>(-0.2));
  CHECK(pi.upper() == from_double<T>(0.4));
  pi.clear_faults();
  CHECK_FALSE(pi.limits_fault());

  // Run-time parameters in the wrong order: same answer.
  dqfx::pi_parameters p{};
  p.lower = 0.3;
  p.upper = -0.3;
  const dqfx::pi_regulator<T> swapped{p};
  CHECK(swapped.limits_fault());
  CHECK(swapped.lower() == from_double<T>(-0.3));
  CHECK(swapped.upper() == from_double<T>(0.3));

  if constexpr (!dqfx::number_traits<T>::is_fixed) {
    dqfx::pi_regulator<T> f{};
    f.set_limits(T(-0.5), T(0.5));
    CHECK_FALSE(f.set_limits(std::numeric_limits<T>::quiet_NaN(), T(0.1)));
    CHECK(f.limits_fault());
    CHECK(f.lower() == T(-0.5));
    CHECK(f.upper() == T(0.5));
    p.lower = std::nan("");
    const dqfx::pi_regulator<T> nan_limits{p};
    CHECK(nan_limits.limits_fault());
    CHECK(nan_limits.lower() == T(0));
    CHECK(nan_limits.upper() == T(0));
  }
}

TEST_CASE_TEMPLATE("pi_regulator: non-finite input leaves the state unchanged", T, float, double) {
  dqfx::pi_parameters p{};
  p.kp = 2.0;
  p.ki = 0.1;
  p.lower = -0.8;
  p.upper = 0.8;
  dqfx::pi_regulator<T> pi{p};
  pi.step(T(0.3));
  const T before = pi.integral();
  for (T bad : {std::numeric_limits<T>::quiet_NaN(), std::numeric_limits<T>::infinity(),
                -std::numeric_limits<T>::infinity()}) {
    CHECK(pi.step(bad) == T(0));
    CHECK(pi.step(T(0.1), bad) == T(0));
    CHECK(pi.integral() == before);
    const dqfx::pi_proposal<T> ok = pi.propose(T(0.1));
    pi.commit(ok, bad);  // a NaN applied value is refused too
    CHECK(pi.integral() == before);
  }
  CHECK(pi.input_fault());
  // Zero is clamped into limits that exclude it.
  pi.set_limits(T(0.2), T(0.8));
  CHECK(pi.step(std::numeric_limits<T>::quiet_NaN()) == T(0.2));
}

TEST_CASE_TEMPLATE("pi_regulator: preload gives a bumpless transfer, reset clears", T, q15, q31, float,
                   double) {
  dqfx::pi_parameters p{};
  p.kp = 3.0;
  p.ki = 0.05;
  dqfx::pi_regulator<T> pi{p};
  const T held = from_double<T>(0.37), e = from_double<T>(0.05);
  pi.preload(held, e);
  CHECK(std::fabs(to_double(pi.propose(e).output) - to_double(held)) <= 1.0 * lsb<T>());
  pi.reset();
  CHECK(pi.integral() == T{});
}

TEST_CASE_TEMPLATE("pi_regulator: external limiting feeds back through commit", T, q15, q31, float,
                   double) {
  // The regulator proposes more than an outside limit allows; with clamping it must not
  // integrate further, with back-calculation it moves toward the applied value.
  dqfx::pi_parameters p{};
  p.kp = 1.0;
  p.ki = 0.1;
  p.kt = 0.5;
  dqfx::pi_regulator<T, dqfx::conditional_integration> clamp{p};
  dqfx::pi_regulator<T, dqfx::back_calculation> track{p};
  const T e = from_double<T>(0.2), outside = from_double<T>(0.1);
  for (int k = 0; k < 50; ++k) {
    clamp.commit(clamp.propose(e), outside);
    track.commit(track.propose(e), outside);
  }
  CHECK(clamp.integral() == T{});
  // Back-calculation settles where ki*e = kt*(u - applied): x = (0.1*0.2/0.5) - 0.2 + 0.1.
  CHECK(std::fabs(to_double(track.integral()) - (0.1 * 0.2 / 0.5 - 0.2 + 0.1)) < 1e-3);
}

namespace {
constexpr float constexpr_run() {
  dqfx::pi_parameters p{};
  p.kp = 2.0;
  p.ki = 0.25;
  p.upper = 2.0;
  dqfx::pi_regulator<float> pi{p};
  pi.step(0.5f);
  return pi.step(0.5f);  // 2*0.5 + 0.25*0.5
}
constexpr dqfx::pi_regulator<q15, dqfx::conditional_integration> constexpr_q15{
    dqfx::pi_parameters{1.5, 0.01, 0.0, -0.5, 0.5}};
}  // namespace

static_assert(constexpr_run() == 1.125f, "a constexpr regulator runs at compile time");
static_assert(constexpr_q15.upper() == dqfx::from_double<q15>(0.5), "constexpr limits");
static_assert(!constexpr_q15.limits_fault(), "limits in order");

TEST_CASE("pi_regulator: q15 integrates errors far below one q15 LSB per sample") {
  // ki = 2^-6 and e = 2 LSB: ki*e = 1/32 LSB per sample, exactly 32 units of the 2^-25
  // integrator, so 10,000 samples add exactly 312.5 LSB with no dead band.
  dqfx::pi_parameters p{};
  p.ki = 1.0 / 64;
  dqfx::pi_regulator<q15> pi{p};
  const q15 e = q15::from_raw(2);
  for (int k = 0; k < 10000; ++k) pi.step(e);
  CHECK(pi.integral() == q15::from_raw(313));  // 312.5 rounded up
  // ki = 1e-3: ki*e = 0.002 LSB, 2.048 units, rounds to two units per sample: the
  // integrator still moves (resolution 2^-10 LSB), within half a unit per sample.
  dqfx::pi_parameters slow{};
  slow.ki = 1e-3;
  dqfx::pi_regulator<q15> fine{slow};
  for (int k = 0; k < 10000; ++k) fine.step(e);
  const double exact = 10000 * 1e-3 * to_double(e), half_unit = 10000 * 0.5 * 0x1p-25;
  CHECK(std::fabs(to_double(fine.integral()) - exact) <= half_unit + 0.5 * lsb<q15>());
}

TEST_CASE("pi_regulator: the rounded 16x32 product is exact in both forms") {
  // The value every core must produce: floor((d*m + 2^(shift-1)) / 2^shift) in 64 bits.
  auto exact = [](std::int32_t d, std::int32_t m, int shift) {
    return static_cast<std::int32_t>((std::int64_t{d} * m + (std::int64_t{1} << (shift - 1))) >> shift);
  };
  std::mt19937_64 rng{23};
  const std::int32_t ds[] = {-65535, -65534, -32768, -1, 0, 1, 32767, 65534, 65535};
  const std::int32_t ms[] = {INT32_MIN, INT32_MIN + 1, -65536, -65535, -256, -1, 0, 1, 255, 65535, 65536, INT32_MAX};
  for (int shift = 18; shift <= 31; ++shift) {
    for (std::int32_t d : ds) {
      for (std::int32_t m : ms) {
        CHECK(dqfx::detail::rounded_product16_wide(d, m, shift) == exact(d, m, shift));
        CHECK(dqfx::detail::rounded_product16_narrow(d, m, shift) == exact(d, m, shift));
      }
    }
    for (int k = 0; k < 100000; ++k) {
      const auto d = static_cast<std::int32_t>(rng() % 131071) - 65535;
      const auto m = static_cast<std::int32_t>(static_cast<std::int64_t>(rng() % 4294967296u) - 2147483648);
      REQUIRE(dqfx::detail::rounded_product16_wide(d, m, shift) == exact(d, m, shift));
      REQUIRE(dqfx::detail::rounded_product16_narrow(d, m, shift) == exact(d, m, shift));
    }
  }
}
