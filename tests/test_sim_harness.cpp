// SPDX-License-Identifier: MIT
// The simulator's sensors, harness and figures: ADC codes against the kernels' own
// conversion, encoder and Hall signals and their edge times, scenario profiles, refused
// runs, and the step-response figures against textbook closed forms.
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "dqfx/current_sensing.hpp"
#include "dqfx/number.hpp"
#include "dqfx_sim/harness.hpp"
#include "dqfx_sim/metrics.hpp"

namespace {

using namespace dqfx::sim;

// Invented surface-magnet motor on a 24 V board (not a real product).
plant_parameters invented() {
  plant_parameters p;
  p.motor = {0.2, 200e-6, 200e-6, 0.006, 3, 5e-5, 1e-5};
  p.inverter.pwm_frequency = 20e3;
  p.bus.source_voltage = 24.0;
  p.adc.amps_per_code = 0.01;
  p.encoder.counts_per_turn = 1000;
  return p;
}

// A plant spinning freely at a constant speed: the magnet removed (flux 0) and no
// friction, so nothing brakes it.
plant coasting(double speed, plant_parameters p = invented()) {
  p.motor.flux = 0.0;
  p.motor.friction = 0.0;
  motor_state start;
  start.speed = speed;
  return plant{p, start};
}

std::vector<record> synthetic(double (*f)(double), double step_time, double end, double dt) {
  std::vector<record> rows;
  for (double t = 0; t <= end + 1e-12; t += dt) {
    record r;
    r.time = t;
    r.speed = t < step_time ? 0.0 : f(t - step_time);
    rows.push_back(r);
  }
  return rows;
}

}  // namespace

TEST_CASE("sim sensors: ADC codes read back through dqfx::current_channel within half a code") {
  adc_parameters a;
  a.bits = 12;
  a.amps_per_code = -0.02;  // inverting amplifier
  current_adc adc{a};
  const auto channel = dqfx::current_channel<double>::from_amplifier({12, 0}, a.amps_per_code, 1.0);
  for (double i = -35.0; i <= 35.0; i += 0.37) {
    const auto codes = adc.sample({i, -i / 2, -i / 2});
    CHECK(std::fabs(channel.current(codes[0]) - i) <= 0.01 + 1e-12);
    CHECK(adc.amps(codes[0]) == doctest::Approx(channel.current(codes[0])));
  }
  // Beyond the converter's range the codes rail.
  CHECK(adc.sample({100.0, 0, 0})[0] == 0);
  CHECK(adc.sample({-100.0, 0, 0})[0] == 4095);
}

TEST_CASE("sim sensors: ADC offset and noise have the asked mean and rms") {
  adc_parameters a;
  a.offset_codes = {5.0, -3.0, 0.0};
  a.noise_codes = 2.0;
  a.seed = 7;
  current_adc adc{a};
  double sum[3]{}, square = 0;
  const int n = 20000;
  for (int k = 0; k < n; ++k) {
    const auto c = adc.sample({0, 0, 0});
    for (int p = 0; p < 3; ++p) sum[p] += c[static_cast<std::size_t>(p)] - 2048.0;
    square += (c[2] - 2048.0) * (c[2] - 2048.0);
  }
  CHECK(sum[0] / n == doctest::Approx(5.0).epsilon(0.01));
  CHECK(sum[1] / n == doctest::Approx(-3.0).epsilon(0.02));
  // Rounding to a code adds 1/12 code^2 of variance (uniform quantisation, textbook).
  CHECK(std::sqrt(square / n) == doctest::Approx(std::sqrt(4.0 + 1.0 / 12)).epsilon(0.02));
  // The same seed gives the same codes.
  current_adc again{a}, other{a};
  CHECK(again.sample({1, 2, 3}) == other.sample({1, 2, 3}));
}

TEST_CASE("sim sensors: encoder counter, wrap and edge times at constant speed") {
  encoder_parameters e{1000, 4294967290u};  // starts just below the 32-bit wrap
  CHECK(encoder_counter(e, 0.0) == 4294967290u);
  CHECK(encoder_counter(e, 2 * pi * 10.5 / 1000) == 4u);           // 10 edges on: wrapped
  CHECK(encoder_counter(e, -2 * pi * 0.5 / 1000) == 4294967289u);  // half a count back
  // A plant turning at 50 rad/s: the counter follows, and the last edge time is the exact
  // crossing time of the last count boundary.
  const double w = 50.0;
  plant x = coasting(w);
  for (int k = 0; k < 300; ++k) x.advance(0.0);
  const readings r = x.sample();
  const double counts = w * r.time * 1000 / (2 * pi);
  CHECK(r.encoder_count == static_cast<std::uint32_t>(std::floor(counts)));
  const double edge = std::floor(counts) * 2 * pi / 1000 / w;
  CHECK(r.encoder_edge_time == doctest::Approx(edge).epsilon(1e-9));
}

TEST_CASE("sim sensors: Hall states run 5 1 3 2 6 4 forward, with the edges 60 degrees apart") {
  const hall_parameters h{};
  const std::uint8_t forward[6] = {5, 1, 3, 2, 6, 4};
  for (int s = 0; s < 6; ++s) CHECK(hall_state(h, (s * 60 + 30) * pi / 180) == forward[s]);
  CHECK(hall_state(hall_parameters{pi / 6}, 35 * pi / 180) == 5);  // 30 degrees late: still sector 0
  CHECK(hall_state(hall_parameters{pi / 6}, 95 * pi / 180) == 1);
  // Edge time of a turning rotor: at the exact 60-degree boundary crossed last.
  const double w = 40.0;  // mechanical rad/s, 3 pole pairs
  plant x = coasting(w);
  for (int k = 0; k < 457; ++k) x.advance(0.0);
  const readings r = x.sample();
  const double electrical = 3 * w * r.time;
  const double boundary = std::floor(electrical / (pi / 3)) * (pi / 3);
  CHECK(r.hall == hall_state(h, std::fmod(electrical, 2 * pi)));
  CHECK(r.hall_edge_time == doctest::Approx(boundary / (3 * w)).epsilon(1e-9));
}

TEST_CASE("sim harness: profiles step and ramp") {
  profile p;
  p.step(0.1, 10.0).ramp_to(0.3, 30.0).step(0.5, -5.0);
  CHECK(p.at(0.0) == 0.0);
  CHECK(p.at(0.0999) == 0.0);
  CHECK(p.at(0.1) == 10.0);
  CHECK(p.at(0.2) == doctest::Approx(20.0));
  CHECK(p.at(0.4) == 30.0);
  CHECK(p.at(0.5) == -5.0);
  CHECK(p.at(9.0) == -5.0);
  CHECK(profile{3.0}.at(1.0) == 3.0);
}

TEST_CASE("sim harness: refused parameters, NaN duties and overspeed stop the run with a message") {
  scenario s;
  s.duration = 0.01;
  auto idle = [](const readings&, const command&) { return dqfx::phases<double>{0.5, 0.5, 0.5}; };
  plant_parameters bad = invented();
  bad.motor.pole_pairs = 0;
  run_result r = run(bad, s, idle);
  CHECK_FALSE(r.outcome.ok());
  CHECK(r.outcome.message().find("pole_pairs") != std::string::npos);
  CHECK(r.records.empty());

  auto broken = [](const readings& in, const command&) {
    const float d = in.period < 5 ? 0.5f : NAN;
    return dqfx::phases<float>{d, d, d};
  };
  r = run(invented(), s, broken);
  CHECK(r.outcome.message().find("non-finite duty") != std::string::npos);
  CHECK(r.records.size() == 5);

  scenario fast = s;
  fast.initial.speed = 1e5;
  r = run(invented(), fast, idle);
  CHECK(r.outcome.message().find("overspeed") != std::string::npos);

  scenario never = s;
  never.duration = -1;
  CHECK(run(invented(), never, idle).outcome.message().find("duration") != std::string::npos);

  // Out-of-range duties are clamped and counted, the run goes on.
  auto wild = [](const readings&, const command&) { return dqfx::phases<double>{1.5, 0.5, -0.5}; };
  r = run(invented(), s, wild);
  CHECK(r.outcome.ok());
  CHECK(r.clamped_duties == 2 * r.records.size());
}

TEST_CASE("sim harness: records, progress, decimation and CSV") {
  scenario s;
  s.duration = 0.005;  // 100 periods at 20 kHz
  s.speed.step(0.001, 7.0);
  std::vector<double> progress;
  run_options o;
  o.progress = [&](double f) { progress.push_back(f); };
  o.record_every = 4;
  auto controller = [](const readings&, const command& c, probe& p) {
    p.iq_setpoint = c.speed;  // anything, to see it recorded
    p.angle = 0.1;
    return dqfx::phases<dqfx::q15>{dqfx::from_double<dqfx::q15>(0.5), dqfx::from_double<dqfx::q15>(0.5),
                                   dqfx::from_double<dqfx::q15>(0.5)};
  };
  const run_result r = run(invented(), s, controller, o);
  REQUIRE(r.outcome.ok());
  CHECK(r.records.size() == 25);
  CHECK(r.records[1].time == doctest::Approx(4 / 20e3));
  CHECK(r.records[0].iq_setpoint == 0.0);
  CHECK(r.records.back().iq_setpoint == 7.0);
  CHECK(r.records[3].angle_error == doctest::Approx(0.1));  // the rotor stands at angle 0
  CHECK(progress.front() == 0.0);
  CHECK(progress.back() == 1.0);
  CHECK(progress.size() >= 50);
  CHECK(write_csv("/nonexistent-dir/x.csv", r.records).message().find("cannot open") != std::string::npos);
}

// First-order lag y = 1 - exp(-t/tau): rise time 10-90% = tau*ln 9, settling into 2% =
// tau*ln 50, no overshoot (textbook, e.g. Ogata, "Modern Control Engineering").
TEST_CASE("sim figures: a first-order step response") {
  const auto rows = synthetic([](double t) { return 100.0 * (1 - std::exp(-t / 0.01)); }, 0.05, 0.3, 1e-5);
  const step_figures f = step_response(rows, &record::speed, 0.05, 0.3, 100.0);
  CHECK(f.rise_time == doctest::Approx(0.01 * std::log(9.0)).epsilon(2e-3));
  CHECK(f.settling_time == doctest::Approx(0.01 * std::log(50.0)).epsilon(2e-3));
  CHECK(f.overshoot == 0.0);
  CHECK(std::fabs(f.steady_state_error) < 1e-6);
}

// Second-order step with damping zeta: overshoot exp(-zeta*pi/sqrt(1-zeta^2)) (Ogata,
// "Modern Control Engineering").
TEST_CASE("sim figures: second-order overshoot, ripple of a sine, recovery from a dip, angle error") {
  static const double zeta = 0.3, wn = 200.0;
  const auto rows = synthetic(
      [](double t) {
        const double wd = wn * std::sqrt(1 - zeta * zeta);
        return 1 - std::exp(-zeta * wn * t) * (std::cos(wd * t) + zeta / std::sqrt(1 - zeta * zeta) * std::sin(wd * t));
      },
      0.0, 0.5, 1e-6);
  const step_figures f = step_response(rows, &record::speed, 0.0, 0.5, 1.0);
  CHECK(f.overshoot == doctest::Approx(std::exp(-zeta * pi / std::sqrt(1 - zeta * zeta))).epsilon(1e-4));

  std::vector<record> sine;
  for (int k = 0; k < 10000; ++k) {
    record r;
    r.time = k * 1e-4;
    r.iq = 5 + 0.5 * std::sin(2 * pi * 50 * r.time);
    r.angle_error = (k % 2 ? 1 : -1) * 2 * pi / 180;  // +/-2 degrees
    sine.push_back(r);
  }
  const spread_figures s = ripple(sine, &record::iq, 0.0, 1.0);
  CHECK(s.mean == doctest::Approx(5.0).epsilon(1e-6));
  CHECK(s.rms == doctest::Approx(0.5 / std::sqrt(2.0)).epsilon(1e-4));
  CHECK(s.peak_to_peak == doctest::Approx(1.0).epsilon(1e-4));
  // A dip of 0.5 below 5 that decays as exp(-t/0.02) after t = 0.1: back within 2% of 5
  // (0.1) when 0.5*exp(-t/0.02) = 0.1, t = 0.02*ln 5.
  std::vector<record> dip;
  for (int k = 0; k < 10000; ++k) {
    record r;
    r.time = k * 1e-4;
    r.speed = r.time < 0.1 ? 5.0 : 5.0 - 0.5 * std::exp(-(r.time - 0.1) / 0.02);
    dip.push_back(r);
  }
  const disturbance_figures d = disturbance_response(dip, &record::speed, 0.1, 1.0, 5.0);
  CHECK(d.largest_deviation == doctest::Approx(-0.5));
  CHECK(d.recovery_time == doctest::Approx(0.02 * std::log(5.0)).epsilon(5e-3));
  CHECK(std::fabs(d.steady_state_error) < 1e-9);

  const angle_figures a = angle_error(sine, 0.0, 1.0);
  CHECK(a.rms_degrees == doctest::Approx(2.0));
  CHECK(a.largest_degrees == doctest::Approx(2.0));
}
