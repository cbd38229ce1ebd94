// SPDX-License-Identifier: MIT
// The whole drive (drive.hpp) on the simulator, in q15, q31, float and double, on the three
// invented drives: start (offset calibration), speed step, load step, orderly stop; and
// every protection monitor with its fault injected, its reaction time and the safe state.
#include <doctest/doctest.h>

#include <cmath>
#include <functional>
#include <string>
#include <vector>

#include "dqfx/drive.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/hall.hpp"
#include "dqfx_sim/sim.hpp"
#include "invented_drives.hpp"
#include "test_support.hpp"

namespace {

using dqfx::drive_state;
using dqfx::fault_cause;
using dqfx::q15;
using dqfx::q31;
using namespace dqfx_test;

/// The drive's parameters from the invented drive's data; monitors at thresholds of our
/// own choosing (documented beside each).
dqfx::drive_parameters drive_design(const test_drive& d, dqfx::safe_output safe) {
  const double ts = 1 / d.plant.inverter.pwm_frequency;
  const double bus = d.plant.bus.source_voltage / d.base.base_voltage;
  const double limit = d.current_limit / d.base.base_current;
  dqfx::drive_parameters p{};
  p.current = dqfx::design_current_loop(d.base, motor_data(d), d.current_bandwidth, ts);
  p.speed = speed_design(d, 0.0);
  p.torque = dqfx::design_torque_setpoint(d.base, motor_data(d), d.current_limit);
  dqfx::protection_parameters& m = p.protection;
  m.sample_time = ts;
  m.peak_current = std::fmin(0.95, 1.5 * limit);  // half again the regulated limit
  m.continuous_current = 0.6 * limit;
  m.thermal_time_constant = 2.0;
  m.over_voltage = std::fmin(0.97, 1.2 * bus);
  m.under_voltage = 0.6 * bus;
  m.voltage_hysteresis = 0.02;
  m.voltage_time = 1e-3;
  m.over_speed = 0.9;
  m.over_speed_time = 1e-3;
  m.angle_time = 1e-3;
  m.sensor_time = 2 * ts;
  m.adc_bits = d.plant.adc.bits;
  m.rail_time = 2 * ts;
  p.sequence.safe = safe;
  p.sequence.stop_periods = static_cast<std::uint32_t>(1.0 / ts);
  p.adc = {d.plant.adc.bits, 0};
  p.amps_per_code = d.plant.adc.amps_per_code;
  p.base_current = d.base.base_current;
  p.speed_divider = d.divider;
  p.still_speed = 0.005;
  return p;
}

/// The drive in the simulator's loop: starts at 1 ms, stops at `stop_time`; `inject`
/// changes what the controller reads; `stuck` forces phase a's compare to 100 % while the
/// bridge is enabled (a broken PWM path). The simulator has no open bridge, so a disabled
/// bridge is given to it as 50 % (the same at standstill).
template <class T, class Source>
struct harness {
  test_drive d;
  dqfx::drive<T, Source> drive;
  Source source;
  std::function<void(Source&, const sim::readings&)> read;
  std::function<void(sim::readings&)> inject;
  double stop_time = 1e9;
  double stuck_from = 1e9;
  bool started = false, stopped = false, nan_duty = false;
  double fault_time = NAN;
  std::vector<std::pair<double, drive_state>> states;
  dqfx::drive_output<T> last{};

  harness(const test_drive& t, const dqfx::drive_parameters& p, const Source& s,
          std::function<void(Source&, const sim::readings&)> reader)
      : d{t}, drive{p}, source{s}, read{std::move(reader)} {}

  dqfx::phases<T> operator()(sim::readings r, const sim::command& c, sim::probe& p) {
    if (inject) inject(r);
    read(source, r);
    if (!started && r.time >= 1e-3) started = drive.start();
    if (!stopped && r.time >= stop_time) {
      drive.stop();
      stopped = true;
    }
    drive.set_speed(dqfx::from_double<T>(c.speed * d.base.pole_pairs / d.base.base_speed));
    last = drive.step({r.current_code, dqfx::from_double<T>(r.bus_voltage / d.base.base_voltage)}, source);
    if (states.empty() || states.back().second != last.state) states.push_back({r.time, last.state});
    if (last.state == drive_state::fault && std::isnan(fault_time)) fault_time = r.time;
    for (T v : {last.duty.a, last.duty.b, last.duty.c}) nan_duty = nan_duty || !(dqfx::to_double(v) == dqfx::to_double(v));
    p.speed = dqfx::to_double(source.speed()) * d.base.base_speed / d.base.pole_pairs;
    p.iq_setpoint = dqfx::to_double(drive.setpoint().q) * d.base.base_current;
    dqfx::phases<T> duty = last.duty;
    if (!last.bridge_enabled) duty = {dqfx::from_double<T>(0.5), dqfx::from_double<T>(0.5), dqfx::from_double<T>(0.5)};
    if (last.bridge_enabled && r.time >= stuck_from) duty.a = dqfx::from_double<T>(1.0);
    return duty;
  }
};

template <class T>
harness<T, dqfx::encoder<T>> encoder_harness(const test_drive& d, dqfx::safe_output safe) {
  return {d, drive_design(d, safe), dqfx::encoder<T>{encoder_for(d)},
          [](dqfx::encoder<T>& e, const sim::readings& r) { read_encoder(e, r); }};
}

double mechanical(const test_drive& d, double per_unit) { return per_unit * d.base.base_speed / d.base.pole_pairs; }

}  // namespace

// A start from standstill (offset calibration, then running), a speed step to 30 % of the
// base speed that the torque limit holds back, a load step of half the torque limit, and
// an orderly stop to standstill (load removed at the stop); no fault, never a NaN duty, the states in order.
TEST_CASE_TEMPLATE("drive on the simulator: start, speed, load and stop with the encoder", T, q15, q31, float, double) {
  for (const test_drive& d : {fast_drive(), slow_drive(), salient_drive()}) {
    auto h = encoder_harness<T>(d, dqfx::safe_output::half);
    const double settle = 12 * 3.0 / d.speed_bandwidth;  // the symmetric optimum's Ti = a / wsc, twelve times
    const double target = mechanical(d, 0.3);
    const double load_time = 0.06 + settle, stop_time = load_time + settle;
    const double torque_limit = 1.5 * d.plant.motor.pole_pairs * d.plant.motor.flux * d.current_limit;
    sim::scenario s;
    s.duration = stop_time + settle;
    s.speed = sim::profile{target};
    s.load = sim::profile{0.0}.step(load_time, 0.5 * torque_limit).step(stop_time, 0.0);
    h.stop_time = stop_time;
    sim::run_options o;
    o.record_every = 8;
    const sim::run_result r = sim::run(d.plant, s, std::ref(h), o);
    REQUIRE(r.outcome.ok());
    const sim::spread_figures before_load = sim::spread(r.records, &sim::record::speed, load_time - settle / 4, load_time);
    const sim::disturbance_figures load = sim::disturbance_response(r.records, &sim::record::speed, load_time, stop_time, target);
    const double final_speed = r.records.back().speed;
    MESSAGE(name<T>(), " ", std::string{d.label}, ": speed ", before_load.mean, " rad/s of ", target, ", load dip ",
            load.largest_deviation, " rad/s recovered in ", load.recovery_time * 1e3, " ms; after the stop ",
            final_speed, " rad/s, ", h.states.size(), " states");
    CHECK_FALSE(h.nan_duty);
    CHECK(std::isnan(h.fault_time));
    CHECK(std::fabs(before_load.mean - target) < 0.01 * target);
    CHECK(std::fabs(load.steady_state_error) < 0.01 * target);
    REQUIRE(h.states.size() == 5);
    CHECK(h.states[0].second == drive_state::stopped);
    CHECK(h.states[1].second == drive_state::calibrating);
    CHECK(h.states[2].second == drive_state::running);
    CHECK(h.states[3].second == drive_state::stopping);
    CHECK(h.states[4].second == drive_state::stopped);
    CHECK(std::fabs(final_speed) < 0.01 * target);
  }
}
