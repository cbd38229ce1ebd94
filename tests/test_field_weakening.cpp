// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <array>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>

#include "dqfx/field_weakening.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx_sim/sim.hpp"
#include "reference/setpoint_reference.hpp"
#include "test_support.hpp"

namespace {

using dqfx::from_double;
using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

using dqfx_test::lsb;
using dqfx_test::name;
using dqfx_test::two_pi;

// The simulator demo's invented interior-magnet motor and load (test_support.hpp, and
// 2e-4 kg m^2, 2e-5 N m s) on its 48 V bus, with an invented 30 A limit: the demo's
// 15 A cannot reach 1.5 times base speed at all (the back-EMF there needs id = -19 A
// before any torque), whatever the controller.
constexpr const dqfx::per_unit_base& base = dqfx_test::demo_base;
constexpr const dqfx::pm_motor_data& motor = dqfx_test::demo_motor;
constexpr double inertia = 2e-4, friction = 2e-5, sample_time = 50e-6;
constexpr double bus = dqfx_test::demo_bus;
constexpr double current_limit = 30.0;
constexpr dqfx::torque_setpoint_parameters demo = dqfx::design_torque_setpoint(base, motor, current_limit);

// An invented motor whose ellipse centre psi/ld = 0.44 lies inside its circle (0.9): the
// MTPV curve limits the d current at high speed. Per unit; its bus is low so that base
// speed is low and eight times base speed is still below 1 per unit.
constexpr dqfx::torque_setpoint_parameters salient{0.5, 1.2, 0.22, 0.9, 0.95};
constexpr double salient_bus = 0.12;

reference::setpoint_motor reference_of(const dqfx::torque_setpoint_parameters& p) {
  return {p.ld, p.lq, p.flux, p.current_limit};
}

template <class T> dqfx::field_weakening<T> make(const dqfx::torque_setpoint_parameters& p, double gain) {
  return dqfx::field_weakening<T>{p, dqfx::field_weakening_parameters{gain, 0.9}};
}

struct settled {
  double id = 0, iq = 0, voltage = 0;  // set-point, and |v| / loop limit
  bool voltage_limited = false;
};

// Steady state without current dynamics: the currents follow the set-points at once and
// the loop applies their steady-state voltage (with resistance r), cut back to its circle
// of radius bus/sqrt(3) as the current loop would. Many calls, then the last set-point.
template <class T>
settled settle(dqfx::field_weakening<T>& fw, const dqfx::torque_setpoint_parameters& p, double torque, double w,
               double vdc, double r, int calls = 20000) {
  const T limit = from_double<T>(vdc / std::sqrt(3.0));
  dqfx::rotating<T> v{};
  settled out;
  for (int n = 0; n < calls; ++n) {
    const dqfx::current_setpoint<T> s = fw.step(from_double<T>(torque), from_double<T>(w), from_double<T>(vdc), v, limit);
    out.id = to_double(s.current.d);
    out.iq = to_double(s.current.q);
    out.voltage_limited = s.voltage_limited;
    double vd = r * out.id - w * p.lq * out.iq, vq = r * out.iq + w * (p.flux + p.ld * out.id);
    const double size = std::hypot(vd, vq), l = to_double(limit);
    if (size > l) {
      vd *= l / size;
      vq *= l / size;
    }
    v = {from_double<T>(vd), from_double<T>(vq)};
    out.voltage = std::hypot(to_double(v.d), to_double(v.q)) / l;
  }
  return out;
}

}  // namespace

TEST_CASE_TEMPLATE("field_weakening: in steady state it finds the largest torque the circle and the voltage allow", T,
                   q15, q31, float, double) {
  // Torque commands beyond reach, at speeds above base speed: the voltage feedback settles
  // where |v| is 0.9 of the loop's limit (or, at the MTPV limit, on the 0.95 planning
  // ellipse), and the torque there must be the largest of all currents inside the circle
  // and that voltage: against a brute-force search over id (tests/reference).
  struct scenario {
    dqfx::torque_setpoint_parameters p;
    double vdc;
    double speeds[6];
  };
  const scenario scenarios[] = {{demo, bus, {1.2, 1.5, 1.8, 2.0, 0, 0}}, {salient, salient_bus, {1.5, 2.0, 3.0, 4.0, 6.0, 8.0}}};
  for (const scenario& sc : scenarios) {
    const reference::setpoint_motor m = reference_of(sc.p);
    const double wb = reference::base_speed(m, sc.vdc);
    int mtpv = 0;
    for (double k : sc.speeds) {
      if (k == 0) continue;
      const double w = to_double(from_double<T>(k * wb));
      dqfx::field_weakening<T> fw = make<T>(sc.p, 0.02);
      const settled s = settle(fw, sc.p, 1.0, w, sc.vdc, 0.0);
      const reference::current_point best = reference::max_torque_brute_force(m, w, s.voltage * sc.vdc / std::sqrt(3.0));
      const double got = reference::torque(m, s.id, s.iq), most = reference::torque(m, best.id, best.iq);
      MESSAGE(name<T>(), " at ", k, " x base speed: torque ", got, " of the largest ", most, " (", got / most,
              "), |v| = ", s.voltage, " of the limit, id ", s.id, " (best ", best.id, ")");
      CHECK(got >= most * (1 - 1e-4) - 16 * lsb<T>());
      CHECK(got <= most * (1 + 1e-6) + 16 * lsb<T>());
      CHECK(std::hypot(s.id, s.iq) <= sc.p.current_limit * (1 + 4 * lsb<T>()));
      if (s.voltage > 0.92) {
        ++mtpv;  // held by the MTPV limit on the planning ellipse
        CHECK(s.voltage == doctest::Approx(0.95).epsilon(1e-3));
      } else {
        CHECK(s.voltage == doctest::Approx(0.9).epsilon(1e-3));
      }
    }
    // The salient motor meets the MTPV limit from twice base speed on, the demo never.
    CHECK(mtpv == (sc.vdc == bus ? 0 : 5));
  }
}

TEST_CASE_TEMPLATE("field_weakening: a torque within reach is met exactly above base speed", T, q15, q31, float,
                   double) {
  const reference::setpoint_motor m = reference_of(demo);
  const double wb = reference::base_speed(m, bus);
  for (double k : {1.3, 1.7}) {
    const double w = to_double(from_double<T>(k * wb));
    const reference::current_point best = reference::max_torque_brute_force(m, w, 0.9 * bus / std::sqrt(3.0));
    const double command = to_double(from_double<T>(0.6 * reference::torque(m, best.id, best.iq)));
    dqfx::field_weakening<T> fw = make<T>(demo, 0.02);
    const settled s = settle(fw, demo, command, w, bus, base.resistance(motor.resistance));
    const double got = reference::torque(m, s.id, s.iq);
    MESSAGE(name<T>(), " at ", k, " x base speed: torque ", got, " for ", command, ", |v| ", s.voltage);
    CHECK(std::fabs(got - command) <= 4 * lsb<T>());
    CHECK(s.voltage == doctest::Approx(0.9).epsilon(1e-3));
    // Less d current than MTPA: the shift is doing the work.
    CHECK(to_double(fw.d_shift()) < -0.05);
  }
}

TEST_CASE_TEMPLATE("field_weakening: below base speed the shift rests at zero (MTPA)", T, q15, q31, float, double) {
  const reference::setpoint_motor m = reference_of(demo);
  const double wb = reference::base_speed(m, bus);
  const dqfx::torque_setpoint<T> plain{demo};
  // (0.7: with the resistance drop the voltage reaches 0.9 of the limit near 0.8.)
  for (double k : {0.0, 0.5, 0.7}) {
    for (double t : {0.2, 0.5, 1.0}) {
      dqfx::field_weakening<T> fw = make<T>(demo, 0.02);
      const double w = k * wb;
      settle(fw, demo, t, w, bus, base.resistance(motor.resistance), 2000);
      CHECK(fw.d_shift() == T{});
      const auto a = fw.step(from_double<T>(t), from_double<T>(w), from_double<T>(bus), {}, from_double<T>(0.3));
      const auto b = plain(from_double<T>(t), from_double<T>(w), from_double<T>(bus));
      CHECK(a.current.d == b.current.d);
      CHECK(a.current.q == b.current.q);
    }
  }
}

TEST_CASE_TEMPLATE("field_weakening: the MTPV limit is the largest-torque point of each voltage ellipse", T, q15, q31,
                   float, double) {
  // Independent check of the MTPV curve: for a voltage ellipse alone (no current circle),
  // the brute-force point of largest torque (id*, iq*) must have mtpv_floor(iq*) = id*.
  const dqfx::field_weakening<T> fw = make<T>(salient, 0.02);
  REQUIRE(fw.mtpv_applies());
  double worst = 0;
  for (double lambda : {0.05, 0.1, 0.2, 0.3, 0.4}) {  // flux radius v / w
    reference::setpoint_motor m = reference_of(salient);
    m.imax = (salient.flux + lambda) / salient.ld;  // the whole ellipse, no circle
    const reference::current_point best = reference::max_torque_brute_force(m, 1.0, lambda);
    if (std::hypot(best.id, best.iq) >= salient.current_limit) continue;
    const double floor = to_double(fw.mtpv_floor(from_double<T>(best.iq)));
    worst = std::fmax(worst, std::fabs(floor - best.id));
  }
  MESSAGE(name<T>(), ": MTPV d current against brute force within ", worst, " (", worst / lsb<T>(), " LSB)");
  CHECK(worst <= 1e-6 + 8 * lsb<T>());
  // Surface magnets with the ellipse centre inside the circle: the MTPV d current is the
  // centre, -psi/ld, for every q current (common practice; the torque no longer depends on id).
  const dqfx::field_weakening<T> surface = make<T>({0.5, 0.5, 0.2, 0.8, 0.95}, 0.02);
  REQUIRE(surface.mtpv_applies());
  CHECK(to_double(surface.mtpv_floor(from_double<T>(0.3))) == doctest::Approx(-0.4).epsilon(4 * lsb<T>()));
  // And where the centre lies outside the circle it is the circle: -imax.
  const dqfx::field_weakening<T> plain = make<T>(demo, 0.02);
  CHECK_FALSE(plain.mtpv_applies());
  CHECK(plain.mtpv_floor(from_double<T>(0.3)) == -plain.setpoints().current_limit());
}

namespace {

// The demo's motor in the simulator (tests/../sim): average inverter on a stiff 48 V bus,
// duties one period late as a timer's shadow registers make them, 12-bit current ADC
// (+/-40 A) with 1 code of noise, 8192-count encoder.
dqfx::sim::plant_parameters plant() {
  dqfx::sim::plant_parameters p;
  p.motor = {motor.resistance, motor.ld, motor.lq, motor.flux, 4, inertia, friction};
  p.inverter.pwm_frequency = 1 / sample_time;
  p.bus.source_voltage = 48.0;
  p.adc.bits = 12;
  p.adc.amps_per_code = 80.0 / 4096;
  p.adc.noise_codes = 1.0;
  p.encoder.counts_per_turn = 8192;
  return p;
}

// The controller under test, every PWM period: angle from the encoder, speed from the
// angle travelled over 16 periods, a proportional speed regulator giving the torque
// command, the set-points (field weakening, or MTPA alone), the current loop.
template <class T, bool Weaken>
class weakening_drive {
 public:
  explicit weakening_drive(double top_speed)
      : loop_{dqfx::design_current_loop(base, motor, two_pi * 600, sample_time)},
        fw_{demo, dqfx::design_field_weakening(base, motor, top_speed, two_pi * 60, sample_time)},
        plain_{demo} {}

  dqfx::phases<T> operator()(const dqfx::sim::readings& r, const dqfx::sim::command& c, dqfx::sim::probe& p) {
    // The encoder counts a power of two per turn: the mechanical angle is exact.
    const std::uint32_t counts = (r.encoder_count % 8192u) << 19;
    const dqfx::angle mechanical = dqfx::angle::from_raw(counts);
    const std::int32_t travelled = dqfx::difference(mechanical, history_[period_ % 16]);
    history_[period_ % 16] = mechanical;
    const double speed = period_++ < 16 ? 0.0 : travelled * (two_pi / 4294967296.0) / (16 * sample_time);  // mech rad/s
    const double w = speed * base.pole_pairs / base.base_speed;
    const double torque = std::fmax(-1.0, std::fmin(1.0, 30.0 * (c.speed * base.pole_pairs / base.base_speed - w)));
    const T bus_pu = from_double<T>(r.bus_voltage / base.base_voltage);
    const dqfx::current_setpoint<T> s =
        Weaken ? fw_.step(from_double<T>(torque), from_double<T>(w), bus_pu, last_.voltage, last_.voltage_limit)
               : plain_(from_double<T>(torque), from_double<T>(w), bus_pu);
    dqfx::current_loop_input<T> in;
    in.current = {from_double<T>(r.current.a / base.base_current), from_double<T>(r.current.b / base.base_current),
                  from_double<T>(r.current.c / base.base_current)};
    in.rotor = dqfx::sincos_of<T>(dqfx::electrical(mechanical, base.pole_pairs));
    in.speed = from_double<T>(w);
    in.setpoint = s.current;
    in.bus_voltage = bus_pu;
    last_ = loop_.step(in);
    p.id_setpoint = to_double(s.current.d) * base.base_current;
    p.iq_setpoint = to_double(s.current.q) * base.base_current;
    p.speed = speed;
    voltage_limited += last_.voltage_limited ? 1 : 0;
    return last_.duty;
  }

  int voltage_limited = 0;  // periods the current loop was at its voltage limit

 private:
  dqfx::current_loop<T> loop_;
  dqfx::field_weakening<T> fw_;
  dqfx::torque_setpoint<T> plain_;
  dqfx::current_loop_output<T> last_{};
  std::array<dqfx::angle, 16> history_{};
  std::uint64_t period_ = 0;
};

struct drive_run {
  double top = 0;          // highest speed reached, per base speed
  double final_speed = 0;  // at the end, per base speed
  double largest = 0;      // largest current magnitude, per current limit
  double tracking = 0;     // largest |i - i*| after the first 2 ms, per current limit
  double settled = 0;      // mean |i - i*| over the last 10%, per current limit
  int voltage_limited = 0;
};

// A run of `duration` seconds from standstill with the speed command `target` times base
// speed (base speed: MTPA at 30 A meets vdc/sqrt(3), resistance neglected).
template <class T, bool Weaken>
drive_run run_drive(double target, double duration) {
  const double wb = reference::base_speed(reference_of(demo), bus);  // per unit, electrical
  const double to_mechanical = base.base_speed / base.pole_pairs;
  weakening_drive<T, Weaken> drive{2.2 * wb * base.base_speed};
  dqfx::sim::scenario sc;
  sc.duration = duration;
  sc.speed = dqfx::sim::profile{target * wb * to_mechanical};
  const dqfx::sim::run_result result = dqfx::sim::run(plant(), sc, drive);
  REQUIRE(result.outcome);
  drive_run run;
  const std::size_t n = result.records.size();
  double sum = 0;
  for (std::size_t k = 0; k < n; ++k) {
    const dqfx::sim::record& x = result.records[k];
    run.top = std::fmax(run.top, x.speed / to_mechanical / wb);
    run.largest = std::fmax(run.largest, std::hypot(x.id, x.iq) / current_limit);
    const double error = std::hypot(x.id - x.id_setpoint, x.iq - x.iq_setpoint) / current_limit;
    if (x.time >= 2e-3) run.tracking = std::fmax(run.tracking, error);
    if (k >= n - n / 10) sum += error;
  }
  run.settled = sum / static_cast<double>(n / 10);
  run.final_speed = result.records.back().speed / to_mechanical / wb;
  run.voltage_limited = drive.voltage_limited;
  return run;
}

}  // namespace

TEST_CASE_TEMPLATE("field_weakening: in the simulator the demo motor reaches 1.8 times base speed at 48 V inside 30 A",
                   T, q15, q31, float, double) {
  // 0.4 s from standstill with a speed command of 1.8 times base speed (2213 rad/s
  // electrical, 5284 rpm); MTPA alone beside it.
  const drive_run with = run_drive<T, true>(1.8, 0.4);
  const drive_run without = run_drive<T, false>(1.8, 0.4);
  MESSAGE(name<T>(), ": with field weakening ", with.final_speed, " x base speed at the end (top ", with.top,
          "), largest |i| ", with.largest, " of the limit, largest |i - i*| ", with.tracking, " of the limit (",
          with.settled, " on average over the last 40 ms), ", with.voltage_limited,
          " of 8000 periods at the voltage limit; MTPA alone: ", without.final_speed, " x base speed");
  CHECK(with.final_speed >= 1.5);
  CHECK(with.final_speed == doctest::Approx(1.8).epsilon(0.01));
  CHECK(with.largest <= 1.02);
  CHECK(with.tracking <= 0.08);
  CHECK(with.settled <= 0.02);
  CHECK(with.voltage_limited <= 80);
  // Without it the ellipse stops the motor near base speed.
  CHECK(without.final_speed < 1.3);
}

TEST_CASE_TEMPLATE("field_weakening: in the simulator, the highest speed of the demo motor", T, q15, double) {
  // Commanded far beyond reach: the speed where the largest torque the circle and the
  // voltage allow equals the friction (about twice base speed for this motor).
  const drive_run top = run_drive<T, true>(3.0, 0.8);
  MESSAGE(name<T>(), ": highest speed ", top.top, " x base speed, largest |i| ", top.largest,
          " of the limit, largest |i - i*| ", top.tracking, " of the limit (", top.settled,
          " on average at the end), ", top.voltage_limited, " of 16000 periods at the voltage limit");
  CHECK(top.top >= 1.9);
  CHECK(top.largest <= 1.02);
  CHECK(top.tracking <= 0.08);
}

TEST_CASE_TEMPLATE("field_weakening: NaN or infinite inputs give zero set-points, a fault and an untouched integrator",
                   T, float, double) {
  dqfx::field_weakening<T> fw = make<T>(demo, 0.02);
  const T lim = T(0.3);
  // Drive the shift negative first.
  for (int n = 0; n < 50; ++n) fw.step(T(0.5), T(0.7), T(bus), {T(0.0), T(0.3)}, lim);
  const T shift = fw.d_shift();
  REQUIRE(shift < T{});
  for (int field = 0; field < 6; ++field) {
    for (T bad : {std::numeric_limits<T>::quiet_NaN(), std::numeric_limits<T>::infinity()}) {
      T in[6] = {T(0.5), T(0.7), T(bus), T(0.0), T(0.3), lim};
      in[field] = bad;
      const dqfx::current_setpoint<T> s = fw.step(in[0], in[1], in[2], {in[3], in[4]}, in[5]);
      CHECK(s.fault);
      CHECK(s.current.d == T{});
      CHECK(s.current.q == T{});
      CHECK(fw.d_shift() == shift);
    }
  }
  CHECK_FALSE(fw.step(T(0.5), T(0.7), T(bus), {T(0.0), T(0.3)}, lim).fault);
}

TEST_CASE_TEMPLATE("field_weakening: bus voltage <= 0 and invalid parameters fault", T, q15, q31, float, double) {
  dqfx::field_weakening<T> fw = make<T>(demo, 0.02);
  for (int n = 0; n < 50; ++n) fw.step(from_double<T>(0.5), from_double<T>(0.7), from_double<T>(bus), {T{}, from_double<T>(0.3)}, from_double<T>(0.3));
  const T shift = fw.d_shift();
  for (double vdc : {0.0, -0.3}) {
    const dqfx::current_setpoint<T> s = fw.step(from_double<T>(0.5), from_double<T>(0.7), from_double<T>(vdc), {}, from_double<T>(0.3));
    CHECK(s.fault);
    CHECK(s.current.d == T{});
    CHECK(s.current.q == T{});
    CHECK(fw.d_shift() == shift);
  }
  dqfx::field_weakening<T> broken{dqfx::torque_setpoint_parameters{0.5, 0.3, 0.2, 0.8, 0.95}, {0.02, 0.9}};
  const dqfx::current_setpoint<T> s = broken.step(from_double<T>(0.5), T{}, from_double<T>(bus), {}, from_double<T>(0.3));
  CHECK(s.fault);
  CHECK(s.current.q == T{});
}

TEST_CASE("field_weakening: gain design and compile-time construction") {
  // Loop gain gain * w * ld per call equals bandwidth * call period at top speed.
  constexpr dqfx::field_weakening_parameters f =
      dqfx::design_field_weakening(base, motor, 5000.0, two_pi * 60, sample_time, 0.85);
  const double loop_gain = f.gain * base.speed(5000.0) * base.inductance(motor.ld);
  CHECK(loop_gain == doctest::Approx(two_pi * 60 * sample_time));
  CHECK(f.reference == 0.85);
  constexpr dqfx::field_weakening<q15> fw{salient, f};
  static_assert(fw.mtpv_applies(), "psi / ld < imax");
  static_assert(fw.setpoints().valid(), "valid parameters");
}
