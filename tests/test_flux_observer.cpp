// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "dqfx/current_loop.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/open_loop_start.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/transforms.hpp"
#include "dqfx_sim/motor.hpp"
#include "reference/pmsm_model.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;
using dqfx::from_double;

template <class T> std::string name() { return dqfx::number_traits<T>::name; }

// Invented drive and motor (not a real product), as in the current-loop tests: 48 V bus,
// 20 A and 60 V bases, speed 1.0 = 1000 Hz electrical, 4 pole pairs, interior magnets
// (Ld < Lq); rated speed 0.6 per unit (9000 rpm), rated current 0.5 per unit (10 A).
constexpr double two_pi = 6.283185307179586477;
constexpr dqfx::per_unit_base drive{20.0, 60.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data motor_data{0.1, 0.15e-3, 0.2e-3, 0.004};
constexpr double inertia = 2e-5, friction = 1e-5;  // kg*m^2, N*m*s/rad
constexpr double ts = 50e-6;
constexpr double bus = 48.0 / 60.0;
constexpr double rated_speed = 0.6;
constexpr dqfx::current_loop_parameters loop_parameters =
    dqfx::design_current_loop(drive, motor_data, two_pi * 500, ts);
constexpr double torque_constant = 1.5 * 4 * 0.004;  // N*m/A

// The observer's motor data, optionally wrong by the given factors (a motor that is not
// quite what its data sheet says).
dqfx::flux_observer_parameters observer_parameters(double resistance_error = 1.0, double inductance_error = 1.0,
                                                   double flux_error = 1.0) {
  dqfx::flux_observer_parameters p{};
  p.resistance = drive.resistance(motor_data.resistance) * resistance_error;
  p.ld = drive.inductance(motor_data.ld) * inductance_error;
  p.lq = drive.inductance(motor_data.lq) * inductance_error;
  p.flux = drive.flux(motor_data.flux) * flux_error;
  // About half the lowest electrical speed it must work at (0.1 pu = 628 rad/s): faster
  // convergence makes the observer lose the rotor at low speed when the motor data are
  // off (measured: at 2000 rad/s it turned 180 degrees away at 0.1 pu with R 15 % high).
  p.convergence_rate = 300;
  p.base_speed = drive.base_speed;
  p.sample_time = ts;
  p.pll_frequency = two_pi * 80;
  p.pll_damping = 1.0;
  p.minimum_speed = 0.04;
  return p;
}

double degrees(double radians) { return radians * 180 / reference::pi; }

// The motor, the library's current loop in T and the observer in T, one PWM period at a
// time. Currents are sampled at the period's start; the voltage the loop computes is
// applied over the period (average inverter model).
template <class T> struct rig {
  reference::pmsm motor;
  dqfx::current_loop<T> loop{loop_parameters};
  dqfx::flux_observer<T> observer;
  dqfx::stationary<T> applied{};
  double load = 0;  // N*m
  double sample_error = 0;  // observer error at the latest sample, degrees

  explicit rig(const dqfx::flux_observer_parameters& p = observer_parameters()) : observer{p} {
    motor.r = motor_data.resistance;
    motor.ld = motor_data.ld;
    motor.lq = motor_data.lq;
    motor.psi = motor_data.flux;
    motor.pole_pairs = 4;
    motor.inertia = inertia;
    motor.friction = friction;
  }
  void impose_speed(double per_unit) {
    motor.speed_imposed = true;
    motor.wm = per_unit * drive.base_speed / 4;
  }
  double speed() const { return motor.we() / drive.base_speed; }
  dqfx::stationary<T> current() const {
    double alpha = 0, beta = 0;
    motor.stationary_current(alpha, beta);
    return {from_double<T>(alpha / drive.base_current), from_double<T>(beta / drive.base_current)};
  }
  // Observer error at the latest sample (the observer's angle against the rotor's at the
  // instant the currents were sampled), electrical degrees, signed.
  double error() const { return sample_error; }

  void observe() {
    observer.update(current(), applied);
    sample_error = degrees(reference::wrap(observer.electrical_angle().radians() - motor.theta_e()));
  }
  // Runs the current loop at angle `theta` and feed-forward speed, then the motor.
  void control(dqfx::angle theta, T speed_ff, dqfx::rotating<T> setpoint) {
    const dqfx::stationary<T> i = current();
    const double h = 0.86602540378443864676;
    const dqfx::phases<T> phase{i.alpha, from_double<T>(-to_double(i.alpha) / 2 + h * to_double(i.beta)),
                                from_double<T>(-to_double(i.alpha) / 2 - h * to_double(i.beta))};
    const dqfx::current_loop_output<T> out =
        loop.step({phase, dqfx::sincos_of<T>(theta), speed_ff, setpoint, from_double<T>(bus)});
    applied = out.voltage_stationary;
    motor.advance(to_double(applied.alpha) * drive.base_voltage, to_double(applied.beta) * drive.base_voltage,
                  load, ts);
  }
  // Sensored period: the loop uses the true angle; the observer only watches.
  void sensored(dqfx::rotating<T> setpoint) {
    observe();
    control(dqfx::angle::from_radians(motor.theta_e()), from_double<T>(speed()), setpoint);
  }
};

// Bounds of the q15/q31/float observers against the double one (degrees), measured and
// rounded up; q15 carries 2^-15 current and voltage rounding at the inputs.
template <class T> double tracking_bound() {
  if constexpr (std::is_same_v<T, q15>) return 0.02;  // measured 0.0030
  if constexpr (std::is_same_v<T, q31>) return 1e-4;  // measured 1.9e-6
  if constexpr (std::is_same_v<T, float>) return 1e-3;  // measured 9.8e-5
  return 0.0;
}

}  // namespace

TEST_CASE_TEMPLATE("flux_observer: steady-state angle error below 3 degrees from 10 % of rated speed", T, q15,
                   q31, float, double) {
  for (double fraction : {0.1, 0.2, 0.5, 1.0}) {
    for (double iq : {0.1, 0.5}) {
      rig<T> r;
      r.impose_speed(fraction * rated_speed);
      r.observer.reset(dqfx::angle::from_radians(r.motor.theta_e()), from_double<T>(r.speed()));
      double worst = 0, worst_speed = 0;
      for (int k = 0; k < 10000; ++k) {  // 0.5 s
        r.sensored({from_double<T>(-0.1), from_double<T>(iq)});
        if (k >= 6000) {
          worst = std::fmax(worst, std::fabs(r.error()));
          worst_speed = std::fmax(worst_speed, std::fabs(to_double(r.observer.speed()) - r.speed()));
        }
      }
      MESSAGE(name<T>(), " at ", fraction * 100, " % of rated speed, iq ", iq, " pu: max angle error ", worst,
              " deg, max speed error ", worst_speed, " pu");
      CHECK(worst < 3.0);
      CHECK(worst_speed < 0.002);
      CHECK(r.observer.valid());
    }
  }
}

TEST_CASE_TEMPLATE("flux_observer: angle error with wrong motor data, against speed", T, q15, float) {
  // Resistance 15 % high, inductances 5 % high, flux 2 % low (invented errors, of the
  // size a warm motor and a data sheet give). The error falls with speed as the back-EMF
  // outgrows the errors in R*i and L*i; the documented minimum speed (0.1 pu here) comes
  // from this table. Below it the observer may lose the rotor entirely.
  for (double speed : {0.02, 0.04, 0.06, 0.1, 0.3, 0.6}) {
    rig<T> r{observer_parameters(1.15, 1.05, 0.98)};
    r.impose_speed(speed);
    r.observer.reset(dqfx::angle::from_radians(r.motor.theta_e()), from_double<T>(speed));
    double worst = 0;
    for (int k = 0; k < 10000; ++k) {
      r.sensored({from_double<T>(-0.1), from_double<T>(0.5)});
      if (k >= 6000) worst = std::fmax(worst, std::fabs(r.error()));
    }
    MESSAGE(name<T>(), " at ", speed, " pu with wrong motor data, iq 0.5 pu: max angle error ", worst, " deg");
    if (speed >= 0.3) CHECK(worst < 2.0);
    if (speed >= 0.1) CHECK(worst < 4.0);
  }
}

TEST_CASE_TEMPLATE("flux_observer: converges from a 90-degree initial error", T, q15, q31, float, double) {
  for (double speed : {0.1, 0.3}) {
    for (double initial : {90.0, -90.0}) {
      rig<T> r;
      r.impose_speed(speed);
      r.observer.reset(dqfx::angle::from_radians(r.motor.theta_e() + initial * reference::pi / 180),
                       from_double<T>(speed));
      int settled = -1;
      double after = 0;
      for (int k = 0; k < 20000; ++k) {  // 1 s
        r.sensored({from_double<T>(0.0), from_double<T>(0.3)});
        const double e = std::fabs(r.error());
        if (e >= 3.0) settled = -1;
        if (e < 3.0 && settled < 0) settled = k;
        if (k > 15000) after = std::fmax(after, e);
      }
      MESSAGE(name<T>(), " at ", speed, " pu from ", initial, " deg: within 3 deg from ", settled * ts * 1000,
              " ms on, then max ", after, " deg");
      CHECK(settled >= 0);
      CHECK(settled * ts < 0.5);
      CHECK(after < 3.0);
    }
  }
}

namespace {

// Sensorless speed control on the observer: speed regulator (symmetric optimum) giving iq,
// current loop at the observer's angle. From running at `speed` with the observer at the
// true angle, a load step of `load_fraction` of rated torque at 0.2 s.
template <class T> struct sensorless_run {
  double before = 0, during = 0, after = 0;  // max |angle error|, degrees
  double dip = 0;                            // largest speed drop, fraction of the set-point
  double final_speed = 0;
};

dqfx::pi_parameters speed_regulator_parameters() {
  dqfx::pi_parameters p =
      drive.speed_regulator(dqfx::symmetric_optimum_speed_loop(inertia, torque_constant, two_pi * 20, ts));
  p.lower = -0.8;
  p.upper = 0.8;
  return p;
}

template <class T> sensorless_run<T> load_step(double speed, double load_fraction) {
  rig<T> r;
  r.motor.wm = speed * drive.base_speed / 4;
  r.observer.reset(dqfx::angle::from_radians(r.motor.theta_e()), from_double<T>(speed));
  dqfx::pi_regulator<T> speed_loop{speed_regulator_parameters()};
  const double rated_torque = torque_constant * 10.0;
  sensorless_run<T> s;
  for (int k = 0; k < 24000; ++k) {  // 1.2 s
    r.load = k >= 4000 ? load_fraction * rated_torque : 0.0;
    r.observe();
    const T iq = speed_loop.step(from_double<T>(speed) - r.observer.speed());
    r.control(r.observer.electrical_angle(), r.observer.speed(), {T{}, iq});
    const double e = std::fabs(r.error());
    if (k > 2000 && k < 4000) s.before = std::fmax(s.before, e);
    if (k >= 4000 && k < 14000) s.during = std::fmax(s.during, e);
    if (k >= 14000) s.after = std::fmax(s.after, e);
    if (k >= 4000) s.dip = std::fmax(s.dip, (speed - r.speed()) / speed);
  }
  s.final_speed = r.speed();
  return s;
}

}  // namespace

TEST_CASE_TEMPLATE("flux_observer: sensorless speed control survives a load step", T, q15, q31, float, double) {
  for (double speed : {0.1, 0.4}) {
    const sensorless_run<T> s = load_step<T>(speed, 0.8);
    MESSAGE(name<T>(), " at ", speed, " pu, 80 % rated load step: angle error before ", s.before, " deg, during ",
            s.during, " deg, after ", s.after, " deg; speed dip ", s.dip * 100, " %, final ", s.final_speed);
    CHECK(s.before < 3.0);
    CHECK(s.during < 10.0);
    CHECK(s.after < 3.0);
    CHECK(s.dip < 0.6);  // set by the speed loop (20 Hz) and the inertia, not the observer
    CHECK(s.final_speed == doctest::Approx(speed).epsilon(0.01));
  }
}

TEST_CASE_TEMPLATE("flux_observer: open-loop start from standstill and a smooth hand-over", T, q15, q31, float,
                   double) {
  rig<T> r;
  dqfx::open_loop_start_parameters sp{};
  sp.current = 0.4;
  sp.acceleration = 1.0;  // per unit per second: 0.1 s to the hand-over speed
  sp.handover_speed = 0.1;
  sp.handover_time = 0.02;
  sp.base_speed = drive.base_speed;
  sp.sample_time = ts;
  dqfx::open_loop_start<T> start{sp};
  dqfx::pi_regulator<T> speed_loop{speed_regulator_parameters()};
  r.load = 0.1 * torque_constant * 10.0;  // a small load (friction of the driven machine)
  bool handed_over = false;
  double largest_jump = 0, after = 0;
  dqfx::angle previous{};
  for (int k = 0; k < 20000; ++k) {  // 1 s
    r.observe();
    dqfx::angle theta{};
    if (!handed_over) {
      start.update(r.observer.electrical_angle(), r.observer.speed(), r.observer.valid());
      theta = start.electrical_angle();
      if (start.phase() == dqfx::start_phase::done) {
        handed_over = true;
        speed_loop.preload(start.current_setpoint().q);
      }
      r.control(theta, start.speed(), start.current_setpoint());
    } else {
      const double reference_speed = std::fmin(0.3, 0.1 + (k * ts - 0.2) * 1.0);
      const T iq = speed_loop.step(from_double<T>(reference_speed) - r.observer.speed());
      theta = r.observer.electrical_angle();
      r.control(theta, r.observer.speed(), {T{}, iq});
      if (k > 16000) after = std::fmax(after, std::fabs(r.error()));
    }
    // The angle handed to the current loop moves by the rotation of one period and a
    // little more, never by a jump.
    if (k > 0) largest_jump = std::fmax(largest_jump, std::fabs(dqfx::difference(theta, previous) * 360.0 / 4294967296.0));
    previous = theta;
  }
  MESSAGE(name<T>(), ": hand-over ", std::string{handed_over ? "done" : "not done"}, ", largest angle step per period ",
          largest_jump, " deg, final speed ", r.speed(), " pu, angle error after ", after, " deg");
  CHECK(handed_over);
  CHECK(start.phase() == dqfx::start_phase::done);
  CHECK(largest_jump < 0.3 * 18.0 + 2.0);  // 0.3 pu turns 5.4 degrees per period
  CHECK(r.speed() == doctest::Approx(0.3).epsilon(0.02));
  CHECK(after < 3.0);
}

TEST_CASE_TEMPLATE("flux_observer: q15, q31 and float track the double observer", T, q15, q31, float) {
  // The same sensored run (the loop driven by the double rig's true angle and voltages);
  // each observer gets that run's currents and voltages rounded to its type.
  rig<double> run;
  run.impose_speed(0.3);
  run.observer.reset(dqfx::angle::from_radians(run.motor.theta_e() + 0.5), 0.3);
  dqfx::flux_observer<T> o{observer_parameters()};
  o.reset(dqfx::angle::from_radians(run.motor.theta_e() + 0.5), from_double<T>(0.3));
  double worst = 0, worst_speed = 0;
  for (int k = 0; k < 20000; ++k) {
    const dqfx::stationary<double> i = run.current();
    o.update({from_double<T>(i.alpha), from_double<T>(i.beta)},
             {from_double<T>(run.applied.alpha), from_double<T>(run.applied.beta)});
    run.sensored({-0.1, 0.4});
    const double a = std::fabs(dqfx::difference(o.electrical_angle(), run.observer.electrical_angle()) * 360.0 / 4294967296.0);
    if (k > 100) worst = std::fmax(worst, a);
    worst_speed = std::fmax(worst_speed, std::fabs(to_double(o.speed()) - run.observer.speed()));
  }
  MESSAGE(name<T>(), ": max |angle - double observer| ", worst, " deg, max |speed - double| ", worst_speed, " pu");
  CHECK(worst < tracking_bound<T>());
  CHECK(worst_speed < (std::is_same_v<T, q15> ? 1e-4 : 1e-6));
}

TEST_CASE("flux_observer: the radial error decays at the designed convergence rate") {
  // With no current and no voltage the observer is dx/dt = (gamma/2) eta (psi^2 - |eta|^2):
  // a radial error d decays as exp(-gamma psi^2 t) for small d (Ortega et al. 2011,
  // linearised). A one-period voltage pulse along the flux pushes |eta| to 1.01 psi.
  const dqfx::flux_observer_parameters p = observer_parameters();
  dqfx::flux_observer<double> o{p};
  o.reset(dqfx::angle{});
  const double push = 0.01 * p.flux / (ts * p.base_speed);
  o.update({0.0, 0.0}, {push, 0.0});
  const double d0 = std::hypot(o.flux().alpha, o.flux().beta) - p.flux;
  CHECK(d0 == doctest::Approx(0.01 * p.flux).epsilon(0.02));
  for (int k = 0; k < 20; ++k) o.update({0.0, 0.0}, {0.0, 0.0});  // 1 ms
  const double d = std::hypot(o.flux().alpha, o.flux().beta) - p.flux;
  // Forward Euler: (1 - rate*Ts)^n per sample, close to exp(-rate t).
  const double expected = d0 * std::pow(1 - p.convergence_rate * ts, 20);
  MESSAGE("radial error ", d0, " -> ", d, " after 1 ms; expected ", expected, " (exp(-rate t): ", d0 * std::exp(-p.convergence_rate * 20 * ts), ")");
  CHECK(d == doctest::Approx(expected).epsilon(0.05));
}

TEST_CASE_TEMPLATE("flux_observer: NaN current or voltage is flagged and the estimate holds", T, float, double) {
  rig<T> r;
  r.impose_speed(0.3);
  r.observer.reset(dqfx::angle::from_radians(r.motor.theta_e()), from_double<T>(0.3));
  for (int k = 0; k < 4000; ++k) r.sensored({T{}, from_double<T>(0.3)});
  const T nan = std::numeric_limits<T>::quiet_NaN(), inf = std::numeric_limits<T>::infinity();
  for (int field = 0; field < 4; ++field) {
    for (T bad : {nan, inf}) {
      dqfx::stationary<T> i = r.current(), v = r.applied;
      T* slots[4] = {&i.alpha, &i.beta, &v.alpha, &v.beta};
      *slots[field] = bad;
      const T speed = r.observer.speed();
      const dqfx::stationary<T> flux = r.observer.flux();
      const dqfx::angle next = r.observer.next();
      r.observer.update(i, v);
      CHECK(r.observer.fault());
      CHECK(r.observer.speed() == speed);
      CHECK(r.observer.flux().alpha == flux.alpha);
      CHECK(r.observer.flux().beta == flux.beta);
      CHECK(r.observer.electrical_angle() == next);  // advanced at the held speed
      CHECK(std::isfinite(to_double(r.observer.speed())));
    }
  }
  // It goes on normally afterwards.
  r.observer.clear_faults();
  for (int k = 0; k < 2000; ++k) r.sensored({T{}, from_double<T>(0.3)});
  CHECK_FALSE(r.observer.fault());
  CHECK(std::fabs(r.error()) < 3.0);
}

TEST_CASE("flux_observer: parameters out of range are flagged") {
  dqfx::flux_observer_parameters p = observer_parameters();
  p.flux = 0;
  CHECK(dqfx::flux_observer<q15>{p}.parameter_fault());
  p = observer_parameters();
  p.convergence_rate = 1.0 / ts;  // Euler would overshoot
  CHECK(dqfx::flux_observer<float>{p}.parameter_fault());
  p = observer_parameters();
  p.pll_frequency = 0;
  CHECK(dqfx::flux_observer<q31>{p}.parameter_fault());
  CHECK_FALSE(dqfx::flux_observer<q31>{observer_parameters()}.parameter_fault());
}

TEST_CASE_TEMPLATE("flux_observer: on the simulator's motor (dqfx::sim), sensored current control", T, q15, q31,
                   float, double) {
  // The same invented motor in the host simulator of issue 6 (SI units, RK4 at Ts/4),
  // with a heavy shaft so that the speed stays near 0.3 pu; the observer must agree with
  // the simulator's own electrical angle.
  dqfx::sim::motor_parameters mp{};
  mp.resistance = motor_data.resistance;
  mp.ld = motor_data.ld;
  mp.lq = motor_data.lq;
  mp.flux = motor_data.flux;
  mp.pole_pairs = 4;
  mp.inertia = 1.0;
  mp.friction = 0.0;
  REQUIRE(dqfx::sim::check(mp));
  const dqfx::sim::motor m{mp};
  dqfx::sim::motor_state x{};
  x.speed = 0.3 * drive.base_speed / 4;
  dqfx::current_loop<T> loop{loop_parameters};
  dqfx::flux_observer<T> o{observer_parameters()};
  o.reset(dqfx::angle::from_radians(m.electrical_angle(x)), from_double<T>(0.3));
  dqfx::stationary<T> applied{};
  double worst = 0;
  for (int k = 0; k < 8000; ++k) {
    const dqfx::sim::three_phase i = m.currents(x);
    const dqfx::phases<T> phase{from_double<T>(i.a / drive.base_current), from_double<T>(i.b / drive.base_current),
                                from_double<T>(i.c / drive.base_current)};
    o.update(dqfx::clarke(phase), applied);
    if (k > 4000) worst = std::fmax(worst, std::fabs(degrees(reference::wrap(o.electrical_angle().radians() - m.electrical_angle(x)))));
    const dqfx::angle theta = dqfx::angle::from_radians(m.electrical_angle(x));
    const dqfx::current_loop_output<T> out = loop.step(
        {phase, dqfx::sincos_of<T>(theta), from_double<T>(m.electrical_speed(x) / drive.base_speed),
         {from_double<T>(-0.1), from_double<T>(0.4)}, from_double<T>(bus)});
    applied = out.voltage_stationary;
    const dqfx::sim::stationary_voltage v{to_double(applied.alpha) * drive.base_voltage,
                                          to_double(applied.beta) * drive.base_voltage};
    for (int n = 0; n < 4; ++n) x = m.step(x, v, 0.0, ts / 4);
  }
  MESSAGE(name<T>(), " on dqfx::sim::motor at 0.3 pu: max angle error ", worst, " deg");
  CHECK(worst < 3.0);
}
