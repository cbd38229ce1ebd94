// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): one recorded row per PWM period, and CSV output.

#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "dqfx_sim/motor.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

/// The signals at the start of one period (truth from the plant, set-points and the
/// angle from the controller's probe; NaN where the controller gave none). SI units,
/// speeds mechanical, angles electrical.
struct record {
  double time = 0.0;            ///< s
  double speed_setpoint = 0.0;  ///< rad/s, from the scenario
  double speed = 0.0;           ///< rad/s
  double speed_estimate = NAN;  ///< rad/s, the controller's
  double id = 0.0, iq = 0.0;    ///< A
  double id_setpoint = NAN, iq_setpoint = NAN;  ///< A, the controller's
  three_phase current{};        ///< A
  double angle = 0.0;           ///< rad in [0, 2*pi)
  double angle_error = NAN;     ///< rad in [-pi, pi): controller's angle minus the true one
  three_phase duty{};           ///< the duties the bridge uses in this period
  double vd = 0.0, vq = 0.0;    ///< V, the average applied voltage of the previous period
  double bus_voltage = 0.0;     ///< V
  double torque = 0.0;          ///< N*m, electromagnetic
  double load_torque = 0.0;     ///< N*m
  bool controller_fault = false;  ///< the controller raised its fault (probe::fault)
};

/// A record member, to name a signal in the figures (`&record::iq`).
using signal = double record::*;

/// Writes the records as CSV with a header line; every `every`-th row.
inline status write_csv(const std::string& path, const std::vector<record>& rows, std::size_t every = 1) {
  std::FILE* f = std::fopen(path.c_str(), "w");
  if (!f) return status::failure("cannot open " + path + " for writing");
  std::fputs("time,speed_setpoint,speed,speed_estimate,id,iq,id_setpoint,iq_setpoint,ia,ib,ic,angle,"
             "angle_error,duty_a,duty_b,duty_c,vd,vq,bus_voltage,torque,load_torque,controller_fault\n", f);
  if (every == 0) every = 1;
  for (std::size_t k = 0; k < rows.size(); k += every) {
    const record& r = rows[k];
    std::fprintf(f, "%.7g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%d\n",
                 r.time, r.speed_setpoint, r.speed, r.speed_estimate, r.id, r.iq, r.id_setpoint, r.iq_setpoint,
                 r.current.a, r.current.b, r.current.c, r.angle, r.angle_error, r.duty.a, r.duty.b, r.duty.c, r.vd,
                 r.vq, r.bus_voltage, r.torque, r.load_torque, r.controller_fault ? 1 : 0);
  }
  const bool written = std::ferror(f) == 0;
  return std::fclose(f) == 0 && written ? status{} : status::failure("error writing " + path);
}

}  // namespace dqfx::sim
