// SPDX-License-Identifier: MIT
// Closed loop on the simulator, in q15, q31, float and double: the current loop's step
// response against its IMC design, the no-load back-EMF and the steady-state torque seen
// through the whole measurement chain, and the speed drive through steps and a load step
// (the types against the double drive).
#include <doctest/doctest.h>

#include <cmath>
#include <string>
#include <utility>

#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx_sim/sim.hpp"
#include "test_support.hpp"

namespace {

namespace sim = dqfx::sim;
using dqfx::q15;
using dqfx::q31;
using sim::pi;

using dqfx_test::name;

constexpr double rpm = 2 * pi / 60;

// Invented interior-magnet motor on a 48 V board (not a real product).
sim::plant_parameters invented_board() {
  sim::plant_parameters p;
  p.motor = {0.12, 180e-6, 260e-6, 0.011, 4, 2e-4, 2e-5};
  p.inverter.pwm_frequency = 20e3;
  p.bus.source_voltage = 48.0;
  p.adc.bits = 12;
  p.adc.amps_per_code = -0.0195;
  p.encoder.counts_per_turn = 8192;
  p.encoder.count_at_zero = 123;
  return p;
}

constexpr dqfx::per_unit_base base{25.0, 60.0, 2 * pi * 400, 4};

sim::speed_drive_design invented_drive() {
  sim::speed_drive_design d;
  d.plant = invented_board();
  d.base = base;
  d.current_bandwidth = 2 * pi * 600;
  d.speed_bandwidth = 2 * pi * 30;
  d.current_limit = 15.0;
  d.speed_window = 40;
  return d;
}

// The current loop alone at a fixed angle and speed: for tests that hold the rotor.
template <class T>
struct current_controller {
  dqfx::current_loop<T> loop;
  dqfx::current_channel<T> channel;
  sim::encoder_parameters encoder;
  double id = 0, iq = 0;  // set-points, A
  double step_time = 0;   // the set-points apply from here on

  current_controller(const sim::plant_parameters& p, double bandwidth)
      : loop{dqfx::design_current_loop(base, {p.motor.resistance, p.motor.ld, p.motor.lq, p.motor.flux}, bandwidth,
                                       1 / p.inverter.pwm_frequency)},
        channel{dqfx::current_channel<T>::from_amplifier({p.adc.bits, 0}, p.adc.amps_per_code, base.base_current)},
        encoder{p.encoder} {}

  dqfx::phases<T> operator()(const sim::readings& r, const sim::command&, sim::probe& p) {
    // Electrical angle from the encoder (4 pole pairs), speed from the truth's scenario.
    const double turns = static_cast<double>((r.encoder_count - encoder.count_at_zero) % encoder.counts_per_turn) /
                         encoder.counts_per_turn;
    const dqfx::angle rotor = dqfx::electrical(dqfx::angle::from_turns(turns), 4);
    dqfx::current_loop_input<T> in;
    in.current = {channel.current(r.current_code[0]), channel.current(r.current_code[1]),
                  channel.current(r.current_code[2])};
    in.rotor = dqfx::sincos_of<T>(rotor);
    in.speed = dqfx::from_double<T>(speed / base.base_speed);
    const bool on = r.time >= step_time;
    in.setpoint = {dqfx::from_double<T>(on ? id / base.base_current : 0.0),
                   dqfx::from_double<T>(on ? iq / base.base_current : 0.0)};
    in.bus_voltage = dqfx::from_double<T>(r.bus_voltage / base.base_voltage);
    p.angle = rotor.radians();
    return loop.step(in).duty;
  }
  double speed = 0;  // electrical rad/s told to the loop (feed-forward)
};

}  // namespace

// The IMC design matched to the sampled R-L load (gain_design.hpp; Harnefors and Nee,
// IEEE Trans. Industry Applications, 1998) makes the sampled step response
// 1 - exp(-wc*k*Ts). On the simulated motor held at standstill (no back-EMF, no
// coupling), duties applied at once, it must show up at the samples within the ADC's
// resolution; at k*Ts = 1/wc that is 63.2%.
TEST_CASE_TEMPLATE("sim closed loop: the current step follows the IMC design on the simulated motor", T, q15, q31,
                   float, double) {
  sim::plant_parameters p = invented_board();
  p.motor.inertia = 1e6;  // held
  p.duty_delay = 0;
  const double wc = 2 * pi * 500, ts = 1 / p.inverter.pwm_frequency, step = 0.002;
  current_controller<T> c{p, wc};
  c.iq = 10.0;
  c.step_time = step;
  sim::scenario s;
  s.duration = 0.006;
  const sim::run_result r = sim::run(p, s, c);
  REQUIRE(r.outcome.ok());
  double worst = 0;
  for (const sim::record& x : r.records) {
    if (x.time <= step) continue;
    const double k = std::round((x.time - step) / ts);
    worst = std::fmax(worst, std::fabs(x.iq - 10.0 * (1 - std::exp(-wc * k * ts))));
  }
  const std::size_t at = static_cast<std::size_t>(std::round((step + 1 / wc) / ts));
  MESSAGE(name<T>(), ": iq at 1/wc ", r.records[at].iq, " A of 10 A; largest deviation from the design ", worst, " A");
  CHECK(r.records[at].iq == doctest::Approx(10.0 * (1 - std::exp(-wc * std::round(1 / wc / ts) * ts))).epsilon(0.01));
  CHECK(worst < 0.02);  // one ADC code; measured 0.0045 A (q31, float, double), 0.0059 A (q15)
}

// No-load back-EMF (Krause, Wasynczuk and Sudhoff, "Analysis of Electric Machinery and
// Drive Systems"): with the currents regulated to zero at speed, the inverter must apply
// vq = we*psi and vd = 0, seen here end to end through ADC, encoder, loop and SVM.
TEST_CASE_TEMPLATE("sim closed loop: at zero current the applied voltage is the back-EMF we*psi", T, q15, q31, float,
                   double) {
  sim::plant_parameters p = invented_board();
  p.motor.inertia = 1e6;
  p.duty_delay = 0;
  sim::scenario s;
  s.duration = 0.03;
  s.initial.speed = 2000 * rpm;
  current_controller<T> c{p, 2 * pi * 500};
  c.speed = 4 * s.initial.speed;
  const sim::run_result r = sim::run(p, s, c);
  REQUIRE(r.outcome.ok());
  const sim::spread_figures vq = sim::spread(r.records, &sim::record::vq, 0.02, 0.03);
  const sim::spread_figures vd = sim::spread(r.records, &sim::record::vd, 0.02, 0.03);
  const double emf = 4 * s.initial.speed * p.motor.flux;  // 9.2 V
  MESSAGE(name<T>(), ": vq ", vq.mean, " V, vd ", vd.mean, " V, we*psi ", emf, " V");
  CHECK(vq.mean == doctest::Approx(emf).epsilon(1e-3));  // measured 2e-5 (q15: 1e-4)
  CHECK(std::fabs(vd.mean) < 1e-3 * emf);
}

namespace {

/// Runs the drive at 1500 rpm with a load of `load` N m from 0.1 s on and returns the
/// mean d/q currents it measured itself (A) over 0.25-0.35 s.
template <class T>
std::pair<double, double> steady_currents(const sim::speed_drive_design& d, double load) {
  sim::scenario s;
  s.duration = 0.35;
  s.speed.step(0.02, 1500 * rpm);
  s.load.step(0.1, load);
  sim::speed_drive<T> drive{d};
  double id = 0, iq = 0;
  int n = 0;
  auto observed = [&](const sim::readings& in, const sim::command& c, sim::probe& p) {
    const auto duty = drive(in, c, p);
    if (in.time >= 0.25) {
      id += dqfx::to_double(drive.last_output().current.d) * base.base_current;
      iq += dqfx::to_double(drive.last_output().current.q) * base.base_current;
      ++n;
    }
    return duty;
  };
  REQUIRE(sim::run(d.plant, s, observed).outcome.ok());
  return {id / n, iq / n};
}

}  // namespace

// Steady state under load: the speed is constant, so the torque 1.5*p*(psi*iq +
// (Ld - Lq)*id*iq) (Krause, Wasynczuk and Sudhoff) balances load plus friction; checked
// with the currents the drive itself measured (ADC, offset calibration, Park), including
// the reluctance share at id* = -5 A.
TEST_CASE_TEMPLATE("sim closed loop: the drive's measured currents give the load torque by Krause's formula", T, q15,
                   q31, float, double) {
  sim::speed_drive_design d = invented_drive();
  d.id_setpoint = -5.0;
  d.plant.adc.noise_codes = 1.0;
  d.plant.adc.offset_codes = {6.0, -4.0, 2.0};
  const auto [id, iq] = steady_currents<T>(d, 0.5);
  const sim::motor_parameters& m = d.plant.motor;
  const double torque = 1.5 * m.pole_pairs * (m.flux * iq + (m.ld - m.lq) * id * iq);
  const double load = 0.5 + m.friction * 1500 * rpm;
  MESSAGE(name<T>(), ": id ", id, " A, iq ", iq, " A, torque ", torque, " N m against ", load, " N m");
  CHECK(id == doctest::Approx(-5.0).epsilon(0.01));
  CHECK(torque == doctest::Approx(load).epsilon(3e-3));  // measured 1e-3
}

// Maximum torque per ampere in closed loop: under a steady load the drive's measured
// currents lie on id = psi/(2(Lq-Ld)) - sqrt(psi^2/(4(Lq-Ld)^2) + iq^2) (Morimoto, Takeda,
// Hirasa and Taniguchi, IEEE Trans. Industry Applications, 1990) and give the load torque.
TEST_CASE_TEMPLATE("sim closed loop: with MTPA the measured currents sit on the MTPA curve at the load torque", T, q15,
                   q31, float, double) {
  sim::speed_drive_design d = invented_drive();
  d.mtpa = true;
  const auto [id, iq] = steady_currents<T>(d, 0.8);
  const sim::motor_parameters& m = d.plant.motor;
  const double half = m.flux / (2 * (m.lq - m.ld));
  const double mtpa_id = half - std::sqrt(half * half + iq * iq);
  const double torque = 1.5 * m.pole_pairs * (m.flux * iq + (m.ld - m.lq) * id * iq);
  MESSAGE(name<T>(), ": id ", id, " A (MTPA ", mtpa_id, " A), iq ", iq, " A, torque ", torque, " N m");
  CHECK(id == doctest::Approx(mtpa_id).epsilon(5e-3));  // measured 3e-4
  CHECK(id < -0.5);
  CHECK(torque == doctest::Approx(0.8 + m.friction * 1500 * rpm).epsilon(3e-3));
}

// The whole drive: standstill, calibration, a speed step, a load step, a step down. The
// figures are met in every type, and the fixed-point and float drives stay close to the
// double one in their own closed loops (same noise sequence).
TEST_CASE("sim closed loop: the speed drive in all four types through steps and a load step") {
  sim::speed_drive_design d = invented_drive();
  d.plant.inverter.dead_time = 500e-9;
  d.plant.adc.noise_codes = 1.5;
  d.plant.adc.offset_codes = {11.0, -7.0, 4.0};
  sim::scenario s;
  s.duration = 0.5;
  s.speed.step(0.02, 1500 * rpm).step(0.35, 500 * rpm);
  s.load.step(0.2, 0.5);
  const sim::run_result reference = sim::run(d.plant, s, sim::speed_drive<double>{d});
  REQUIRE(reference.outcome.ok());
  auto judge = [&](const sim::run_result& r, const std::string& type) {
    REQUIRE(r.outcome.ok());
    const sim::step_figures up = sim::step_response(r.records, &sim::record::speed, 0.02, 0.2, 1500 * rpm);
    const sim::disturbance_figures load = sim::disturbance_response(r.records, &sim::record::speed, 0.2, 0.35, 1500 * rpm);
    const sim::step_figures down = sim::step_response(r.records, &sim::record::speed, 0.35, 0.5, 500 * rpm);
    const double apart = sim::largest_difference(r.records, reference.records, &sim::record::speed);
    MESSAGE(type, ": rise ", up.rise_time * 1e3, " ms, overshoot ", up.overshoot * 100, " %, settling ",
            up.settling_time * 1e3, " ms, error ", up.steady_state_error / rpm, " rpm; load step: dip ",
            load.largest_deviation / rpm, " rpm, recovery ", load.recovery_time * 1e3, " ms, error ",
            load.steady_state_error / rpm, " rpm; down: overshoot ", down.overshoot * 100, " %; vs double ",
            apart / rpm, " rpm");
    CHECK(up.overshoot < 0.05);  // measured 2.8%
    CHECK(up.settling_time < 0.07);  // measured 52 ms
    CHECK(std::fabs(up.steady_state_error) < 2 * rpm);
    CHECK(std::fabs(load.steady_state_error) < 2 * rpm);
    CHECK(load.largest_deviation > -150 * rpm);
    CHECK(load.recovery_time < 0.05);
    CHECK(down.overshoot < 0.3);
    CHECK(std::fabs(down.steady_state_error) < 2 * rpm);
    CHECK(apart < 3 * rpm);  // measured 0.4 to 0.9 rpm
  };
  judge(reference, "double");
  judge(sim::run(d.plant, s, sim::speed_drive<float>{d}), "float");
  judge(sim::run(d.plant, s, sim::speed_drive<q31>{d}), "q31");
  judge(sim::run(d.plant, s, sim::speed_drive<q15>{d}), "q15");
}
