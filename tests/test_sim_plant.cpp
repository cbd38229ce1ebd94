// SPDX-License-Identifier: MIT
// The simulator's plant: integration checked against Boost.Odeint (an adaptive
// Dormand-Prince integrator from Debian's libboost-dev) on equations written again here
// in the phase frame; average against switched inverter; dead time; DC bus energy.
#include <doctest/doctest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <vector>

#include <boost/numeric/odeint.hpp>

#include "dqfx_sim/plant.hpp"

namespace {

using namespace dqfx::sim;

// Invented interior-magnet motor and 24 V board (not a real product).
plant_parameters invented() {
  plant_parameters p;
  p.motor = {0.15, 150e-6, 240e-6, 0.007, 4, 3e-5, 1e-5};
  p.inverter.pwm_frequency = 16e3;
  p.bus.source_voltage = 24.0;
  p.adc.amps_per_code = 0.01;
  p.duty_delay = 0;
  return p;
}

// Open-loop duties: a voltage vector of `amplitude` (fraction of the bus) turning at
// `frequency` Hz (a V/f start), centred.
three_phase rotating_duty(double t, double amplitude, double frequency) {
  const double th = 2 * pi * frequency * t;
  return {0.5 + amplitude * std::cos(th), 0.5 + amplitude * std::cos(th - 2 * pi / 3),
          0.5 + amplitude * std::cos(th + 2 * pi / 3)};
}

// The reference: state {id, iq, speed, position, vdc}, phase voltages from the legs,
// projected onto d and q directly (2/3 sum v_x cos(theta - k*120 deg)), written without
// the simulator's code. `high` gives the share of the bus phase x is tied to.
struct reference_plant {
  plant_parameters p;
  double load = 0;
  std::array<double, 3> share{};  // average: duty; switched: 0 or 1 (dead legs: -1)
  double dead_time_loss = 0;      // average model: td/T

  using state = std::array<double, 5>;
  void operator()(const state& x, state& dxdt, double) const {
    const motor_parameters& m = p.motor;
    const double th = m.pole_pairs * x[3], we = m.pole_pairs * x[2];
    const double angles[3] = {th, th - 2 * pi / 3, th + 2 * pi / 3};
    double i[3];
    for (int k = 0; k < 3; ++k) i[k] = x[0] * std::cos(angles[k]) - x[1] * std::sin(angles[k]);
    const double vdc = p.bus.capacitance > 0 ? x[4] : p.bus.source_voltage;
    double v[3], high_current = 0;
    for (std::size_t k = 0; k < 3; ++k) {
      // The diodes pull a current i toward the lower rail (i > 0) or the upper one,
      // linearly within +/- the current band.
      const double pull = std::fmax(-1.0, std::fmin(1.0, i[k] / p.inverter.current_band));
      double s = share[k];
      if (s < 0) s = 0.5 - 0.5 * pull;  // dead leg
      if (dead_time_loss > 0) s -= dead_time_loss * pull;
      s = std::fmin(1.0, std::fmax(0.0, s));
      v[k] = s * vdc;
      high_current += s * i[k];
    }
    double vd = 0, vq = 0;
    for (int k = 0; k < 3; ++k) {
      vd += 2.0 / 3 * v[k] * std::cos(angles[k]);
      vq -= 2.0 / 3 * v[k] * std::sin(angles[k]);
    }
    const double torque = 1.5 * m.pole_pairs * (m.flux * x[1] + (m.ld - m.lq) * x[0] * x[1]);
    dxdt[0] = (vd - m.resistance * x[0] + we * m.lq * x[1]) / m.ld;
    dxdt[1] = (vq - m.resistance * x[1] - we * m.ld * x[0] - we * m.flux) / m.lq;
    dxdt[2] = (torque - m.friction * x[2] - load) / m.inertia;
    dxdt[3] = x[2];
    dxdt[4] = p.bus.capacitance > 0
                  ? ((p.bus.source_voltage - x[4]) / p.bus.source_resistance - high_current) / p.bus.capacitance
                  : 0.0;
  }
};

// The leg of a centre-aligned period with duty d and dead time td at time t in [0, T):
// 1 high, 0 low, -1 both off. Written from the description of the timer, not copied.
double leg_share(double d, double t, double period, double td) {
  if (d <= 0) return 0;
  if (d >= 1) return 1;
  const double on = (period - d * period) / 2, off = (period + d * period) / 2;
  if (t >= on + td && t < off) return 1;
  if (t >= on && t < off + td) return -1;
  return 0;
}

struct comparison {
  double current = 0, speed = 0, position = 0, bus = 0;  // largest differences
  double current_scale = 0, speed_scale = 0;             // largest magnitudes
};

// Runs the plant and the reference side by side for `periods`, the reference integrated by
// odeint's controlled Dormand-Prince stepper at 1e-12 absolute and relative tolerance.
comparison compare_with_odeint(const plant_parameters& p, int periods, double load) {
  namespace ode = boost::numeric::odeint;
  plant sim{p};
  REQUIRE(sim.check().ok());
  reference_plant ref{p, load, {}, p.inverter.model == inverter_model::average ? p.inverter.dead_time * p.inverter.pwm_frequency : 0.0};
  reference_plant::state x{0, 0, 0, 0, p.bus.source_voltage};
  const double T = 1 / p.inverter.pwm_frequency;
  comparison c;
  for (int k = 0; k < periods; ++k) {
    const double t0 = k * T;
    const three_phase d = rotating_duty(t0, 0.3 * std::fmin(1.0, t0 / 0.01), 2 + 300 * t0);
    sim.apply(d);
    sim.advance(load);
    const double duty[3] = {d.a, d.b, d.c};
    if (p.inverter.model == inverter_model::average) {
      ref.share = {d.a, d.b, d.c};
      ode::integrate_adaptive(ode::make_controlled(1e-12, 1e-12, ode::runge_kutta_dopri5<reference_plant::state>{}),
                              ref, x, t0, t0 + T, T / 16);
    } else {
      // Piece by piece between the edges of the three legs.
      std::vector<double> edges{0, T};
      for (double dx : duty)
        for (double e : {(T - dx * T) / 2, (T - dx * T) / 2 + p.inverter.dead_time, (T + dx * T) / 2,
                         (T + dx * T) / 2 + p.inverter.dead_time})
          if (e > 0 && e < T && dx > 0 && dx < 1) edges.push_back(e);
      std::sort(edges.begin(), edges.end());
      for (std::size_t e = 0; e + 1 < edges.size(); ++e) {
        if (!(edges[e + 1] > edges[e])) continue;
        const double mid = (edges[e] + edges[e + 1]) / 2;
        for (int leg = 0; leg < 3; ++leg) ref.share[static_cast<std::size_t>(leg)] = leg_share(duty[leg], mid, T, p.inverter.dead_time);
        ode::integrate_adaptive(ode::make_controlled(1e-12, 1e-12, ode::runge_kutta_dopri5<reference_plant::state>{}),
                                ref, x, t0 + edges[e], t0 + edges[e + 1], (edges[e + 1] - edges[e]) / 4);
      }
    }
    const plant_state& s = sim.state();
    c.current = std::fmax(c.current, std::fmax(std::fabs(s.motor.id - x[0]), std::fabs(s.motor.iq - x[1])));
    c.speed = std::fmax(c.speed, std::fabs(s.motor.speed - x[2]));
    c.position = std::fmax(c.position, std::fabs(s.motor.position - x[3]));
    if (p.bus.capacitance > 0) c.bus = std::fmax(c.bus, std::fabs(s.bus_voltage - x[4]));
    c.current_scale = std::fmax(c.current_scale, std::hypot(x[0], x[1]));
    c.speed_scale = std::fmax(c.speed_scale, std::fabs(x[2]));
  }
  return c;
}

}  // namespace

// Outside check: Boost.Odeint's runge_kutta_dopri5 (Boost 1.74, libboost-dev) with error
// control at 1e-12, on the equations of Krause, Wasynczuk and Sudhoff ("Analysis of
// Electric Machinery and Drive Systems") written here in another form.
TEST_CASE("sim plant: RK4 at 8 steps per period matches Boost.Odeint (average inverter, stiff bus)") {
  const comparison c = compare_with_odeint(invented(), 1600, 0.0);  // 0.1 s of a V/f start
  MESSAGE("current ", c.current, " A of ", c.current_scale, ", speed ", c.speed, " rad/s of ", c.speed_scale);
  CHECK(c.current_scale > 5.0);
  CHECK(c.speed_scale > 50.0);
  CHECK(c.current < 1e-10 * c.current_scale);  // measured 1.2e-11
  CHECK(c.speed < 1e-10 * c.speed_scale);      // measured 1.0e-12
  CHECK(c.position < 1e-8);
}

TEST_CASE("sim plant: matches Boost.Odeint with dead time, load and a capacitor bus (average inverter)") {
  plant_parameters p = invented();
  p.inverter.dead_time = 1e-6;
  p.bus.source_resistance = 0.2;
  p.bus.capacitance = 200e-6;
  const comparison c = compare_with_odeint(p, 1600, 0.01);
  MESSAGE("current ", c.current, " A of ", c.current_scale, ", speed ", c.speed, " rad/s of ", c.speed_scale, ", bus ",
          c.bus, " V");
  // The dead-time voltage has kinks at the edges of the current band: RK4 steps across a
  // kink lose their order there, so the bound is looser (measured: 8e-6 and 4e-6).
  CHECK(c.current < 3e-5 * c.current_scale);
  CHECK(c.speed < 3e-5 * c.speed_scale);
  CHECK(c.bus < 1e-5 * p.bus.source_voltage);
}

TEST_CASE("sim plant: matches Boost.Odeint edge by edge (switched inverter with dead time)") {
  plant_parameters p = invented();
  p.inverter.model = inverter_model::switched;
  p.inverter.dead_time = 1e-6;
  const comparison c = compare_with_odeint(p, 800, 0.0);
  MESSAGE("current ", c.current, " A of ", c.current_scale, ", speed ", c.speed, " rad/s of ", c.speed_scale);
  CHECK(c.current < 3e-5 * c.current_scale);  // measured 3.5e-6
  CHECK(c.speed < 3e-5 * c.speed_scale);      // measured 1.9e-6
}

// Centre-aligned PWM sampled at the period start reads the average current (common
// practice; the ripple is symmetric about the sampling instant).
TEST_CASE("sim plant: switched and average inverters agree at the sampling instants") {
  plant_parameters a = invented(), s = invented();
  s.inverter.model = inverter_model::switched;
  plant average{a}, switched{s};
  double largest = 0, scale = 0;
  for (int k = 0; k < 1600; ++k) {
    const double t = k / a.inverter.pwm_frequency;
    const three_phase d = rotating_duty(t, 0.3 * std::fmin(1.0, t / 0.01), 2 + 300 * t);
    average.apply(d);
    switched.apply(d);
    average.advance(0.0);
    switched.advance(0.0);
    largest = std::fmax(largest, std::fabs(average.state().motor.iq - switched.state().motor.iq));
    scale = std::fmax(scale, std::fabs(average.state().motor.iq));
  }
  MESSAGE("largest iq difference ", largest, " A of ", scale, " A");
  CHECK(largest < 0.03 * scale);
}

// Dead time: each phase loses td/T of duty for a current out of the leg and gains it for
// a current into it (common practice). With a standing current (i_a > 0, i_b = i_c < 0)
// the alpha voltage drops by 4/3 * td/T * Vdc, in both models.
TEST_CASE("sim plant: dead time takes 4/3 td/T Vdc from the alpha voltage of a standing current") {
  for (inverter_model model : {inverter_model::average, inverter_model::switched}) {
    auto alpha_voltage = [&](double dead_time) {
      plant_parameters p = invented();
      p.motor.inertia = 1e6;  // locked rotor
      p.inverter.model = model;
      p.inverter.dead_time = dead_time;
      plant x{p};
      for (int k = 0; k < 400; ++k) {
        x.apply({0.56, 0.47, 0.47});
        x.advance(0.0);
      }
      CHECK(x.currents().a > 1.0);
      return x.average_voltage().alpha;
    };
    const double td = 1e-6, loss = td * invented().inverter.pwm_frequency * invented().bus.source_voltage;
    CHECK(alpha_voltage(0.0) - alpha_voltage(td) == doctest::Approx(4.0 / 3 * loss).epsilon(1e-3));
  }
}

// Energy conservation across the inverter: what the bus delivers, (Vs - vdc)/R * vdc in
// steady state, equals the motor's terminal power 1.5*(v_alpha i_alpha + v_beta i_beta)
// (amplitude-invariant transform: power is 3/2 of the vector product; textbook fact).
TEST_CASE("sim plant: the capacitor bus delivers the motor's terminal power") {
  plant_parameters p = invented();
  p.motor.inertia = 1e6;
  p.bus.source_resistance = 0.5;
  p.bus.capacitance = 100e-6;
  plant x{p};
  for (int k = 0; k < 3200; ++k) {
    x.apply({0.6, 0.45, 0.45});
    x.advance(0.0);
  }
  const double vdc = x.bus_voltage();
  const double from_bus = (p.bus.source_voltage - vdc) / p.bus.source_resistance * vdc;
  const three_phase i = x.currents();
  const stationary_voltage v = x.average_voltage();
  const double alpha = (2 * i.a - i.b - i.c) / 3, beta = (i.b - i.c) / std::sqrt(3.0);
  const double terminal = 1.5 * (v.alpha * alpha + v.beta * beta);
  MESSAGE("bus ", vdc, " V, power ", from_bus, " W");
  CHECK(vdc < p.bus.source_voltage - 0.1);
  CHECK(from_bus == doctest::Approx(terminal).epsilon(1e-6));
}

TEST_CASE("sim plant: unphysical or unstable settings are refused before anything runs") {
  plant_parameters p = invented();
  CHECK(check(p).ok());
  p.motor.ld = -1e-4;
  CHECK(check(p).message().find("ld must be a positive inductance") != std::string::npos);
  p = invented();
  p.motor.pole_pairs = 0;
  CHECK(check(p).message().find("pole_pairs") != std::string::npos);
  p = invented();
  p.steps_per_period = 1;
  p.motor.ld = p.motor.lq = 2e-6;  // tiny inductance: R/L and the speed limit outrun one step
  const status s = check(p);
  CHECK(s.message().find("too large for stability") != std::string::npos);
  CHECK(s.message().find("steps_per_period") != std::string::npos);
  p = invented();
  p.bus.capacitance = 1e-6;
  p.bus.source_resistance = 0.01;
  CHECK(check(p).message().find("DC bus") != std::string::npos);
  p = invented();
  p.bus.capacitance = 1e-4;
  CHECK(check(p).message().find("source_resistance") != std::string::npos);
  p = invented();
  p.inverter.dead_time = 1e-6;
  p.inverter.current_band = 1e-4;
  CHECK(check(p).message().find("current_band") != std::string::npos);
  p = invented();
  p.inverter.dead_time = 40e-6;
  CHECK(check(p).message().find("dead_time") != std::string::npos);
  p = invented();
  p.adc.bits = 20;
  CHECK(check(p).message().find("adc") != std::string::npos);
  p = invented();
  p.encoder.counts_per_turn = 0;
  CHECK(check(p).message().find("encoder") != std::string::npos);
  // A refused plant does not advance.
  p = invented();
  p.motor.inertia = 0;
  plant x{p};
  CHECK_FALSE(x.check().ok());
  CHECK_FALSE(x.advance(0.0));
}
