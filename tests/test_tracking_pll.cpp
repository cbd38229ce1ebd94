// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>

#include "dqfx/tracking_pll.hpp"
#include "reference/pmsm_model.hpp"
#include "test_support.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

using dqfx_test::name;

// Invented drive timing: 20 kHz, speed 1.0 = 1000 Hz electrical.
using dqfx_test::base_speed;  // 1000 Hz electrical
using dqfx_test::ts;          // 20 kHz
using dqfx_test::two_pi;
constexpr double rad_per_sample = base_speed * ts;  // at speed 1.0

double degrees_between(dqfx::angle a, double radians) {
  return std::fabs(reference::wrap(a.radians() - radians)) * 180 / reference::pi;
}

template <class T> dqfx::tracking_pll<T> make_pll(double wn, double zeta) {
  return dqfx::tracking_pll<T>{dqfx::tracking_pll_parameters{wn, zeta, base_speed, ts}};
}

// The PLL's angle resolution is the binary angle's for every T; what differs is the loop
// arithmetic (float: 24-bit rate) and the speed output. Bounds in degrees and per unit.
template <class T> double ramp_angle_bound() {
  if constexpr (std::is_same_v<T, float>) return 2e-3;
  return 1e-5;
}
template <class T> double speed_bound() {
  if constexpr (std::is_same_v<T, q15>) return 2.0 / 32768;
  if constexpr (std::is_same_v<T, float>) return 1e-6;
  return 1e-8;
}

}  // namespace

TEST_CASE("tracking_pll: gains place the poles at exp(s Ts) of the continuous loop") {
  for (double zeta : {0.3, 0.5, 0.707, 1.0, 1.5, 3.0}) {
    for (double wn : {two_pi * 5, two_pi * 50, two_pi * 400, 0.5 / ts}) {
      double alpha = 0, beta = 0;
      reference::matched_gains(wn, zeta, ts, alpha, beta);
      const dqfx::tracking_pll_gains g = dqfx::design_tracking_pll(wn, zeta, ts);
      CHECK(g.valid);
      CHECK(g.alpha == doctest::Approx(alpha).epsilon(1e-12));
      CHECK(g.beta == doctest::Approx(beta).epsilon(1e-9));
    }
  }
  // Small wn*Ts: alpha -> 2 zeta wn Ts and beta -> (wn Ts)^2, the continuous PI-PLL
  // gains kp = 2 zeta wn, ki = wn^2 times Ts and Ts^2 (Gardner, "Phaselock Techniques").
  const dqfx::tracking_pll_gains g = dqfx::design_tracking_pll(100.0, 0.7, 1e-6);
  CHECK(g.alpha == doctest::Approx(2 * 0.7 * 100 * 1e-6).epsilon(1e-3));
  CHECK(g.beta == doctest::Approx(1e-8).epsilon(1e-3));
  static_assert(dqfx::design_tracking_pll(two_pi * 50, 0.7, ts).valid);
  static_assert(!dqfx::design_tracking_pll(two_pi * 50, 0.1, ts).valid);
  static_assert(!dqfx::design_tracking_pll(1.0 / ts, 0.7, ts).valid);
}

TEST_CASE_TEMPLATE("tracking_pll: zero steady-state error on an angle ramp", T, q15, q31, float, double) {
  for (double speed : {0.02, 0.3, -0.7, 0.95}) {
    dqfx::tracking_pll<T> pll = make_pll<T>(two_pi * 50, 0.707);
    double theta = 1.0, worst = 0, speed_error = 0;
    for (int k = 0; k < 20000; ++k) {  // 1 s; the loop settles in about 30 ms
      theta = reference::wrap(theta + speed * rad_per_sample);
      pll.update(dqfx::angle::from_radians(theta));
      if (k > 10000) {
        worst = std::fmax(worst, degrees_between(pll.electrical_angle(), theta));
        speed_error = std::fmax(speed_error, std::fabs(to_double(pll.speed()) - speed));
      }
    }
    MESSAGE(name<T>(), " at ", speed, " pu: max angle error ", worst, " deg, speed error ", speed_error);
    CHECK(worst < ramp_angle_bound<T>());
    CHECK(speed_error < speed_bound<T>());
  }
}

namespace {

struct step_figures {
  double overshoot = 0;   // fraction of the step
  double peak_time = 0;   // s
};

// A speed step at the input (an angle ramp whose slope steps) from 0.1 pu by 0.2*wn (rad/s),
// small enough for the loop to stay linear (peak angle error about 0.2 rad; a step much
// larger than wn slips cycles); the speed output.
template <class T> step_figures speed_step(double wn, double zeta) {
  const double step = 0.2 * wn / base_speed, final_speed = 0.1 + step;
  dqfx::tracking_pll<T> pll = make_pll<T>(wn, zeta);
  double theta = 0;
  for (int k = 0; k < 20000; ++k) {
    theta = reference::wrap(theta + 0.1 * rad_per_sample);
    pll.update(dqfx::angle::from_radians(theta));
  }
  step_figures f;
  double peak = 0;
  for (int k = 1; k < 20000; ++k) {
    theta = reference::wrap(theta + final_speed * rad_per_sample);
    pll.update(dqfx::angle::from_radians(theta));
    const double w = to_double(pll.speed());
    if (w > peak) {
      peak = w;
      f.peak_time = k * ts;
    }
  }
  f.overshoot = (peak - final_speed) / step;
  return f;
}

}  // namespace

TEST_CASE_TEMPLATE("tracking_pll: speed-step response matches the designed natural frequency and damping",
                   T, q15, q31, float, double) {
  // The second-order step response (any control textbook, e.g. Ogata, "Modern Control
  // Engineering"): overshoot exp(-pi zeta / sqrt(1 - zeta^2)), peak at pi / (wn sqrt(1 - zeta^2)).
  // Damping and natural frequency recovered from the measured ones must be within 10 %.
  for (double zeta : {0.3, 0.5, 0.707}) {
    for (double wn : {two_pi * 20, two_pi * 100}) {
      const step_figures f = speed_step<T>(wn, zeta);
      const double l = std::log(f.overshoot);
      const double zeta_measured = -l / std::sqrt(reference::pi * reference::pi + l * l);
      const double wn_measured = reference::pi / (f.peak_time * std::sqrt(1 - zeta_measured * zeta_measured));
      MESSAGE(name<T>(), " designed zeta ", zeta, " wn ", wn, ": measured zeta ", zeta_measured, " wn ",
              wn_measured);
      CHECK(std::fabs(zeta_measured / zeta - 1) < 0.1);
      CHECK(std::fabs(wn_measured / wn - 1) < 0.1);
    }
  }
}

TEST_CASE_TEMPLATE("tracking_pll: constant acceleration leaves an angle error of acceleration / wn^2", T, q31,
                   float, double) {
  // Type-2 loop under an angle parabola (Gardner, "Phaselock Techniques": the steady
  // acceleration error of a second-order type-2 loop is (dw/dt) / wn^2).
  const double wn = two_pi * 50;
  dqfx::tracking_pll<T> pll = make_pll<T>(wn, 0.707);
  const double acceleration = 0.5 * base_speed;  // electrical rad/s^2: 0.5 pu per second
  double theta = 0, w = 0.05 * base_speed, error = 0;
  for (int k = 0; k < 12000; ++k) {
    theta = reference::wrap(theta + w * ts + 0.5 * acceleration * ts * ts);
    w += acceleration * ts;
    pll.update(dqfx::angle::from_radians(theta));
    error = reference::wrap(theta - pll.electrical_angle().radians());
  }
  MESSAGE(name<T>(), ": lag ", error, " rad, expected ", acceleration / (wn * wn));
  CHECK(error == doctest::Approx(acceleration / (wn * wn)).epsilon(0.02));
}

TEST_CASE_TEMPLATE("tracking_pll: tracks the textbook alpha-beta tracker in double", T, q15, q31, float, double) {
  // A noisy angle with speed changes; library and reference get the same measured angles.
  const double wn = two_pi * 80, zeta = 0.8;
  dqfx::tracking_pll<T> pll = make_pll<T>(wn, zeta);
  reference::alpha_beta_tracker ref;
  reference::matched_gains(wn, zeta, ts, ref.alpha, ref.beta);
  double theta = 0, w = 0, angle_error = 0, speed_error = 0;
  unsigned noise = 12345;
  for (int k = 0; k < 40000; ++k) {
    w = k < 10000 ? 0.4 * k / 10000 : (k < 25000 ? 0.4 : -0.2);
    theta = reference::wrap(theta + w * rad_per_sample);
    noise = noise * 1103515245u + 12345u;
    const double measured = reference::wrap(theta + 0.01 * ((noise >> 8) % 2001 / 1000.0 - 1.0));
    const dqfx::angle m = dqfx::angle::from_radians(measured);
    pll.update(m);
    ref.update(m.radians());
    angle_error = std::fmax(angle_error, degrees_between(pll.electrical_angle(), ref.angle));
    speed_error = std::fmax(speed_error, std::fabs(to_double(pll.speed()) - ref.rate / rad_per_sample));
  }
  MESSAGE(name<T>(), ": max |angle - ref| ", angle_error, " deg, max |speed - ref| ", speed_error, " pu");
  CHECK(angle_error < (std::is_same_v<T, float> ? 1e-3 : 1e-5));
  CHECK(speed_error < (std::is_same_v<T, q15> ? 2.0 / 32768 : std::is_same_v<T, float> ? 1e-4 : 1e-7));
}

TEST_CASE_TEMPLATE("tracking_pll: follows a unit sine/cosine pair; NaN is refused and the speed holds", T, q15,
                   q31, float, double) {
  dqfx::tracking_pll<T> pll = make_pll<T>(two_pi * 50, 0.707);
  double theta = 0.5, worst = 0;
  for (int k = 0; k < 20000; ++k) {
    theta = reference::wrap(theta + 0.25 * rad_per_sample);
    pll.update(dqfx::sincos<T>{dqfx::from_double<T>(std::sin(theta)), dqfx::from_double<T>(std::cos(theta))});
    if (k > 10000) worst = std::fmax(worst, degrees_between(pll.electrical_angle(), theta));
  }
  MESSAGE(name<T>(), ": pair input, max angle error ", worst, " deg");
  // q15: the pair itself carries 2^-15 rad of rounding.
  CHECK(worst < (std::is_same_v<T, q15> ? 0.01 : 2e-3));
  if constexpr (!dqfx::number_traits<T>::is_fixed) {
    const T held = pll.speed();
    const dqfx::angle next = pll.next();
    pll.update(dqfx::sincos<T>{std::numeric_limits<T>::quiet_NaN(), T(1)});
    CHECK(pll.fault());
    CHECK(pll.speed() == held);
    CHECK(pll.electrical_angle() == next);  // coasted at the held speed
    pll.update(dqfx::sincos<T>{T(0), std::numeric_limits<T>::infinity()});
    CHECK(pll.speed() == held);
  }
}

TEST_CASE_TEMPLATE("tracking_pll: designs out of range are flagged and do not move", T, q15, float) {
  dqfx::tracking_pll<T> fast = make_pll<T>(1.0 / ts, 0.7);  // wn*Ts = 1
  CHECK(fast.parameter_fault());
  dqfx::tracking_pll<T> aliasing{dqfx::tracking_pll_parameters{two_pi * 50, 0.7, 1e6, ts}};
  CHECK(aliasing.parameter_fault());
  fast.update(dqfx::angle::from_degrees(90));
  CHECK(fast.electrical_angle() == dqfx::angle{});
  CHECK(fast.speed() == T{});
  constexpr dqfx::tracking_pll<T> good{dqfx::tracking_pll_parameters{two_pi * 50, 0.7, base_speed, ts}};
  static_assert(!good.parameter_fault());
}
