// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Everything in dqfx's embedded part, for convenience; each header also stands alone.

#include "dqfx/angle.hpp"             // binary angle, electrical angle, angle_rate
#include "dqfx/current_loop.hpp"      // the per-PWM-period current-loop step
#include "dqfx/current_sensing.hpp"   // ADC codes to per-unit currents, shunt reconstruction
#include "dqfx/drive.hpp"             // the whole drive, one call per PWM period
#include "dqfx/drive_sequence.hpp"    // stopped, calibrating, aligning, running, stopping, fault
#include "dqfx/encoder.hpp"           // incremental encoder angle and speed
#include "dqfx/extended.hpp"          // extended-precision intermediates for one rounding
#include "dqfx/field_weakening.hpp"   // voltage-feedback field weakening, MTPV limit
#include "dqfx/fixed.hpp"             // q15, q31
#include "dqfx/flux_observer.hpp"     // sensorless flux observer
#include "dqfx/frames.hpp"            // phases, stationary, rotating, sincos
#include "dqfx/gain_design.hpp"       // current- and speed-loop gains from motor data
#include "dqfx/hall.hpp"              // Hall sensors: sector angle, interpolation
#include "dqfx/hall_learner.hpp"      // Hall sensors: learning the table from a forced rotation
#include "dqfx/number.hpp"            // the one number interface
#include "dqfx/open_loop_start.hpp"   // open-loop start-up and hand-over to the observer
#include "dqfx/per_unit.hpp"          // per-unit bases, compile-time checked conversions
#include "dqfx/pi_regulator.hpp"      // PI with anti-windup
#include "dqfx/polar.hpp"             // angle_of (atan2), magnitude
#include "dqfx/protection.hpp"        // software protection monitors (behind hardware protection)
#include "dqfx/pwm.hpp"               // duties to timer compare values, dead-time compensation
#include "dqfx/saturation.hpp"        // opt-in saturation counting for host tests
#include "dqfx/sincos.hpp"            // sine and cosine of a binary angle
#include "dqfx/speed_regulator.hpp"   // speed loop: ramp, set-point weighting, torque limit
#include "dqfx/svm.hpp"               // space-vector modulation
#include "dqfx/torque_setpoint.hpp"   // torque to d/q current set-points (MTPA, limits)
#include "dqfx/tracking_pll.hpp"      // angle-tracking PLL
#include "dqfx/transforms.hpp"        // Clarke, Park and their inverses
