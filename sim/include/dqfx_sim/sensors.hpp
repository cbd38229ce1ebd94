// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): what the controller's hardware would read.
///
///   - Phase-current ADC: code = round(mid-scale + i / amps_per_code + offset + noise),
///     clamped to the converter's range; the same convention as dqfx::current_channel
///     (current = (code - mid-scale) * amps_per_code), so a controller converts codes
///     back with the kernels it ships.
///   - Incremental encoder: a free-running counter of quadrature edges, counts_per_turn
///     per mechanical turn, `count_at_zero` where the rotor's d axis is on phase a.
///   - Hall sensors: three digital sensors 120 electrical degrees apart; sensor a is high
///     for electrical angles (minus `offset`) in [0, 180) degrees, b in [120, 300), c in
///     [240, 60). State bit 0 is a, bit 1 b, bit 2 c: 5, 1, 3, 2, 6, 4 in forward order.

#include <cmath>
#include <cstdint>
#include <array>
#include <random>

#include "dqfx_sim/motor.hpp"
#include "dqfx_sim/status.hpp"

namespace dqfx::sim {

struct adc_parameters {
  unsigned bits = 12;
  double amps_per_code = 0.01;  ///< A per code, negative for an inverting amplifier
  three_phase offset_codes{};   ///< offset error per phase, in codes
  double noise_codes = 0.0;     ///< rms of Gaussian noise, in codes
  unsigned seed = 1;            ///< the noise is repeatable
};

struct encoder_parameters {
  std::uint32_t counts_per_turn = 4096;  ///< quadrature edges per mechanical turn
  std::uint32_t count_at_zero = 0;       ///< counter value with the d axis on phase a
};

struct hall_parameters {
  double offset = 0.0;  ///< electrical rad the sensors sit late by (placement error)
};

inline status check(const adc_parameters& a, const encoder_parameters& e, const hall_parameters& h) {
  if (a.bits < 8 || a.bits > 16) return status::failure("adc: bits must be 8 to 16 (got " + text(a.bits) + ")");
  if (!(std::isfinite(a.amps_per_code) && a.amps_per_code != 0))
    return status::failure("adc: amps_per_code must be finite and nonzero (got " + text(a.amps_per_code) + ")");
  if (!(std::isfinite(a.noise_codes) && a.noise_codes >= 0))
    return status::failure("adc: noise_codes must be >= 0 (got " + text(a.noise_codes) + ")");
  if (!(std::isfinite(a.offset_codes.a) && std::isfinite(a.offset_codes.b) && std::isfinite(a.offset_codes.c)))
    return status::failure("adc: offset_codes must be finite");
  if (e.counts_per_turn == 0) return status::failure("encoder: counts_per_turn must be at least 1 (got 0)");
  if (!std::isfinite(h.offset)) return status::failure("hall: offset must be finite (got " + text(h.offset) + ")");
  return {};
}

/// The three current channels of one ADC.
class current_adc {
 public:
  current_adc() = default;
  explicit current_adc(const adc_parameters& p) : p_{p}, random_{p.seed} {}

  const adc_parameters& parameters() const noexcept { return p_; }
  /// Codes for the three phase currents, each with its offset and fresh noise.
  std::array<std::uint16_t, 3> sample(const three_phase& i) {
    return {code(i.a, p_.offset_codes.a), code(i.b, p_.offset_codes.b), code(i.c, p_.offset_codes.c)};
  }
  /// The nominal reading of a code in amps (what an ideal-gain, zero-offset conversion
  /// gives).
  double amps(std::uint16_t c) const noexcept { return (c - mid()) * p_.amps_per_code; }

 private:
  double mid() const noexcept { return std::ldexp(1.0, static_cast<int>(p_.bits) - 1); }
  std::uint16_t code(double current, double offset) {
    double x = mid() + current / p_.amps_per_code + offset;
    if (p_.noise_codes > 0) x += p_.noise_codes * gauss_(random_);
    const double top = std::ldexp(1.0, static_cast<int>(p_.bits)) - 1;
    x = std::nearbyint(x);
    return static_cast<std::uint16_t>(x < 0 ? 0.0 : (x > top ? top : x));
  }

  adc_parameters p_{};
  std::mt19937 random_{1};
  std::normal_distribution<double> gauss_{0.0, 1.0};
};

/// Encoder edges since position 0 (mechanical rad), floored: the count changes at each
/// multiple of 2*pi/counts_per_turn.
inline std::int64_t encoder_edges(const encoder_parameters& e, double position) noexcept {
  return static_cast<std::int64_t>(std::floor(position * e.counts_per_turn / (2 * pi)));
}

/// The counter value (wrapping modulo 2^32; a 16-bit timer reads the low half).
inline std::uint32_t encoder_counter(const encoder_parameters& e, double position) noexcept {
  const std::uint64_t edges = static_cast<std::uint64_t>(encoder_edges(e, position));  // modulo 2^64
  return static_cast<std::uint32_t>(edges + e.count_at_zero);
}

/// The Hall state (bit 0 a, bit 1 b, bit 2 c) at an electrical angle in rad.
inline std::uint8_t hall_state(const hall_parameters& h, double electrical_angle) noexcept {
  auto high = [&](double start_degrees) {
    double x = std::fmod(electrical_angle - h.offset - start_degrees * pi / 180, 2 * pi);
    if (x < 0) x += 2 * pi;
    return x < pi;
  };
  return static_cast<std::uint8_t>((high(0) ? 1 : 0) | (high(120) ? 2 : 0) | (high(240) ? 4 : 0));
}

}  // namespace dqfx::sim
