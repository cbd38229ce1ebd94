// SPDX-License-Identifier: MIT
// The operating region of the closed-loop demo's invented interior-magnet motor in the
// id-iq plane (all data invented: 0.12 ohm, 180/260 uH, 11 mWb, 4 pole pairs, 48 V bus):
// the MTPA curve of dqfx::torque_setpoint, the current circle, the voltage ellipses at a
// few multiples of base speed, lines of constant torque, and the maximum-torque points
// dqfx::field_weakening settles on above base speed. Writes operating_region.dat and,
// when gnuplot is installed, operating_region.png into the directory given as the first
// argument (default: the current directory).
//
//   dqfx_operating_region examples/images   # regenerates the picture used in docs/

#include <cmath>
#include <cstdio>
#include <string>

#include "dqfx/field_weakening.hpp"

namespace {

constexpr double two_pi = 6.283185307179586477;
constexpr double amps = 40.0;  // base current
constexpr dqfx::per_unit_base base{amps, 80.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data motor{0.12, 180e-6, 260e-6, 0.011};
constexpr double bus_volts = 48.0, limit_amps = 30.0, demo_limit_amps = 15.0;
constexpr dqfx::torque_setpoint_parameters parameters = dqfx::design_torque_setpoint(base, motor, limit_amps);
constexpr double bus = bus_volts / 80.0;
constexpr int pole_pairs = 4;

double newton_metres(double id, double iq) {  // amperes in
  return 1.5 * pole_pairs * (motor.flux * iq + (motor.ld - motor.lq) * id * iq);
}

// Electrical speed (rad/s) at which the MTPA point at the current limit needs vdc/sqrt(3).
double base_speed(const dqfx::torque_setpoint<double>& sp) {
  const dqfx::current_setpoint<double> peak = sp(sp.peak_torque(), 0.0, bus);
  const double id = peak.current.d * amps, iq = peak.current.q * amps;
  return bus_volts / std::sqrt(3.0) / std::hypot(motor.flux + motor.ld * id, motor.lq * iq);
}

// The set-point field weakening settles on for the largest torque at electrical speed w
// (rad/s): steady-state voltages, resistance neglected, fed back as the current loop would.
dqfx::rotating<double> settled_at(double w) {
  dqfx::field_weakening<double> fw{parameters, {0.02, 0.9}};
  const double speed = base.speed(w), limit = bus / std::sqrt(3.0);
  dqfx::rotating<double> v{}, i{};
  for (int n = 0; n < 20000; ++n) {
    i = fw.step(1.0, speed, bus, v, limit).current;
    v = {-speed * parameters.lq * i.q, speed * (parameters.flux + parameters.ld * i.d)};
    const double size = std::hypot(v.d, v.q);
    if (size > limit) v = {v.d * limit / size, v.q * limit / size};
  }
  return {i.d * amps, i.q * amps};
}

bool write_data(const std::string& path, double wb) {
  std::FILE* f = std::fopen(path.c_str(), "w");
  if (!f) return false;
  const dqfx::torque_setpoint<double> sp{parameters};
  // index 0: MTPA, the set-points of torque_setpoint from zero to the peak torque.
  std::fprintf(f, "# MTPA: id iq (A) torque (N m)\n");
  for (int k = 0; k <= 200; ++k) {
    const dqfx::current_setpoint<double> s = sp(sp.peak_torque() * k / 200, 0.0, bus);
    std::fprintf(f, "%.5f %.5f %.5f\n", s.current.d * amps, s.current.q * amps, s.torque * base.torque());
  }
  // index 1, 2: the current circles (the limit here, and the closed-loop demo's).
  for (double radius : {limit_amps, demo_limit_amps}) {
    std::fprintf(f, "\n\n# circle %.0f A\n", radius);
    for (int k = 0; k <= 360; ++k) {
      const double a = two_pi * k / 360;
      std::fprintf(f, "%.5f %.5f\n", radius * std::cos(a), radius * std::sin(a));
    }
  }
  // index 3..6: voltage ellipses (w (psi + ld id))^2 + (w lq iq)^2 = (vdc/sqrt(3))^2.
  for (double multiple : {1.0, 1.25, 1.5, 2.0}) {
    const double lambda = bus_volts / std::sqrt(3.0) / (multiple * wb);
    std::fprintf(f, "\n\n# ellipse at %.1f x base speed\n", multiple);
    for (int k = 0; k <= 720; ++k) {
      const double a = two_pi * k / 720;
      std::fprintf(f, "%.5f %.5f\n", (lambda * std::cos(a) - motor.flux) / motor.ld, lambda * std::sin(a) / motor.lq);
    }
  }
  // index 7..9: lines of constant torque, a quarter, half and all of the peak.
  const double peak = sp.peak_torque() * base.torque();
  for (double share : {0.25, 0.5, 1.0}) {
    std::fprintf(f, "\n\n# constant torque %.3f N m\n", share * peak);
    for (int k = 0; k <= 200; ++k) {
      const double id = -40.0 * k / 200;
      std::fprintf(f, "%.5f %.5f\n", id, share * peak / newton_metres(id, 1.0));
    }
  }
  // index 10: the largest-torque points field weakening settles on, 1 to 2 x base speed.
  std::fprintf(f, "\n\n# field weakening, largest torque: id iq (A) speed (x base)\n");
  for (int k = 0; k <= 10; ++k) {
    const double multiple = 1.0 + 0.1 * k;
    const dqfx::rotating<double> i = settled_at(multiple * wb);
    std::fprintf(f, "%.5f %.5f %.2f\n", i.d, i.q, multiple);
  }
  return std::fclose(f) == 0;
}

bool plot(const std::string& data, const std::string& png, double wb) {
  std::FILE* g = popen("gnuplot 2>/dev/null", "w");
  if (!g) return false;
  std::fprintf(g,
               "set terminal pngcairo size 900,1000 font 'sans,11'\n"
               "set output '%s'\n"
               "set title \"Operating region of the demo motor in the i_d-i_q plane (invented data)\\n"
               "0.12 \u03A9, L_d 180 \u00B5H, L_q 260 \u00B5H, \u03C8 11 mWb, 4 pole pairs, 48 V bus; "
               "base speed %.0f rpm\\n"
               "MTPV does not apply: the centre of the ellipses lies at %.0f A, outside the circle\"\n"
               "set size ratio -1\nset xrange [-36:6]\nset yrange [0:36]\nset grid\n"
               "set xlabel 'i_d (A)'\nset ylabel 'i_q (A)'\n"
               "set key below left Left reverse maxcols 2 spacing 1.2 width -8\n",
               png.c_str(), wb / pole_pairs * 60 / two_pi, -motor.flux / motor.ld);
  std::fprintf(g,
               "plot '%s' index 7 with lines dt 2 lc 'gray50' title 'constant torque: 1/4, 1/2, all of the peak', "
               "'' index 8 with lines dt 2 lc 'gray50' notitle, '' index 9 with lines dt 2 lc 'gray50' notitle, "
               "'' index 1 with lines lw 2 lc 'black' title 'current limit 30 A', "
               "'' index 2 with lines dt 3 lw 2 lc 'gray30' title \"the closed-loop demo's 15 A\", "
               "'' index 3 with lines lw 2 lc rgb '#1f77b4' title 'voltage limit v_{dc}/\u221A3 at base speed', "
               "'' index 4 with lines lw 2 lc rgb '#2ca02c' title '... at 1.25 x base speed', "
               "'' index 5 with lines lw 2 lc rgb '#ff7f0e' title '... at 1.5 x', "
               "'' index 6 with lines lw 2 lc rgb '#9467bd' title '... at 2 x', "
               "'' index 0 with lines lw 3 lc rgb '#d62728' title 'MTPA (torque\\_setpoint)', "
               "'' index 10 with points pt 7 ps 1.3 lc 'black' "
               "title 'field weakening at 1 to 2 x base speed, largest torque (|v| held at 0.9 of the limit)'\n",
               data.c_str());
  return pclose(g) == 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string dir = argc > 1 ? std::string{argv[1]} + "/" : std::string{};
  const std::string data = dir + "operating_region.dat", png = dir + "operating_region.png";
  const double wb = base_speed(dqfx::torque_setpoint<double>{parameters});
  if (!write_data(data, wb)) {
    std::fprintf(stderr, "cannot write %s\n", data.c_str());
    return 1;
  }
  std::printf("wrote %s (base speed %.0f rad/s electrical, %.0f rpm)\n", data.c_str(), wb, wb / pole_pairs * 60 / two_pi);
  if (plot(data, png, wb)) {
    std::printf("wrote %s\n", png.c_str());
  } else {
    std::printf("gnuplot not available: no picture (the data file is complete)\n");
  }
  return 0;
}
