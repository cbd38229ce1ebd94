// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "dqfx/per_unit.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;

// Invented drive (not a real product): 48 V bus, 40 A peak, 4 pole pairs, 6000 rpm top.
constexpr double pi = 3.14159265358979323846;
constexpr dqfx::per_unit_base drive{40.0, 48.0 / 1.7320508075688772 * 1.05, 6000.0 / 60 * 2 * pi * 4, 4};

static_assert(drive.impedance() == drive.base_voltage / drive.base_current, "Z = V / I");
static_assert(drive.inductance() == drive.impedance() / drive.base_speed, "L = Z / w");
static_assert(drive.flux() == drive.base_voltage / drive.base_speed, "psi = V / w");
static_assert(drive.time() == 1 / drive.base_speed, "t = 1 / w");

// Compile-time conversions into each type.
constexpr q15 rated_current = dqfx::per_unit_constant<q15>([] { return drive.current(28.0); });
constexpr q31 resistance = dqfx::per_unit_constant<q31>([] { return drive.resistance(0.045); });
constexpr float flux = dqfx::per_unit_constant<float>([] { return drive.flux(0.0061); });
constexpr dqfx::gain<q15> kp = dqfx::per_unit_gain<q15>([] { return 37.5; });
static_assert(rated_current == dqfx::from_double<q15>(0.7), "28 A of 40 A");
static_assert(kp.to_double() == 37.5, "gains above one in fixed point");

// The limits of fits_number for q15: max() is 1 - 2^-15; half an LSB below 1 still rounds
// to max(), 1 itself does not fit; below half an LSB a nonzero value vanishes.
static_assert(dqfx::fits_number<q15>(1.0 - 0x1p-15));
static_assert(dqfx::fits_number<q15>(-1.0));
static_assert(!dqfx::fits_number<q15>(1.0));
static_assert(!dqfx::fits_number<q15>(-1.0 - 0x1p-15));
static_assert(!dqfx::fits_number<q15>(1e-6));
static_assert(dqfx::fits_number<q31>(1e-6));
static_assert(dqfx::fits_number<float>(1e30) && !dqfx::fits_number<float>(1e40));
static_assert(dqfx::fits_gain<q15>(1e9) && !dqfx::fits_gain<q15>(2e9));

}  // namespace

TEST_CASE("per_unit: SI values round-trip through per unit") {
  CHECK(drive.current(28.0) * drive.base_current == doctest::Approx(28.0));
  CHECK(drive.resistance(0.045) * drive.impedance() == doctest::Approx(0.045));
  CHECK(drive.inductance(80e-6) * drive.inductance() == doctest::Approx(80e-6));
  CHECK(drive.speed(2 * pi * 100) * drive.base_speed == doctest::Approx(2 * pi * 100));
  CHECK(drive.time(50e-6) * drive.time() == doctest::Approx(50e-6));
  CHECK(dqfx::to_double(resistance) == doctest::Approx(0.045 / drive.impedance()).epsilon(1e-9));
  CHECK(static_cast<double>(flux) == doctest::Approx(0.0061 / drive.flux()).epsilon(1e-7));
}

TEST_CASE("per_unit: the torque base agrees with the PM-machine torque equation") {
  // T = 3/2 * p * psi * iq for amplitude-invariant d/q quantities (Krause, Wasynczuk and
  // Sudhoff, "Analysis of Electric Machinery and Drive Systems", recalled from memory):
  // base flux and base current give the base torque.
  CHECK(drive.torque() == doctest::Approx(1.5 * drive.pole_pairs * drive.flux() * drive.base_current));
  // 1 pu flux at 1 pu speed is 1 pu voltage: psi * w = V.
  CHECK(drive.flux(0.0061) * drive.speed(1000.0) == doctest::Approx(0.0061 * 1000.0 / drive.base_voltage));
}

TEST_CASE("per_unit: converting a designed current regulator scales by the base impedance") {
  const dqfx::pi_design d = dqfx::imc_current_loop(0.045, 80e-6, 2 * pi * 800, 50e-6);
  const dqfx::pi_parameters p = drive.current_regulator(d);
  CHECK(p.kp == doctest::Approx(d.kp_sampled / drive.impedance()));
  CHECK(p.ki == doctest::Approx(d.ki_per_sample / drive.impedance()));
  CHECK(p.kt == doctest::Approx(d.kt_per_sample));
  // Speed regulator: rad/s mechanical in, amps out; the electrical per-unit speed maps
  // to mechanical through the pole pairs.
  const dqfx::pi_design s = dqfx::symmetric_optimum_speed_loop(3e-4, 0.09, 60.0, 1e-3);
  const dqfx::pi_parameters ps = drive.speed_regulator(s);
  CHECK(ps.kp == doctest::Approx(s.kp * drive.base_speed / drive.pole_pairs / drive.base_current));
}

TEST_CASE("per_unit: run-time checks agree with the compile-time ones") {
  CHECK_FALSE(dqfx::fits_number<q31>(std::nan("")));
  CHECK_FALSE(dqfx::fits_number<double>(std::numeric_limits<double>::infinity()));
  CHECK(dqfx::fits_number<double>(1e300));
  CHECK_FALSE(dqfx::fits_gain<q31>(std::nan("")));
  CHECK_FALSE(dqfx::fits_gain<q31>(1e-10));
  CHECK(dqfx::fits_gain<q31>(-1e-9));
}
