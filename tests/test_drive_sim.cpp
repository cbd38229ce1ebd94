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
  const double period = 1 / d.plant.inverter.pwm_frequency;
  const double bus = d.plant.bus.source_voltage / d.base.base_voltage;
  const double limit = d.current_limit / d.base.base_current;
  dqfx::drive_parameters p{};
  p.current = dqfx::design_current_loop(d.base, motor_data(d), d.current_bandwidth, period);
  const dqfx::design_check fits = p.current.check();
  REQUIRE_MESSAGE(fits.ok(), d.label, ": ", (fits.ok() ? "" : fits.quantity), " = ", fits.value);
  p.speed = speed_design(d, 0.0);
  p.torque = dqfx::design_torque_setpoint(d.base, motor_data(d), d.current_limit);
  dqfx::protection_parameters& m = p.protection;
  m.sample_time = period;
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
  m.sensor_time = 2 * period;
  m.adc_bits = d.plant.adc.bits;
  m.rail_time = 2 * period;
  p.sequence.safe = safe;
  p.sequence.stop_periods = static_cast<std::uint32_t>(1.0 / period);
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
  std::function<void(dqfx::drive<T, Source>&, double)> command;  // user commands at times
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
    if (command) command(drive, r.time);
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

namespace {

/// One injected fault: what tripped, when (s after the injection, and after the true
/// condition where there is one), and whether the outputs were the safe ones from then on.
struct reaction {
  fault_cause cause = fault_cause::none;
  double after_injection = NAN;
  bool safe = false;
};

template <class T, class Source>
void check_safe(const harness<T, Source>& h, dqfx::safe_output safe, reaction& out) {
  const double level = safe == dqfx::safe_output::low_side_on ? 0.0 : 0.5;
  const dqfx::drive_output<T>& o = h.last;
  out.cause = o.cause;
  out.safe = o.state == drive_state::fault && o.bridge_enabled == (safe != dqfx::safe_output::all_off) &&
             dqfx::to_double(o.duty.a) == level && dqfx::to_double(o.duty.b) == level &&
             dqfx::to_double(o.duty.c) == level && !h.nan_duty;
}

/// Runs the drive at 30 % speed and injects from `at` on (through `setup`, which may also
/// change the parameters and the load); returns the reaction and the records.
template <class T>
reaction injected(const test_drive& d, double at, dqfx::safe_output safe,
                  const std::function<void(dqfx::drive_parameters&, sim::scenario&)>& design,
                  const std::function<void(harness<T, dqfx::encoder<T>>&)>& setup, std::vector<sim::record>* rows = nullptr) {
  dqfx::drive_parameters p = drive_design(d, safe);
  sim::scenario s;
  s.duration = at + 0.05;
  s.speed = sim::profile{mechanical(d, 0.3)};
  design(p, s);
  harness<T, dqfx::encoder<T>> h{d, p, dqfx::encoder<T>{encoder_for(d)},
                                 [](dqfx::encoder<T>& e, const sim::readings& r) { read_encoder(e, r); }};
  setup(h);
  const sim::run_result r = sim::run(d.plant, s, std::ref(h));
  REQUIRE(r.outcome.ok());
  reaction out;
  out.after_injection = h.fault_time - at;
  check_safe(h, safe, out);
  if (rows) *rows = r.records;
  return out;
}

/// The first recorded time from `from` on at which `condition` holds (NaN: never).
template <class Condition>
double first_time(const std::vector<sim::record>& rows, double from, Condition condition) {
  for (const sim::record& x : rows)
    if (x.time >= from && condition(x)) return x.time;
  return NAN;
}

const auto no_change = [](dqfx::drive_parameters&, sim::scenario&) {};

}  // namespace

// Every monitor, its fault injected into the running drive: the cause latched, the
// reaction time and the safe output from then on. A monitor with a time of N periods trips
// in the N-th faulty sample; the safe output reaches the bridge one period later (the
// simulator's duty delay, as on most timers). The salient drive for all; the two faults
// that hit the current path also on the other two drives.
TEST_CASE_TEMPLATE("drive on the simulator: injected faults trip the right monitor in time", T, q15, q31, float, double) {
  using dqfx::safe_output;
  for (const test_drive& d : {salient_drive(), fast_drive(), slow_drive()}) {
    // After the start: the slow drive calibrates and accelerates longest.
    const double period = 1 / d.plant.inverter.pwm_frequency, at = d.plant.inverter.pwm_frequency < 10e3 ? 0.12 : 0.08;
    const std::string label = name<T>() + " " + d.label;
    {  // ADC at its rail: the amplifier of phase b shorted to the supply.
      const reaction r = injected<T>(d, at, safe_output::all_off, no_change, [&](auto& h) {
        h.inject = [at](sim::readings& x) { if (x.time >= at) x.current_code[1] = 4095; };
      });
      MESSAGE(label, ": ADC rail tripped ", std::string{r.cause == fault_cause::adc_rail ? "adc_rail" : "OTHER"},
              " in faulty sample ", r.after_injection / period + 1, " (rail time 2 periods)");
      CHECK(r.cause == fault_cause::adc_rail);
      CHECK(r.after_injection <= 2 * period + 1e-9);
      CHECK(r.safe);
    }
    {  // A broken PWM path holds phase a's high side on: a real over-current.
      std::vector<sim::record> rows;
      const dqfx::drive_parameters p = drive_design(d, safe_output::all_off);
      const double threshold = p.protection.peak_current * d.base.base_current;
      const reaction r = injected<T>(d, at, safe_output::all_off, no_change, [&](auto& h) { h.stuck_from = at; }, &rows);
      const double crossing = first_time(rows, at, [&](const sim::record& x) {
        return std::fmax(std::fabs(x.current.a), std::fmax(std::fabs(x.current.b), std::fabs(x.current.c))) > threshold;
      });
      const double reaction_time = r.after_injection + at - crossing;
      MESSAGE(label, ": stuck phase: current above ", threshold, " A after ", (crossing - at) / period,
              " periods, tripped over_current in sample ", reaction_time / period + 1, " above it");
      CHECK(r.cause == fault_cause::over_current);
      CHECK(reaction_time <= 2 * period + 1e-9);  // debounce 1 period, plus the sample
      CHECK(r.safe);
    }
    if (std::string{d.label} != salient_drive().label) continue;
    {  // The bus reading 40 % high (over-voltage), then 50 % low (under-voltage).
      for (double factor : {1.4, 0.5}) {
        const reaction r = injected<T>(d, at, safe_output::low_side_on, no_change, [&](auto& h) {
          h.inject = [at, factor](sim::readings& x) { if (x.time >= at) x.bus_voltage *= factor; };
        });
        const fault_cause expected = factor > 1 ? fault_cause::over_voltage : fault_cause::under_voltage;
        MESSAGE(label, ": bus reading x", factor, " tripped in faulty sample ", r.after_injection / period + 1,
                " (voltage time ", 1e-3 / period, " periods)");
        CHECK(r.cause == expected);
        CHECK(r.after_injection <= 1e-3 + 1e-9);
        CHECK(r.safe);
      }
    }
    {  // Overload: a load of 90 % of the torque limit for good; the I^2 t estimate with a
       // 0.1 s time constant trips on the cold curve of the current that flows.
      std::vector<sim::record> rows;
      const double torque_limit = 1.5 * d.plant.motor.pole_pairs * d.plant.motor.flux * d.current_limit;
      const reaction r = injected<T>(d, at, safe_output::low_side_on, [&](dqfx::drive_parameters& p, sim::scenario& s) {
        p.protection.thermal_time_constant = 0.1;
        s.load = sim::profile{0.0}.step(at, 0.9 * torque_limit);
        s.duration = at + 0.2;
      }, [](auto&) {}, &rows);
      const sim::spread_figures id = sim::spread(rows, &sim::record::id, at + 0.02, at + 0.05);
      const sim::spread_figures iq = sim::spread(rows, &sim::record::iq, at + 0.02, at + 0.05);
      const double ratio = std::hypot(id.mean, iq.mean) / (0.6 * d.current_limit);
      const double expected = 0.1 * std::log(ratio * ratio / (ratio * ratio - 1));
      MESSAGE(label, ": overload at ", ratio, " times the continuous current tripped after ", r.after_injection * 1e3,
              " ms; cold curve ", expected * 1e3, " ms");
      CHECK(r.cause == fault_cause::overload);
      CHECK(r.after_injection == doctest::Approx(expected).epsilon(0.1));  // the current's rise and ripple
      CHECK(r.safe);
    }
    {  // Over-speed: an overhauling load of 1.5 times the torque limit; threshold 0.4 pu.
      std::vector<sim::record> rows;
      const double torque_limit = 1.5 * d.plant.motor.pole_pairs * d.plant.motor.flux * d.current_limit;
      const reaction r = injected<T>(d, at, safe_output::low_side_on, [&](dqfx::drive_parameters& p, sim::scenario& s) {
        p.protection.over_speed = 0.4;
        s.load = sim::profile{0.0}.step(at, -1.5 * torque_limit);
      }, [](auto&) {}, &rows);
      const double crossing = first_time(rows, at, [&](const sim::record& x) { return x.speed > mechanical(d, 0.4); });
      const double filter = 1 / (8 * d.speed_bandwidth);
      MESSAGE(label, ": over-speed tripped ", (r.after_injection + at - crossing) * 1e3,
              " ms after the true speed crossed (over-speed time 1 ms, speed filter ", filter * 1e3, " ms)");
      CHECK(r.cause == fault_cause::over_speed);
      CHECK(r.after_injection + at - crossing <= 1e-3 + 3 * filter);
      CHECK(r.safe);
    }
    {  // Encoder glitch of three periods (a noise burst on the A/B lines): refused readings.
      const reaction r = injected<T>(d, at, safe_output::low_side_on, no_change, [&](auto& h) {
        h.inject = [at, period](sim::readings& x) { if (x.time >= at && x.time < at + 2.5 * period) x.encoder_count += 100000; };
      });
      MESSAGE(label, ": encoder glitch tripped sensor in faulty sample ", r.after_injection / period + 1, " (sensor time 2 periods)");
      CHECK(r.cause == fault_cause::sensor);
      CHECK(r.after_injection <= 2 * period + 1e-9);
      CHECK(r.safe);
    }
    {  // Encoder counter frozen while the shaft turns (a broken cable): stuck, lost, no angle.
      const reaction r = injected<T>(d, at, safe_output::low_side_on, no_change, [&](auto& h) {
        h.inject = [at, frozen = std::uint32_t{0}, held = false](sim::readings& x) mutable {
          if (x.time < at) return;
          if (!held) frozen = x.encoder_count;
          held = true;
          x.encoder_count = frozen;
        };
      });
      MESSAGE(label, ": frozen encoder tripped ", std::string{r.cause == fault_cause::angle_lost ? "angle_lost" : "OTHER"},
              " after ", r.after_injection * 1e3, " ms (angle time 1 ms after the stuck check)");
      CHECK(r.cause == fault_cause::angle_lost);
      CHECK(r.after_injection <= 3e-3);
      CHECK(r.safe);
    }
  }
}

// Hall sensors as the angle source (the same drive type, another template argument): a
// bad state (111, a broken pull-up) for three periods trips the sensor monitor.
TEST_CASE_TEMPLATE("drive on the simulator: Hall sensors, and a Hall state 111 trips the sensor monitor", T, q15, q31,
                   float, double) {
  const test_drive d = salient_drive();
  const double period = 1 / d.plant.inverter.pwm_frequency, at = 0.1;
  dqfx::hall_parameters hp{};
  // The simulator's sensors: 5, 1, 3, 2, 6, 4 forward, the first from 0 (sensors.hpp).
  hp.table = dqfx::hall_table::evenly({5, 1, 3, 2, 6, 4}, dqfx::angle{});
  hp.base_speed = d.base.base_speed;
  hp.sample_time = period;
  hp.tick_frequency = capture_clock;
  harness<T, dqfx::hall_sensor<T>> h{d, drive_design(d, dqfx::safe_output::low_side_on), dqfx::hall_sensor<T>{hp},
                                     [](dqfx::hall_sensor<T>& s, const sim::readings& r) {
                                       const auto ticks = [](double t) {
                                         return static_cast<std::uint32_t>(static_cast<std::uint64_t>(t * capture_clock));
                                       };
                                       s.update(r.hall, ticks(r.hall_edge_time < 0 ? 0.0 : r.hall_edge_time), ticks(r.time));
                                     }};
  h.inject = [&](sim::readings& x) { if (x.time >= at && x.time < at + 2.5 * period) x.hall = 7; };
  sim::scenario s;
  s.duration = at + 0.02;
  s.speed = sim::profile{mechanical(d, 0.3)};
  const sim::run_result r = sim::run(d.plant, s, std::ref(h));
  REQUIRE(r.outcome.ok());
  const sim::spread_figures speed = sim::spread(r.records, &sim::record::speed, at - 0.02, at);
  MESSAGE(name<T>(), ": Hall drive at ", speed.mean, " rad/s of ", mechanical(d, 0.3), "; state 111 tripped ",
          std::string{h.last.cause == fault_cause::sensor ? "sensor" : "OTHER"}, " in faulty sample ",
          (h.fault_time - at) / period + 1);
  CHECK(speed.mean == doctest::Approx(mechanical(d, 0.3)).epsilon(0.02));
  CHECK(h.last.cause == fault_cause::sensor);
  CHECK(h.fault_time - at <= 2 * period + 1e-9);
  reaction out;
  check_safe(h, dqfx::safe_output::low_side_on, out);
  CHECK(out.safe);
}

// After a fault: a clear is refused while the condition lasts and accepted after; the
// restart calibrates again (the zero vector of `half` brakes the motor until the offsets
// are accepted at standstill) and runs up with fresh integrators: no runaway, the speed
// reached as on the first start.
TEST_CASE_TEMPLATE("drive on the simulator: clear only when the condition is gone, restart with fresh integrators", T,
                   q15, q31, float, double) {
  const test_drive d = salient_drive();
  const double at = 0.08, target = mechanical(d, 0.3);
  auto h = encoder_harness<T>(d, dqfx::safe_output::half);
  bool refused = false, accepted = false, restarted = false;
  h.inject = [at](sim::readings& x) { if (x.time >= at && x.time < at + 0.01) x.bus_voltage *= 1.4; };
  h.command = [&](dqfx::drive<T, dqfx::encoder<T>>& drive, double t) {
    if (t >= at + 0.005 && !refused) refused = !drive.clear();
    if (t >= at + 0.015 && !accepted) accepted = drive.clear();
    if (accepted && !restarted) restarted = drive.start();
  };
  sim::scenario s;
  s.duration = at + 0.5;
  s.speed = sim::profile{target};
  const sim::run_result r = sim::run(d.plant, s, std::ref(h));
  REQUIRE(r.outcome.ok());
  double restart_time = NAN;
  for (std::size_t k = 1; k < h.states.size(); ++k)
    if (h.states[k].second == drive_state::running && h.states[k].first > at) restart_time = h.states[k].first;
  REQUIRE_FALSE(std::isnan(restart_time));
  const sim::step_figures run_up = sim::step_response(r.records, &sim::record::speed, restart_time, s.duration, target, 0.02);
  MESSAGE(name<T>(), ": running again after ", (restart_time - at) * 1e3, " ms (braked by the zero vector while "
          "calibrating), overshoot ", run_up.overshoot * 100, " %, final ", r.records.back().speed, " rad/s of ", target);
  CHECK(refused);
  CHECK(accepted);
  CHECK(restarted);
  CHECK_FALSE(h.nan_duty);
  CHECK(h.last.state == drive_state::running);
  CHECK(run_up.overshoot < 0.1);
  CHECK(r.records.back().speed == doctest::Approx(target).epsilon(0.01));
}

// The optional alignment stage: d current at the forced angle 0 pulls the rotor from any
// start angle to the d axis on phase a, then the drive runs on the encoder.
TEST_CASE_TEMPLATE("drive on the simulator: alignment pulls the rotor to the d axis, then it runs", T, q15, q31, float,
                   double) {
  const test_drive d = salient_drive();
  const double period = 1 / d.plant.inverter.pwm_frequency, align = 0.06;
  dqfx::drive_parameters p = drive_design(d, dqfx::safe_output::half);
  p.sequence.align_periods = static_cast<std::uint32_t>(align / period);
  p.align_current = 0.3 * d.current_limit / d.base.base_current;
  // Critical damping of the swing about the forced angle (drive.hpp, align_damping).
  const sim::motor_parameters& m = d.plant.motor;
  const double kt = 1.5 * m.pole_pairs * m.flux, wn = std::sqrt(kt * 0.3 * d.current_limit * m.pole_pairs / m.inertia);
  p.align_damping = 2 * wn * m.inertia / (kt * m.pole_pairs) * d.base.base_speed / d.base.base_current;
  harness<T, dqfx::encoder<T>> h{d, p, dqfx::encoder<T>{encoder_for(d)},
                                 [](dqfx::encoder<T>& e, const sim::readings& r) { read_encoder(e, r); }};
  sim::scenario s;
  s.duration = 0.2;
  s.speed = sim::profile{mechanical(d, 0.3)};
  s.initial.position = 2.0 / d.plant.motor.pole_pairs;  // 115 electrical degrees off
  const sim::run_result r = sim::run(d.plant, s, std::ref(h));
  REQUIRE(r.outcome.ok());
  REQUIRE(h.states.size() >= 4);
  CHECK(h.states[2].second == drive_state::aligning);
  CHECK(h.states[3].second == drive_state::running);
  const double end = h.states[3].first;
  const sim::record* at_end = nullptr;
  for (const sim::record& x : r.records)
    if (x.time < end) at_end = &x;
  REQUIRE(at_end != nullptr);
  const double off = std::remainder(at_end->angle, 2 * pi) * 180 / pi;
  const sim::spread_figures speed = sim::spread(r.records, &sim::record::speed, 0.18, 0.2);
  MESSAGE(name<T>(), ": aligned to ", off, " electrical degrees, then ", speed.mean, " rad/s of ", mechanical(d, 0.3));
  CHECK(std::fabs(off) < 5.0);
  CHECK(speed.mean == doctest::Approx(mechanical(d, 0.3)).epsilon(0.01));
  CHECK(std::isnan(h.fault_time));
}
