// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): runs a controller against the plant for a scenario
/// and records every period.
///
/// The controller is any callable, in any number type, called once per PWM period:
///
///   dqfx::phases<T> controller(const dqfx::sim::readings& r, const dqfx::sim::command& c,
///                              dqfx::sim::probe& p);
///
/// (or with (readings, command) only). It gets what the hardware reads and the
/// scenario's set-point, returns the three duties (q15, q31, float, double or any type
/// `dqfx::to_double` reads), and may tell the probe its current set-points and angle
/// and speed estimates, which the harness records beside the truth. A NaN duty stops the
/// run with a failure; duties outside [0, 1] are clamped and counted.

#include <cstdint>
#include <functional>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx_sim/plant.hpp"
#include "dqfx_sim/recording.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

/// A value over time: piecewise linear through its points, a jump where two points
/// share a time; 0 before the first point, the last value after the last.
class profile {
 public:
  profile() = default;
  /// Constant `value` from t = 0.
  explicit profile(double value) { points_.push_back({0.0, value}); }
  /// Jumps to `value` at time t.
  profile& step(double t, double value) {
    points_.push_back({t, at(t)});
    points_.push_back({t, value});
    return *this;
  }
  /// Moves linearly from the value at the last point to `value`, reached at time t.
  profile& ramp_to(double t, double value) {
    points_.push_back({t, value});
    return *this;
  }
  /// The value at time t (the later value at a jump).
  double at(double t) const noexcept {
    if (points_.empty() || t < points_.front().first) return 0.0;
    double value = points_.front().second;
    for (std::size_t k = 0; k < points_.size(); ++k) {
      const auto& p = points_[k];
      if (p.first <= t) {
        value = p.second;
        continue;
      }
      const auto& q = points_[k - 1];  // q.first <= t < p.first
      return q.second + (p.second - q.second) * (t - q.first) / (p.first - q.first);
    }
    return value;
  }

 private:
  std::vector<std::pair<double, double>> points_;
};

/// What to run: duration, the speed set-point handed to the controller, the load
/// torque on the shaft, and the starting state.
struct scenario {
  double duration = 0.1;  ///< s
  profile speed;          ///< mechanical rad/s set-point
  profile load;           ///< N*m
  motor_state initial{};  ///< standstill at position 0 by default
};

/// The scenario's set-point for this period.
struct command {
  double speed = 0.0;  ///< mechanical rad/s
};

/// What the controller may tell the recorder (SI; leave NaN what it does not know).
struct probe {
  double id_setpoint = NAN, iq_setpoint = NAN;  ///< A
  double angle = NAN;                           ///< electrical rad the controller used
  double speed = NAN;                           ///< mechanical rad/s, its estimate
  bool fault = false;  ///< the controller's own fault this period (e.g. current_loop_output::fault)
};

/// A run's outcome, recording and counters.
struct run_result {
  status outcome;               ///< refused parameters, NaN duty, overspeed
  std::vector<record> records;  ///< one per period run
  std::size_t clamped_duties = 0;
  std::size_t periods_run = 0;              ///< periods the controller was called
  std::size_t controller_faults = 0;        ///< periods in which the controller raised `probe::fault`
  double first_controller_fault = NAN;      ///< s, the first of them
  double last_controller_fault = NAN;       ///< s, the last of them

  /// Success when the controller never raised its fault; else a failure that says when
  /// ("controller fault from t = 0.002 s to t = 0.1 s, 1961 of 2000 periods").
  status controller_status() const {
    if (controller_faults == 0) return {};
    return status::failure("controller fault from t = " + text(first_controller_fault) + " s to t = " +
                           text(last_controller_fault) + " s, " + std::to_string(controller_faults) + " of " +
                           std::to_string(periods_run) + " periods");
  }
};

/// Options of a run.
struct run_options {
  /// Called about every 1% of the run with the fraction done (for long runs).
  std::function<void(double)> progress;
  /// Keeps every n-th period in `records` (1: all).
  std::size_t record_every = 1;
};

namespace detail {

inline double wrap_angle(double a) noexcept {
  double x = std::fmod(a + pi, 2 * pi);
  if (x < 0) x += 2 * pi;
  return x - pi;
}

template <class Controller>
auto call(Controller& c, const readings& r, const command& cmd, probe& p) {
  if constexpr (std::is_invocable_v<Controller&, const readings&, const command&, probe&>) {
    return c(r, cmd, p);
  } else {
    static_assert(std::is_invocable_v<Controller&, const readings&, const command&>,
                  "dqfx::sim::run: the controller must be callable as (readings, command, probe&) or "
                  "(readings, command) and return dqfx::phases<T>");
    return c(r, cmd);
  }
}

}  // namespace detail

/// Runs `controller` against a plant built from `parameters` for the scenario. The
/// parameters are checked first: a refused plant gives a failure and no records.
template <class Controller>
run_result run(const plant_parameters& parameters, const scenario& s, Controller&& controller,
               const run_options& options = {}) {
  run_result result;
  plant p{parameters, s.initial};
  if (!p.check()) {
    result.outcome = p.check();
    return result;
  }
  if (!(std::isfinite(s.duration) && s.duration > 0)) {
    result.outcome = status::failure("scenario: duration must be a positive time in s (got " + text(s.duration) + ")");
    return result;
  }
  const std::uint64_t periods = static_cast<std::uint64_t>(std::ceil(s.duration / p.period()));
  const std::size_t every = options.record_every == 0 ? 1 : options.record_every;
  result.records.reserve(static_cast<std::size_t>(periods / every + 1));
  const double limit = speed_limit_of(parameters);
  std::uint64_t next_report = 0;
  for (std::uint64_t k = 0; k < periods; ++k) {
    if (options.progress && k >= next_report) {
      options.progress(static_cast<double>(k) / static_cast<double>(periods));
      next_report = k + periods / 100 + 1;
    }
    const readings r = p.sample();
    const command cmd{s.speed.at(r.time)};
    probe pr;
    const auto out = detail::call(controller, r, cmd, pr);
    ++result.periods_run;
    if (pr.fault) {
      if (result.controller_faults++ == 0) result.first_controller_fault = r.time;
      result.last_controller_fault = r.time;
    }
    const three_phase duty{to_double(out.a), to_double(out.b), to_double(out.c)};
    if (!(std::isfinite(duty.a) && std::isfinite(duty.b) && std::isfinite(duty.c))) {
      result.outcome = status::failure("controller returned a non-finite duty at t = " + text(r.time) + " s");
      break;
    }
    for (double d : {duty.a, duty.b, duty.c})
      if (d < 0 || d > 1) ++result.clamped_duties;
    p.apply(duty);

    const double load = s.load.at(r.time);
    if (k % every == 0) {
      const plant_state& x = p.state();
      const stationary_voltage v = p.average_voltage();
      const double th = p.electrical_angle();
      record row;
      row.time = r.time;
      row.speed_setpoint = cmd.speed;
      row.speed = x.motor.speed;
      row.speed_estimate = pr.speed;
      row.id = x.motor.id;
      row.iq = x.motor.iq;
      row.id_setpoint = pr.id_setpoint;
      row.iq_setpoint = pr.iq_setpoint;
      row.current = p.currents();
      row.angle = th;
      row.angle_error = std::isnan(pr.angle) ? NAN : detail::wrap_angle(pr.angle - th);
      row.duty = p.duty();
      // The last period's average voltage, turned at the rotor angle of its middle.
      const double mid = th - p.motor_model().electrical_speed(x.motor) * p.period() / 2;
      row.vd = v.alpha * std::cos(mid) + v.beta * std::sin(mid);
      row.vq = -v.alpha * std::sin(mid) + v.beta * std::cos(mid);
      row.bus_voltage = p.bus_voltage();
      row.torque = p.torque();
      row.load_torque = load;
      row.controller_fault = pr.fault;
      result.records.push_back(row);
    }
    p.advance(load);
    if (!(std::fabs(p.state().motor.speed) <= limit)) {
      result.outcome = status::failure("overspeed: " + text(p.state().motor.speed) + " rad/s at t = " + text(p.time()) +
                                       " s exceeds the speed limit of " + text(limit) + " rad/s");
      break;
    }
  }
  if (options.progress) options.progress(1.0);
  return result;
}

}  // namespace dqfx::sim
