// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): a two-level three-phase inverter on a DC bus.
///
/// Each leg ties its phase to the upper rail (high-side switch on), the lower rail
/// (low-side switch on) or, during the dead time when both are off, to the rail its
/// free-wheeling diode conducts to: the lower rail for a current flowing out of the leg
/// (i > 0), the upper rail otherwise. PWM is centre-aligned: a duty d keeps the high side
/// on for d*T centred in the period, so at the start of each period every low side is
/// on (where low-side shunts are sampled). The high side turns on a dead time after the
/// low side turns off, and the low side a dead time after the high side turns off; a
/// pulse shorter than the dead time never reaches the high side.
///
/// Two models of the same bridge:
///   - `average`: each phase voltage is its duty's average over the period, the dead
///     time taking td/T of duty away for i > 0 and adding it for i < 0;
///   - `switched`: the period is cut at every switching edge and each piece integrated
///     with the rail voltages it really has (the current ripple appears).
/// Near zero current the diode's pull is made continuous: within +/- `current_band` the
/// dead-time voltage moves linearly between the rails (standing for the slow commutation
/// of a small current by the switches' capacitances). Without it (band 0) a current
/// crossing zero chatters between the rails. A leg that floats with zero current and
/// edges pushed past the end of the period by the dead time are not modelled.
///
/// The DC bus: an ideal source behind a resistance, with an optional capacitor across
/// the inverter. Capacitance 0: vdc = source - R*idc; otherwise C dvdc/dt = (source -
/// vdc)/R - idc. The source sinks current too (a battery, not a rectifier).

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <vector>

#include "dqfx_sim/motor.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

enum class inverter_model { average, switched };

struct inverter_parameters {
  double pwm_frequency = 20e3;  ///< Hz
  double dead_time = 0.0;       ///< s
  double current_band = 0.1;    ///< A, see the file comment; 0 for a hard switch
  inverter_model model = inverter_model::average;
};

struct bus_parameters {
  double source_voltage = 48.0;    ///< V
  double source_resistance = 0.0;  ///< ohm; 0 with capacitance 0 is a stiff bus
  double capacitance = 0.0;        ///< F across the inverter; 0 for none
};

/// Refuses a non-positive PWM frequency, a negative dead time or one that takes a whole
/// half period, a non-positive source voltage, negative resistance or capacitance, and a
/// capacitor without a source resistance (which would be shorted by an ideal source).
inline status check(const inverter_parameters& p, const bus_parameters& b) {
  auto need = [](bool good, const char* what, double v) {
    return good ? status{} : status::failure(std::string{what} + " (got " + text(v) + ")");
  };
  status s;
  s.also(need(std::isfinite(p.pwm_frequency) && p.pwm_frequency > 0, "inverter: pwm_frequency must be positive in Hz",
              p.pwm_frequency))
      .also(need(std::isfinite(p.dead_time) && p.dead_time >= 0 && p.dead_time * p.pwm_frequency < 0.5,
                 "inverter: dead_time must be >= 0 s and shorter than half a PWM period", p.dead_time))
      .also(need(std::isfinite(p.current_band) && p.current_band >= 0, "inverter: current_band must be >= 0 A",
                 p.current_band))
      .also(need(std::isfinite(b.source_voltage) && b.source_voltage > 0, "bus: source_voltage must be positive in V",
                 b.source_voltage))
      .also(need(std::isfinite(b.source_resistance) && b.source_resistance >= 0, "bus: source_resistance must be >= 0 ohm",
                 b.source_resistance))
      .also(need(std::isfinite(b.capacitance) && b.capacitance >= 0, "bus: capacitance must be >= 0 F", b.capacitance))
      .also(need(!(b.capacitance > 0 && b.source_resistance <= 0),
                 "bus: a capacitance needs a positive source_resistance", b.source_resistance));
  return s;
}

/// What a leg does during one piece of the period.
enum class leg { low, high, dead };

/// The three legs' states over a piece of the period [begin, end) (seconds from the
/// period start).
struct switching_interval {
  double begin = 0.0;
  double end = 0.0;
  std::array<leg, 3> legs{};
};

/// The bridge with its duties for one period.
class inverter {
 public:
  inverter() = default;
  explicit inverter(const inverter_parameters& p) : p_{p} {}

  const inverter_parameters& parameters() const noexcept { return p_; }
  double period() const noexcept { return 1.0 / p_.pwm_frequency; }

  /// Duties for the coming period, clamped into [0, 1] (the harness refuses NaN first).
  void set_duty(const three_phase& d) noexcept {
    duty_ = {clamp01(d.a), clamp01(d.b), clamp01(d.c)};
  }
  three_phase duty() const noexcept { return {duty_[0], duty_[1], duty_[2]}; }

  /// Which way the diodes pull for a current: +1 (to the lower rail) for i > 0, -1
  /// for i < 0, linear within the current band.
  double diode_pull(double current) const noexcept {
    const double band = p_.current_band;
    if (band > 0) return current >= band ? 1.0 : (current <= -band ? -1.0 : current / band);
    return current > 0 ? 1.0 : (current < 0 ? -1.0 : 0.0);
  }

  /// Average model: phase voltages from the lower rail for these currents.
  three_phase average_voltage(const three_phase& i, double vdc) const noexcept {
    const double loss = p_.dead_time * p_.pwm_frequency;
    auto v = [&](double d, double current) { return vdc * clamp01(d - loss * diode_pull(current)); };
    return {v(duty_[0], i.a), v(duty_[1], i.b), v(duty_[2], i.c)};
  }

  /// Switched model: phase voltages for the legs' states and these currents.
  three_phase switched_voltage(const std::array<leg, 3>& legs, const three_phase& i, double vdc) const noexcept {
    auto v = [&](leg l, double current) {
      return l == leg::high ? vdc : (l == leg::low ? 0.0 : vdc * (1 - diode_pull(current)) / 2);
    };
    return {v(legs[0], i.a), v(legs[1], i.b), v(legs[2], i.c)};
  }

  /// The period cut at every switching edge (at most 13 pieces).
  std::vector<switching_interval> intervals() const {
    const double t = period(), td = p_.dead_time;
    std::array<double, 14> edge{};
    std::size_t n = 0;
    edge[n++] = 0.0;
    edge[n++] = t;
    for (double d : duty_) {
      if (d <= 0.0 || d >= 1.0) continue;
      for (double e : {t / 2 - d * t / 2, t / 2 - d * t / 2 + td, t / 2 + d * t / 2, t / 2 + d * t / 2 + td})
        if (e > 0.0 && e < t) edge[n++] = e;
    }
    std::sort(edge.begin(), edge.begin() + static_cast<std::ptrdiff_t>(n));
    std::vector<switching_interval> out;
    for (std::size_t k = 0; k + 1 < n; ++k) {
      if (!(edge[k + 1] > edge[k])) continue;
      const double mid = (edge[k] + edge[k + 1]) / 2;
      out.push_back({edge[k], edge[k + 1], {state(duty_[0], mid), state(duty_[1], mid), state(duty_[2], mid)}});
    }
    return out;
  }

  /// Phase voltages relative to the star point removed: the stationary voltage the motor
  /// sees (amplitude-invariant Clarke of the phase voltages; the common mode cancels).
  static stationary_voltage to_stationary(const three_phase& v) noexcept {
    return {(2 * v.a - v.b - v.c) / 3, (v.b - v.c) / std::sqrt(3.0)};
  }

 private:
  static double clamp01(double x) noexcept { return x < 0 ? 0.0 : (x > 1 ? 1.0 : x); }

  /// The leg at time t (0 <= t < T) of a centre-aligned period with duty d.
  leg state(double d, double t) const noexcept {
    if (d <= 0.0) return leg::low;
    if (d >= 1.0) return leg::high;
    const double half = period() / 2, td = p_.dead_time;
    const double low_off = half - d * half, high_off = half + d * half;
    if (t < low_off || t >= high_off + td) return leg::low;
    if (t >= low_off + td && t < high_off) return leg::high;
    return leg::dead;
  }

  inverter_parameters p_{};
  std::array<double, 3> duty_{0.5, 0.5, 0.5};
};

}  // namespace dqfx::sim
