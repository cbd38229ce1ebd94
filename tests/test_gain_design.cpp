// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <string>

#include "dqfx/gain_design.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/per_unit.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;

// Invented test machine and board (not a real product): a small 24 V drive.
constexpr double resistance = 0.12;       // ohm, phase
constexpr double inductance = 0.25e-3;    // H, phase (round rotor)
constexpr double sample_time = 50e-6;     // s, 20 kHz PWM
constexpr double bandwidth = 2 * 3.14159265358979323846 * 600;  // rad/s current loop
constexpr dqfx::per_unit_base base{30.0, 24.0, 2 * 3.14159265358979323846 * 800, 4};

double relative_error(double value, double exact) { return std::fabs(value - exact) / std::fabs(exact); }

constexpr dqfx::pi_design imc = dqfx::imc_current_loop(resistance, inductance, bandwidth, sample_time);

// Harnefors and Nee, IEEE Trans. Industry Applications, 1998: Kp = wc*L, Ki = wc*R.
static_assert(imc.kp == bandwidth * inductance, "IMC proportional gain");
static_assert(imc.ki == bandwidth * resistance, "IMC integral gain");

}  // namespace

TEST_CASE("gain_design: constexpr exp matches the C library") {
  double worst = 0;
  for (double x = -40; x <= 40; x += 0.0137) worst = std::fmax(worst, relative_error(dqfx::detail::expm1(x), std::expm1(x)));
  for (double x = 1e-12; x < 1; x *= 1.1) {
    worst = std::fmax(worst, relative_error(dqfx::detail::expm1(x), std::expm1(x)));
    worst = std::fmax(worst, relative_error(dqfx::detail::expm1(-x), std::expm1(-x)));
  }
  MESSAGE("constexpr expm1: max relative error ", worst);
  CHECK(worst < 1e-15);
  static_assert(dqfx::detail::expm1(0.0) == 0.0);
}

TEST_CASE("gain_design: the sampled IMC gains tend to the continuous ones as Ts -> 0") {
  for (double ts : {1e-4, 1e-5, 1e-6, 1e-7}) {
    const dqfx::pi_design d = dqfx::imc_current_loop(resistance, inductance, bandwidth, ts);
    const double tolerance = 2 * bandwidth * ts;  // first-order in wc*Ts
    CHECK(d.kp_sampled == doctest::Approx(d.kp).epsilon(tolerance));
    CHECK(d.ki_per_sample == doctest::Approx(d.ki * ts).epsilon(tolerance));
  }
  // Pure inductance (R = 0): the load pole is at z = 1 and the limit is taken exactly.
  const dqfx::pi_design l = dqfx::imc_current_loop(0.0, inductance, bandwidth, sample_time);
  CHECK(l.ki_per_sample == 0.0);
  CHECK(l.kp_sampled == doctest::Approx(-std::expm1(-bandwidth * sample_time) * inductance / sample_time));
}

namespace {

// The R-L load sampled exactly: with the voltage v held over a period (zero-order hold),
// i(t0 + tau) = exp(-R*tau/L)*i(t0) + (1 - exp(-R*tau/L))*v/R.
double rl_after(double i, double v, double tau) {
  const double decay = std::exp(-resistance * tau / inductance);
  return decay * i + (1 - decay) * v / resistance;
}

// Runs the PI (per unit, type T) against the exact R-L load for a current step of
// `step_pu`, and returns the current at t = 1/wc divided by the step.
template <class T>
double response_at_one_time_constant(const dqfx::pi_parameters& p, double wc, double step_pu) {
  dqfx::pi_regulator<T> pi{p};
  const double t_target = 1 / wc;
  const T setpoint = dqfx::from_double<T>(step_pu);
  double i = 0;  // A
  for (int k = 0;; ++k) {
    const T e = setpoint - dqfx::from_double<T>(base.current(i));
    const double v = dqfx::to_double(pi.step(e)) * base.base_voltage;
    const double t = k * sample_time;
    if (t + sample_time >= t_target) {
      return base.current(rl_after(i, v, t_target - t)) / dqfx::to_double(setpoint);
    }
    i = rl_after(i, v, sample_time);
  }
}

// The continuous IMC gains, integrated by forward Euler, without matching.
dqfx::pi_parameters continuous_gains(double wc) {
  dqfx::pi_parameters p{};
  p.kp = wc * inductance / base.impedance();
  p.ki = wc * resistance * sample_time / base.impedance();
  return p;
}

}  // namespace

TEST_CASE_TEMPLATE("gain_design: the IMC loop on an R-L load reaches 63.2% at t = 1/wc", T, q15, q31, float,
                   double) {
  // First-order closed loop wc/(s + wc): 1 - exp(-1) = 63.2% after one time constant
  // (Harnefors and Nee, 1998). The load is simulated exactly (zero-order hold), with no
  // computation delay: the voltage computed from sample k acts from sample k on.
  const double target = -std::expm1(-1.0);
  const double matched = response_at_one_time_constant<T>(base.current_regulator(imc), bandwidth, 0.3);
  // The plain continuous gains drift from the target as wc*Ts grows: at wc*Ts = 0.19
  // (600 Hz at 20 kHz) they are about 5% fast, at a third of that well inside.
  const double plain_fast = response_at_one_time_constant<T>(continuous_gains(bandwidth), bandwidth, 0.3);
  const double plain_slow =
      response_at_one_time_constant<T>(continuous_gains(bandwidth / 3), bandwidth / 3, 0.3);
  MESSAGE(std::string(dqfx::number_traits<T>::name), ": i(1/wc)/step = ", matched,
          " (matched gains, wc*Ts = ", bandwidth * sample_time, "); continuous gains ", plain_fast,
          " at that wc*Ts, ", plain_slow, " at a third; target ", target);
  CHECK(relative_error(matched, target) < 0.05);
  CHECK(relative_error(plain_slow, target) < 0.05);
  // Matched gains put the closed-loop pole exactly at exp(-wc*Ts); what remains is the
  // load's path between samples and the measurement's rounding.
  CHECK(relative_error(matched, target) < 0.005);
}

TEST_CASE("gain_design: symmetric optimum places the crossover at wsc with the textbook phase margin") {
  // Kessler, "Das symmetrische Optimum", 1958 (recalled from memory): with the current
  // loop as a lag 1/(1 + s*Tsig), crossover at 1/(a*Tsig) and phase margin
  // atan(a) - atan(1/a), 36.87 degrees for a = 2. Invented mechanics.
  const double inertia = 2.0e-4, kt = 0.08, wsc = 150.0;
  for (double a : {2.0, 3.0, 4.0}) {
    const dqfx::pi_design d = dqfx::symmetric_optimum_speed_loop(inertia, kt, wsc, 1e-3, a);
    const double tsig = 1 / (a * wsc);
    const std::complex<double> s{0.0, wsc};
    const std::complex<double> loop = (d.kp + d.ki / s) * (kt / (inertia * s)) / (1.0 + s * tsig);
    CHECK(std::abs(loop) == doctest::Approx(1.0).epsilon(1e-12));
    const double margin = 180.0 + std::arg(loop) * 180.0 / 3.14159265358979323846;
    CHECK(margin == doctest::Approx((std::atan(a) - std::atan(1 / a)) * 180.0 / 3.14159265358979323846));
    if (a == 2.0) CHECK(margin == doctest::Approx(36.87).epsilon(1e-4));
    CHECK(d.kt_per_sample == doctest::Approx(1e-3 * d.ki / d.kp));
  }
}

TEST_CASE("gain_design: bad parameters give zero gains at run time") {
  volatile double negative = -1.0;
  const dqfx::pi_design a = dqfx::imc_current_loop(resistance, negative, bandwidth, sample_time);
  CHECK(a.kp == 0.0);
  CHECK(a.ki_per_sample == 0.0);
  const dqfx::pi_design b = dqfx::symmetric_optimum_speed_loop(1e-4, 0.1, 100.0, 1e-3, negative);
  CHECK(b.kp == 0.0);
  const dqfx::pi_design c = dqfx::imc_current_loop(std::nan(""), inductance, bandwidth, sample_time);
  CHECK(c.kp_sampled == 0.0);
}
