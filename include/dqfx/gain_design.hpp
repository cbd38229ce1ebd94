// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// PI gains from motor data, in SI units and constexpr.
///
/// Current loop, internal-model control (Harnefors and Nee, "Model-based current control
/// of AC machines using the internal model control method", IEEE Trans. Industry
/// Applications, 1998): Kp = wc * L, Ki = wc * R turns the R-L load into the first-order
/// closed loop wc / (s + wc). For the sampled regulator of `pi_regulator`
/// (u = kp*e + x, x += ki*e) the same design is also given matched to the zero-order-hold
/// R-L load, which places the PI zero on the load pole and the closed-loop pole at
/// exp(-wc*Ts): the step response is then 1 - exp(-wc*k*Ts) at every sample instant.
///
/// Speed loop, symmetric optimum (C. Kessler, "Das symmetrische Optimum",
/// Regelungstechnik, 1958; also W. Leonhard, "Control of Electrical Drives", Springer;
/// recalled from memory): for the inertia load Kt / (J s) behind a current loop that acts
/// as a lag 1/(1 + s*Tsig), choose the crossover wsc and the ratio a > 1; then
/// Tsig = 1/(a*wsc), Kp = J*wsc/Kt, Ti = a^2*Tsig, and the phase margin is
/// atan(a) - atan(1/a) (a = 2: 36.9 degrees). The current loop must be at least a*wsc fast.

#include <cstdint>
#include <limits>

#include "dqfx/number.hpp"

namespace dqfx {

/// Regulator settings in plain numbers (per unit). Converted once, at compile time when
/// the regulator is a constexpr object.
struct pi_parameters {
  double kp = 0.0;         ///< proportional gain
  double ki = 0.0;         ///< integral gain per sample, Ki * Ts
  double kt = 0.0;         ///< back-calculation tracking gain per sample, Ts / Tt
  double lower = -1.0;     ///< output limits; clamped into the type's range
  double upper = 1.0;
};


namespace detail {

/// e^x - 1 by its Taylor series, for |x| <= 0.35 (terms to x^18: below 1e-17 relative).
constexpr double expm1_series(double x) noexcept {
  double term = x, sum = x;
  for (int n = 2; n <= 18; ++n) {
    term *= x / n;
    sum += term;
  }
  return sum;
}

/// e^x - 1, accurate also for small |x|, usable in constant expressions: x = k*ln2 + r
/// with |r| <= ln2/2 (Cody and Waite's two-part ln2), e^r by its series, times 2^k.
constexpr double expm1(double x) noexcept {
  if (detail::is_nan(x)) return x;
  if (x > 709.0) return std::numeric_limits<double>::infinity();
  if (x < -40.0) return -1.0;  // e^x below 2^-57: -1 to double precision
  if (x <= 0.35 && x >= -0.35) return expm1_series(x);
  const double ln2_high = 0.693147180369123816490;  // few bits: k * ln2_high is exact
  const double ln2_low = 1.90821492927058770002e-10;
  const std::int64_t n = round_half_away(x / 0.69314718055994530942);
  const double k = static_cast<double>(n);
  const double r = (x - k * ln2_high) - k * ln2_low;
  double e = 1.0 + expm1_series(r);
  for (std::int64_t i = 0; i < n; ++i) e *= 2.0;
  for (std::int64_t i = 0; i > n; --i) e *= 0.5;
  return e - 1.0;
}

constexpr double exp(double x) noexcept { return 1.0 + expm1(x); }

// Deliberately not constexpr: a constexpr design with a bad parameter stops here.
inline void gain_design_needs_positive_parameters() noexcept {}

}  // namespace detail

/// PI gains in SI units. `kp` and `ki` are the continuous-time gains; `kp_sampled` and
/// `ki_per_sample` the ones to give a sampled `pi_regulator`; `kt_per_sample` a
/// back-calculation tracking gain Ts/Tt with Tt = Ti (common practice; Astrom and
/// Hagglund, "Advanced PID Control", 2006, discuss the choice of Tt).
struct pi_design {
  double kp = 0.0;             ///< proportional gain (output unit per input unit)
  double ki = 0.0;             ///< integral gain per second
  double kp_sampled = 0.0;     ///< proportional gain for the sampled regulator
  double ki_per_sample = 0.0;  ///< integral gain per sample for the sampled regulator
  double kt_per_sample = 0.0;  ///< tracking gain per sample, Ts / Ti

  /// The same regulator in per unit: an error of `input_base` is 1.0 at the input and
  /// `output_base` is 1.0 at the output. Limits default to the whole range.
  constexpr pi_parameters per_unit(double input_base, double output_base) const noexcept {
    const double scale = input_base / output_base;
    pi_parameters p{};
    p.kp = kp_sampled * scale;
    p.ki = ki_per_sample * scale;
    p.kt = kt_per_sample;
    return p;
  }
};

/// Current loop by internal-model control, discretised for `sample_time` by matching
/// the zero-order-hold R-L load (see the file comment). Units: ohm, henry, rad/s, s;
/// gains in V/A and V/(A*s). Non-positive L, bandwidth or sample time, or negative R,
/// is a compile-time error for a constexpr design and gives zero gains at run time.
constexpr pi_design imc_current_loop(double resistance, double inductance, double bandwidth,
                                     double sample_time) noexcept {
  if (!(resistance >= 0.0 && inductance > 0.0 && bandwidth > 0.0 && sample_time > 0.0)) {
    detail::gain_design_needs_positive_parameters();
    return pi_design{};
  }
  pi_design g{};
  g.kp = bandwidth * inductance;
  g.ki = bandwidth * resistance;
  // Closed-loop pole exp(-wc*Ts); PI zero on the load pole exp(-R*Ts/L).
  const double closed = -detail::expm1(-bandwidth * sample_time);  // 1 - exp(-wc*Ts)
  const double x = resistance * sample_time / inductance;
  const double load = x > 0.0 ? x / -detail::expm1(-x) : 1.0;      // x / (1 - exp(-x))
  g.kp_sampled = closed * inductance / sample_time * load;
  g.ki_per_sample = closed * resistance;
  g.kt_per_sample = g.kp > 0.0 ? g.ki * sample_time / g.kp : 0.0;
  return g;
}

/// Speed loop by the symmetric optimum (see the file comment): from the inertia J in
/// kg*m^2, the torque constant Kt in N*m/A, the crossover `bandwidth` wsc in rad/s and
/// the sample time; `ratio` is a (> 1, default 2). Input mechanical rad/s, output amps
/// of torque-producing (q) current. The current loop must reach `ratio * bandwidth`.
constexpr pi_design symmetric_optimum_speed_loop(double inertia, double torque_constant,
                                                 double bandwidth, double sample_time,
                                                 double ratio = 2.0) noexcept {
  if (!(inertia > 0.0 && torque_constant > 0.0 && bandwidth > 0.0 && sample_time > 0.0 &&
        ratio > 1.0)) {
    detail::gain_design_needs_positive_parameters();
    return pi_design{};
  }
  pi_design g{};
  g.kp = inertia * bandwidth / torque_constant;
  const double integral_time = ratio / bandwidth;  // a^2 * Tsig with Tsig = 1/(a*wsc)
  g.ki = g.kp / integral_time;
  g.kp_sampled = g.kp;
  g.ki_per_sample = g.ki * sample_time;
  g.kt_per_sample = sample_time / integral_time;
  return g;
}

}  // namespace dqfx
