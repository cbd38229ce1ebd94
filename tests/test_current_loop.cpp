// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "dqfx/current_loop.hpp"
#include "dqfx/sincos.hpp"
#include "reference/current_loop_reference.hpp"

namespace {

using dqfx::from_double;
using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

template <class T> double lsb() { return dqfx::number_traits<T>::lsb; }
template <class T> std::string name() { return dqfx::number_traits<T>::name; }

// Invented drive and motor (not a real product): 48 V bus, 20 A, 4 pole pairs.
constexpr double two_pi = 6.283185307179586477;
constexpr dqfx::per_unit_base drive{20.0, 60.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data motor{0.1, 0.15e-3, 0.2e-3, 0.004};
constexpr double sample_time = 50e-6;  // 20 kHz
constexpr double bandwidth = two_pi * 500;
constexpr dqfx::current_loop_parameters parameters =
    dqfx::design_current_loop(drive, motor, bandwidth, sample_time);
constexpr double bus = 48.0 / 60.0;  // per unit

reference::current_loop<double> reference_loop() {
  reference::current_loop<double> r;
  r.kp_d = parameters.d.kp;
  r.ki_d = parameters.d.ki;
  r.kt_d = parameters.d.kt;
  r.kp_q = parameters.q.kp;
  r.ki_q = parameters.q.ki;
  r.kt_q = parameters.q.kt;
  r.ld = parameters.ld;
  r.lq = parameters.lq;
  r.flux = parameters.flux;
  return r;
}

reference::pm_motor motor_model() {
  reference::pm_motor m;
  m.r = drive.resistance(motor.resistance);
  m.ld = drive.inductance(motor.ld);
  m.lq = drive.inductance(motor.lq);
  m.flux = drive.flux(motor.flux);
  return m;
}

// One period's inputs, per unit.
struct sample {
  double ia, ib, ic, theta, speed, id_ref, iq_ref, vdc;
};

// A scenario in 20,000 periods (1 s): speed ramps to 0.6 pu; iq steps up and down, one
// of them large; id goes negative; the bus sags so that the voltage limit holds for a
// while. The double reference loop runs it in closed loop on the motor model and the
// inputs it saw are recorded.
std::vector<sample> scenario() {
  reference::current_loop<double> loop = reference_loop();
  reference::pm_motor m = motor_model();
  std::vector<sample> inputs;
  const double dt = sample_time * drive.base_speed;
  for (int k = 0; k < 20000; ++k) {
    sample s{};
    m.phase_currents(s.ia, s.ib, s.ic);
    s.theta = m.theta;
    s.speed = k < 10000 ? 0.6 * k / 10000.0 : 0.6;
    s.iq_ref = k < 1000 ? 0.0 : k < 5000 ? 0.3 : k < 9000 ? -0.2 : k < 12000 ? 0.8 : 0.2;
    s.id_ref = k < 15000 ? 0.0 : -0.3;
    s.vdc = k >= 16000 && k < 18000 ? 0.36 : bus;
    inputs.push_back(s);
    const auto r = loop.step(s.ia, s.ib, s.ic, std::sin(s.theta), std::cos(s.theta), s.speed, s.id_ref,
                             s.iq_ref, s.vdc);
    m.advance(r.duty, s.vdc, s.speed, dt);
  }
  return inputs;
}

template <class T> dqfx::current_loop_input<T> input_of(const sample& s) {
  dqfx::current_loop_input<T> in;
  in.current = {from_double<T>(s.ia), from_double<T>(s.ib), from_double<T>(s.ic)};
  in.rotor = dqfx::sincos_of<T>(dqfx::angle::from_radians(s.theta));
  in.speed = from_double<T>(s.speed);
  in.setpoint = {from_double<T>(s.id_ref), from_double<T>(s.iq_ref)};
  in.bus_voltage = from_double<T>(s.vdc);
  return in;
}

// Bounds of the replay test, in units of T's LSB (float, double: epsilon at 1.0): the
// limited d/q voltage, and the duties (these also carry the division by the bus voltage,
// 0.36 pu at its lowest, and the modulator's rounding). Measured figures in the report.
template <class T> double voltage_bound_lsb() {
  if constexpr (std::is_same_v<T, q15>) return 4;
  if constexpr (std::is_same_v<T, q31>) return 128;
  if constexpr (std::is_same_v<T, float>) return 4;
  return 16;
}
template <class T> double duty_bound_lsb() {
  if constexpr (std::is_same_v<T, q15>) return 16;
  if constexpr (std::is_same_v<T, q31>) return 512;
  if constexpr (std::is_same_v<T, float>) return 8;
  return 32;
}

}  // namespace

TEST_CASE_TEMPLATE("current_loop: tracks the double reference loop on the same input sequence", T, q15, q31,
                   float, double) {
  // Replay: the inputs the reference saw in closed loop, rounded to T (sine and cosine by
  // sincos_of<T>), go to both the library loop and the reference again. Differences come
  // from the loop's own roundings, and from the two integrators summing them over the
  // run (open loop: nothing pulls them back together except the voltage limit).
  static const std::vector<sample> inputs = scenario();
  dqfx::current_loop<T> loop{parameters};
  reference::current_loop<double> ref = reference_loop();
  double duty_error = 0, voltage_error = 0;
  int limited = 0;
  for (const sample& s : inputs) {
    const dqfx::current_loop_input<T> in = input_of<T>(s);
    const dqfx::current_loop_output<T> out = loop.step(in);
    // The same input sequence: the loop's inputs as T holds them, sine and cosine included.
    const auto r = ref.step(to_double(in.current.a), to_double(in.current.b), to_double(in.current.c),
                            to_double(in.rotor.sin), to_double(in.rotor.cos), to_double(in.speed),
                            to_double(in.setpoint.d), to_double(in.setpoint.q), to_double(in.bus_voltage));
    REQUIRE_FALSE(out.fault);
    duty_error = std::fmax(duty_error, std::fabs(to_double(out.duty.a) - r.duty[0]));
    duty_error = std::fmax(duty_error, std::fabs(to_double(out.duty.b) - r.duty[1]));
    duty_error = std::fmax(duty_error, std::fabs(to_double(out.duty.c) - r.duty[2]));
    voltage_error = std::fmax(voltage_error, std::fabs(to_double(out.voltage.d) - r.vd));
    voltage_error = std::fmax(voltage_error, std::fabs(to_double(out.voltage.q) - r.vq));
    limited += r.limited ? 1 : 0;
  }
  MESSAGE(name<T>(), ": max |duty - ref| ", duty_error / lsb<T>(), " LSB, max |v_dq - ref| ",
          voltage_error / lsb<T>(), " LSB (", duty_error, ", ", voltage_error, "); ", limited,
          " of 20000 periods voltage-limited");
  CHECK(limited > 500);
  CHECK(duty_error <= duty_bound_lsb<T>() * lsb<T>());
  CHECK(voltage_error <= voltage_bound_lsb<T>() * lsb<T>());
}

namespace {

struct limited_run {
  bool always_inside = true;  // |v| <= limit every period
  bool duties_valid = true;   // every duty in [0, 1]
  int limited = 0;            // periods at the limit
  double overshoot = 0;       // largest iq above its set-point after the limit is lifted
};

// Closed loop on the motor model: at 0.5 pu speed a 0.9 pu iq step on a sagging bus
// (0.45 pu) holds the voltage at the limit for 2,000 periods; then the bus returns.
template <class T, class AW> limited_run voltage_limited_step() {
  dqfx::current_loop<T, AW> loop{parameters};
  reference::pm_motor m = motor_model();
  limited_run run;
  const double dt = sample_time * drive.base_speed;
  for (int k = 0; k < 5000; ++k) {
    sample s{};
    m.phase_currents(s.ia, s.ib, s.ic);
    s.theta = m.theta;
    s.speed = 0.5;
    s.iq_ref = k < 200 ? 0.1 : 0.6;
    s.vdc = k < 2200 ? 0.45 : bus;
    const dqfx::current_loop_output<T> out = loop.step(input_of<T>(s));
    if constexpr (dqfx::number_traits<T>::is_fixed) {
      // Exact: integer squares.
      const std::int64_t vd = out.voltage.d.raw(), vq = out.voltage.q.raw(), r = out.voltage_limit.raw();
      run.always_inside = run.always_inside && vd * vd + vq * vq <= r * r;
    } else {
      const double v = std::hypot(to_double(out.voltage.d), to_double(out.voltage.q));
      run.always_inside = run.always_inside && v <= to_double(out.voltage_limit);
    }
    for (T d : {out.duty.a, out.duty.b, out.duty.c}) {
      run.duties_valid = run.duties_valid && d >= T{} && to_double(d) <= 1.0;
    }
    run.limited += out.voltage_limited ? 1 : 0;
    if (k > 2200) run.overshoot = std::fmax(run.overshoot, m.iq - s.iq_ref);
    double duty[3] = {to_double(out.duty.a), to_double(out.duty.b), to_double(out.duty.c)};
    m.advance(duty, s.vdc, s.speed, dt);
  }
  return run;
}

}  // namespace

TEST_CASE_TEMPLATE("current_loop: a voltage-limited step keeps |v| inside the limit every period", T, q15,
                   q31, float, double) {
  const limited_run with = voltage_limited_step<T, dqfx::back_calculation>();
  const limited_run clamped = voltage_limited_step<T, dqfx::conditional_integration>();
  const limited_run without = voltage_limited_step<T, dqfx::no_anti_windup>();
  MESSAGE(name<T>(), ": ", with.limited, " periods limited; iq overshoot after the bus returns: ",
          with.overshoot, " pu back-calculation, ", clamped.overshoot, " pu clamping, ", without.overshoot,
          " pu without anti-windup");
  CHECK(with.always_inside);
  CHECK(clamped.always_inside);
  CHECK(without.always_inside);
  CHECK(with.duties_valid);
  CHECK(with.limited > 1000);
  // The limited values fed back to the regulators keep them from winding up.
  CHECK(with.overshoot < without.overshoot / 4);
  CHECK(clamped.overshoot < without.overshoot / 4);
}

TEST_CASE_TEMPLATE("current_loop: settles on the set-point in closed loop", T, q15, q31, float, double) {
  dqfx::current_loop<T> loop{parameters};
  reference::pm_motor m = motor_model();
  const double dt = sample_time * drive.base_speed;
  for (int k = 0; k < 2000; ++k) {
    sample s{};
    m.phase_currents(s.ia, s.ib, s.ic);
    s.theta = m.theta;
    s.speed = 0.3;
    s.id_ref = -0.1;
    s.iq_ref = 0.4;
    s.vdc = bus;
    const dqfx::current_loop_output<T> out = loop.step(input_of<T>(s));
    double duty[3] = {to_double(out.duty.a), to_double(out.duty.b), to_double(out.duty.c)};
    m.advance(duty, s.vdc, s.speed, dt);
  }
  // q15: a few LSB of the measurement and of the duties.
  const double tolerance = std::fmax(16 * lsb<T>(), 1e-6);
  CHECK(std::fabs(m.id + 0.1) < tolerance);
  CHECK(std::fabs(m.iq - 0.4) < tolerance);
}

TEST_CASE_TEMPLATE("current_loop: NaN or infinite input faults with zero voltage and untouched state", T,
                   float, double) {
  dqfx::current_loop<T> loop{parameters};
  sample s{0.1, -0.05, -0.05, 0.3, 0.2, 0.0, 0.3, bus};
  for (int k = 0; k < 10; ++k) loop.step(input_of<T>(s));
  const T xd = loop.d_regulator().integral(), xq = loop.q_regulator().integral();
  const T half = from_double<T>(0.5);
  for (int field = 0; field < 9; ++field) {
    for (T bad : {std::numeric_limits<T>::quiet_NaN(), std::numeric_limits<T>::infinity()}) {
      dqfx::current_loop_input<T> in = input_of<T>(s);
      T* slots[9] = {&in.current.a, &in.current.b,  &in.current.c,  &in.rotor.sin, &in.rotor.cos,
                     &in.speed,     &in.setpoint.d, &in.setpoint.q, &in.bus_voltage};
      *slots[field] = bad;
      const dqfx::current_loop_output<T> out = loop.step(in);
      CHECK(out.fault);
      CHECK(out.duty.a == half);
      CHECK(out.duty.b == half);
      CHECK(out.duty.c == half);
      CHECK(out.voltage.d == T{});
      CHECK(out.voltage.q == T{});
      CHECK(loop.d_regulator().integral() == xd);
      CHECK(loop.q_regulator().integral() == xq);
    }
  }
  // And it runs on normally afterwards.
  CHECK_FALSE(loop.step(input_of<T>(s)).fault);
}

TEST_CASE_TEMPLATE("current_loop: zero or negative bus voltage faults with 50% duties", T, q15, q31, float,
                   double) {
  dqfx::current_loop<T> loop{parameters};
  sample s{0.1, -0.05, -0.05, 0.3, 0.2, 0.0, 0.3, bus};
  loop.step(input_of<T>(s));
  const T xq = loop.q_regulator().integral();
  for (double vdc : {0.0, -0.5, -1.0}) {
    s.vdc = vdc;
    const dqfx::current_loop_output<T> out = loop.step(input_of<T>(s));
    CHECK(out.fault);
    CHECK(out.duty.a == from_double<T>(0.5));
    CHECK(out.duty.b == from_double<T>(0.5));
    CHECK(out.duty.c == from_double<T>(0.5));
    CHECK(loop.q_regulator().integral() == xq);
  }
}

TEST_CASE("current_loop: the textbook sector SVM reference reproduces the commanded line voltages") {
  // Property of any modulation in the linear range: duty differences are the commanded
  // line-to-line voltages (per bus), e.g. va - vb = 3/2 alpha - sqrt(3)/2 beta.
  for (double angle = 0; angle < two_pi; angle += 0.01) {
    const double alpha = 0.5 * std::cos(angle), beta = 0.5 * std::sin(angle);
    double duty[3];
    reference::sector_svm(alpha, beta, duty);
    CHECK(duty[0] - duty[1] == doctest::Approx(1.5 * alpha - std::sqrt(3.0) / 2 * beta));
    CHECK(duty[1] - duty[2] == doctest::Approx(std::sqrt(3.0) * beta));
    // Centred: equal zero-vector halves, so max + min = 1.
    CHECK(std::fmax(duty[0], std::fmax(duty[1], duty[2])) + std::fmin(duty[0], std::fmin(duty[1], duty[2])) ==
          doctest::Approx(1.0));
  }
}
