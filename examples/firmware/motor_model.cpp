// SPDX-License-Identifier: MIT
#include "motor_model.hpp"

#include "drive.hpp"
#include "dqfx/angle.hpp"
#include "dqfx/sincos.hpp"

namespace {

// The model shifts negative values right and expects the sign to be kept (GCC and Clang
// do; C++20 requires it).
static_assert((-3 >> 1) == -2, "arithmetic right shift");

constexpr double q31_one = 2147483648.0;
// Compile-time only: a per-unit constant in (-1, 1) as Q31, rounded.
constexpr std::int32_t q31(double v) noexcept {
  const double x = v * q31_one;
  return static_cast<std::int32_t>(x < 0 ? x - 0.5 : x + 0.5);
}
// a * b for Q31 values (rounded; the model keeps its values well inside the range).
constexpr std::int32_t mul(std::int32_t a, std::int32_t b) noexcept {
  return static_cast<std::int32_t>((std::int64_t{a} * b + (std::int64_t{1} << 30)) >> 31);
}

using drive::base;
using drive::motor;
constexpr double ld = base.inductance(motor.ld), lq = base.inductance(motor.lq), r = base.resistance(motor.resistance);
// Zero-order-hold R-L step: i' = a*i + b*v with a = exp(-R Ts / L), b = (1 - a) / R.
constexpr double a_d = dqfx::detail::exp(-motor.resistance * drive::sample_time / motor.ld);
constexpr double a_q = dqfx::detail::exp(-motor.resistance * drive::sample_time / motor.lq);
constexpr std::int32_t hold_d = q31(a_d), hold_q = q31(a_q);
constexpr std::int32_t gain_d = q31((1 - a_d) / r), gain_q = q31((1 - a_q) / r);
constexpr std::int32_t ld_q31 = q31(ld), lq_q31 = q31(lq), flux_q31 = q31(base.flux(motor.flux));
constexpr std::int32_t saliency = q31(ld - lq);
// Speed step per period for one per unit of torque: Tbase * Ts / (J * mechanical base speed).
constexpr std::int32_t acceleration = q31(base.torque() * drive::sample_time / (drive::inertia * base.mechanical_speed()));
// Mechanical position step per period at speed 1.0, in 2^-16 units of the 2^48-per-turn position.
constexpr std::int64_t travel = static_cast<std::int64_t>(
    base.mechanical_speed() * drive::sample_time / (2 * drive::pi) * 281474976710656.0 * 65536.0 / q31_one + 0.5);
constexpr std::int32_t bus = q31(base.voltage(drive::bus_volts));
constexpr std::int32_t inv_sqrt3 = q31(0.57735026918962576451), half_sqrt3 = q31(0.86602540378443864676);
// ADC: codes per unit of current (Q16 fraction), invented offsets of the three amplifiers.
constexpr std::int64_t codes_per_unit = static_cast<std::int64_t>(base.base_current / drive::amps_per_code * 65536.0 + 0.5);
constexpr std::int32_t amplifier_offset[3] = {5, -3, 2};
constexpr std::int32_t bus_code = static_cast<std::int32_t>(drive::bus_volts / drive::bus_volts_per_code + 0.5);

std::uint16_t adc_code(std::int32_t value) noexcept {
  const std::int32_t largest = (1 << drive::adc.bits) - 1;
  return static_cast<std::uint16_t>(value < 0 ? 0 : (value > largest ? largest : value));
}

}  // namespace

std::int32_t motor_model::noise() noexcept {
  random_ = random_ * 1664525u + 1013904223u;  // linear congruential (Numerical Recipes' constants)
  return static_cast<std::int32_t>(random_ >> 30) - 2;  // -2 .. 1 codes
}

void motor_model::start(volatile board::registers& hw) noexcept { sample(hw); }

void motor_model::advance(volatile board::registers& hw) noexcept {
  const dqfx::angle electrical = dqfx::angle::from_raw(static_cast<std::uint32_t>(position_ >> 16) * drive::pole_pairs);
  const dqfx::sincos<dqfx::q31> sc = dqfx::sincos_of<dqfx::q31>(electrical);
  const std::int32_t s = sc.sin.raw(), c = sc.cos.raw();
  if (hw.bridge_enabled) {
    // Duties as Q31, then the stator voltage (amplitude-invariant Clarke of the phase
    // voltages; the common mode drops out) and its d/q components.
    std::int64_t duty[3];
    for (int p = 0; p < 3; ++p) duty[p] = (std::int64_t{hw.compare[p]} << 31) / drive::pwm_top;
    const auto alpha = static_cast<std::int32_t>((2 * duty[0] - duty[1] - duty[2]) / 3);
    const auto beta = mul(static_cast<std::int32_t>(duty[1] - duty[2]), inv_sqrt3);
    const std::int32_t v_alpha = mul(alpha, bus), v_beta = mul(beta, bus);
    const std::int32_t vd = mul(v_alpha, c) + mul(v_beta, s);
    const std::int32_t vq = mul(v_beta, c) - mul(v_alpha, s);
    // Speed voltages over the period, then the exact R-L step.
    const std::int32_t ed = vd + mul(mul(speed_, lq_q31), iq_);
    const std::int32_t eq = vq - mul(mul(speed_, ld_q31), id_) - mul(speed_, flux_q31);
    const std::int32_t id = mul(hold_d, id_) + mul(gain_d, ed);
    const std::int32_t iq = mul(hold_q, iq_) + mul(gain_q, eq);
    id_ = id;
    iq_ = iq;
  } else {
    id_ = iq_ = 0;
  }
  const std::int32_t torque = mul(flux_q31, iq_) + mul(mul(saliency, id_), iq_);
  speed_ += mul(acceleration, torque - load_);
  position_ += static_cast<std::uint64_t>(std::int64_t{speed_} * travel >> 16);
  sample(hw);
}

void motor_model::sample(volatile board::registers& hw) noexcept {
  const dqfx::angle electrical = dqfx::angle::from_raw(static_cast<std::uint32_t>(position_ >> 16) * drive::pole_pairs);
  const dqfx::sincos<dqfx::q31> sc = dqfx::sincos_of<dqfx::q31>(electrical);
  const std::int32_t s = sc.sin.raw(), c = sc.cos.raw();
  const std::int32_t i_alpha = mul(id_, c) - mul(iq_, s);
  const std::int32_t i_beta = mul(id_, s) + mul(iq_, c);
  const std::int32_t i[3] = {i_alpha, mul(half_sqrt3, i_beta) - i_alpha / 2, -mul(half_sqrt3, i_beta) - i_alpha / 2};
  const std::int32_t mid = 1 << (drive::adc.bits - 1);
  for (int p = 0; p < 3; ++p) {
    const auto codes = static_cast<std::int32_t>(std::int64_t{i[p]} * codes_per_unit >> 47);
    hw.adc_phase[p] = adc_code(mid + codes + amplifier_offset[p] + noise());
  }
  hw.adc_bus = adc_code(bus_code + noise());
  // 2^48 per turn, 4096 counts per turn: the counter is bits 36..51.
  hw.encoder_counter = static_cast<std::uint16_t>(position_ >> 36);
}
