// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim), everything: motor, inverter and bus, sensors, plant,
/// harness, recording and figures, and the reference speed drive.

#include "dqfx_sim/harness.hpp"
#include "dqfx_sim/integration.hpp"
#include "dqfx_sim/inverter.hpp"
#include "dqfx_sim/metrics.hpp"
#include "dqfx_sim/motor.hpp"
#include "dqfx_sim/plant.hpp"
#include "dqfx_sim/recording.hpp"
#include "dqfx_sim/sensors.hpp"
#include "dqfx_sim/speed_drive.hpp"
#include "dqfx_sim/status.hpp"
