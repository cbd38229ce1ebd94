// SPDX-License-Identifier: MIT
#pragma once
// Small helpers and invented drive data shared by the doctest suites.

#include <string>

#include "dqfx/number.hpp"
#include "dqfx/current_loop.hpp"  // pm_motor_data
#include "dqfx/per_unit.hpp"

namespace dqfx_test {

/// One LSB of T (q15/q31), or its machine epsilon (float/double).
template <class T> double lsb() { return dqfx::number_traits<T>::lsb; }
/// "q15", "q31", "float" or "double", for messages.
template <class T> std::string name() { return dqfx::number_traits<T>::name; }

constexpr double two_pi = 6.283185307179586477;

// Invented estimator timing shared by the encoder, Hall and PLL suites: 20 kHz sampling,
// speed 1.0 = 1000 Hz electrical.
constexpr double base_speed = two_pi * 1000;
constexpr double ts = 50e-6;

// The simulator demo's invented interior-magnet motor (examples/demo: 0.12 ohm, 180/260 uH,
// 11 mWb, 4 pole pairs; not a real product) on invented bases wide enough for field
// weakening (40 A, 80 V, 1000 Hz electrical), and its 48 V bus in per unit.
constexpr dqfx::per_unit_base demo_base{40.0, 80.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data demo_motor{0.12, 180e-6, 260e-6, 0.011};
constexpr double demo_bus = 48.0 / 80.0;

}  // namespace dqfx_test
