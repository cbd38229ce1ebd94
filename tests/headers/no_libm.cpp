// SPDX-License-Identifier: MIT
// Uses the q15/q31 paths of every fixed-point kernel there is. cmake/check_no_libm.cmake
// builds it for Cortex-M and links it without libm (and without libstdc++): the link
// succeeding, and no undefined symbol that libm defines, prove the fixed-point paths
// need neither. Kernels join as their headers appear.

#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/fixed.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#if __has_include("dqfx/sincos.hpp")
#include "dqfx/sincos.hpp"
#define DQFX_HAVE_SINCOS 1
#endif
#if __has_include("dqfx/polar.hpp")
#include "dqfx/polar.hpp"
#define DQFX_HAVE_POLAR 1
#endif
#if __has_include("dqfx/drive.hpp")
#include "dqfx/drive.hpp"
#include "dqfx/encoder.hpp"
#define DQFX_HAVE_DRIVE 1
#endif

// volatile inputs and outputs: nothing can be folded away at compile time.
volatile std::int32_t input_a = 12345, input_b = -23456;
volatile std::uint32_t input_angle = 0x12345678u;
volatile double input_double = 0.3;
volatile std::int64_t output;

template <class T>
void exercise() {
  using raw = typename T::raw_type;
  const T a = T::from_raw(static_cast<raw>(input_a)), b = T::from_raw(static_cast<raw>(input_b));
  constexpr auto two_over_sqrt3 = dqfx::gain<T>::from_double(1.1547005383792515);
  T r = (a + b) - a * b;
  r = dqfx::abs(-r) * two_over_sqrt3;
  r = dqfx::sum_of_products(r, a, b, b) + dqfx::difference_of_products(a, b, r, a);
  r = r + dqfx::from_double<T>(input_double);  // runtime conversion: soft-float, not libm
  output = r.raw();

  constexpr auto rate = dqfx::angle_rate<T>::from_base(3000.0, 1e-4);
  const dqfx::angle th = rate.advance(dqfx::angle::from_raw(input_angle), a);
  output = dqfx::electrical(th, 4).raw();
#if DQFX_HAVE_SINCOS
  const dqfx::sincos<T> sc = dqfx::sincos_of<T>(th);
  output = sc.sin.raw() + sc.cos.raw();
#endif
#if DQFX_HAVE_POLAR
  const dqfx::stationary<T> v{a, b};
  output = dqfx::angle_of(v).raw();
  output = dqfx::magnitude(v).raw();
#endif
#if DQFX_HAVE_DRIVE
  // The whole drive (speed loop, monitors, sequence, current loop) on an invented motor
  // (bases chosen so that every per-unit quantity is below 1, as the design checks demand).
  constexpr dqfx::per_unit_base base{40.0, 100.0, 2 * 3.14159265358979 * 800, 4};
  constexpr dqfx::drive_parameters parameters = [] {
    constexpr dqfx::pm_motor_data motor{0.1, 120e-6, 420e-6, 0.006};
    constexpr dqfx::per_unit_base bases{40.0, 100.0, 2 * 3.14159265358979 * 800, 4};
    dqfx::drive_parameters p{};
    p.current = dqfx::design_current_loop(bases, motor, 5000.0, 1 / 16e3);
    dqfx::speed_loop_data s{};
    s.inertia = 6e-5;
    s.flux = motor.flux;
    s.bandwidth = 150.0;
    s.sample_time = 8 / 16e3;
    s.torque_limit = 0.9;
    p.speed = dqfx::design_speed_regulator(bases, s);
    p.torque = dqfx::design_torque_setpoint(bases, motor, 25.0);
    p.protection.sample_time = 1 / 16e3;
    p.amps_per_code = 0.02;
    p.base_current = bases.base_current;
    return p;
  }();
  dqfx::encoder_parameters e{};
  e.counts_per_turn = 4096;
  e.pole_pairs = 4;
  e.base_speed = base.base_speed;
  e.sample_time = 1 / 16e3;
  dqfx::encoder<T> encoder{e};
  dqfx::drive<T, dqfx::encoder<T>> drive{parameters};
  drive.start();
  drive.set_speed(a);
  encoder.update(input_angle);
  const auto out = drive.step({{2048, 2050, static_cast<std::uint16_t>(input_a & 0xfff)}, T::from_raw(static_cast<raw>(input_b))}, encoder);
  output = out.duty.a.raw() + out.duty.b.raw() + static_cast<std::int64_t>(out.state);
#endif
}

int main() {
  exercise<dqfx::q15>();
  exercise<dqfx::q31>();
  return 0;
}
