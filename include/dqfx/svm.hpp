// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Space-vector modulation: a stationary voltage command, relative to the DC-bus
/// voltage, becomes three PWM duties in [0, 1].
///
/// The duty of phase x is d_x = 1/2 + v_x/V_dc + z, where v_x is the phase reference of
/// the command (inverse Clarke, amplitude-invariant) and z a zero-sequence offset common
/// to all phases. z cancels in every line-to-line voltage, so the choice of z (the
/// modulation scheme, a tag type) changes losses and ripple, not the voltage applied to a
/// motor with an isolated star point:
///   - `modulation::sinusoidal`: z = 0. Linear up to |v| = V_dc/2.
///   - `modulation::centred` (default): z = -(max + min)/2 of the references, the
///     carrier-based form of centred space-vector modulation with equal zero-vector
///     halves. Linear up to |v| = V_dc/sqrt(3): 2/sqrt(3) times sinusoidal, a modulation
///     index of pi/(2*sqrt(3)) = 0.9069 of six-step (Holtz, Proc. IEEE, 1994).
///   - `modulation::clamp_low`, `modulation::clamp_high`: discontinuous PWM with the
///     phase of lowest (highest) reference tied to the lower (upper) rail, each phase
///     for 120 degrees per turn.
///   - `modulation::clamp_peak`: discontinuous PWM with the phase of largest |reference|
///     tied to its own rail: 60-degree segments centred on each phase's peaks.
///   The discontinuous schemes switch each phase for two thirds of the turn only (Hava,
///   Kerkman and Lipo, IEEE Trans. Power Electronics, 1999). Same linear range as centred.
/// A command outside the scheme's linear range (the hexagon |v_x - v_y| <= V_dc, or
/// |v_x| <= V_dc/2 for sinusoidal) is brought back by an over-modulation policy:
///   - `overmodulation::keep_angle` (default): scaled onto the boundary, angle kept;
///   - `overmodulation::minimum_distance`: the nearest point of the boundary (for the
///     hexagon, the centred duties clamped to [0, 1]), which keeps more of the fundamental
///     but turns the vector towards the nearest vertex.
///
/// Error of each duty against the exact duty of the given command in the linear range
/// (proven in tests/test_svm.cpp against a classic sector and dwell-time modulator):
///                         q15                  q31        float     double
///   command / bus         0.5 + 2^-11 LSB      0.75 LSB   2.4e-7    5e-16
///   command and bus b     0.5 + 2^-10/b LSB    1.25 LSB   4.8e-7    1e-15
/// Line-to-line differences are within twice these. q15 works in 32-bit integers with 13
/// guard bits (cheap on a 32-bit core) and divides by a 32-bit reciprocal (one 32-bit
/// division and one Newton step); q31 carries the 32-bit constant sqrt(3) and (with a
/// bus) a 32-bit reciprocal. Each phase's duty is base + (reference - offset) / bus, the
/// scheme's zero sequence in (offset, base): no search for the phase of each rank. For q15/q31, whose range stops one LSB short of 1, a
/// duty of max() stands for 100 % (the PWM conversion maps it to the full period) and
/// `clamp_high` ties its phase exactly there. Because [0, max()] is one LSB shorter than
/// [0, 1], a duty that ends on either rail (0 or max()) may be one LSB further from its
/// exact value than the bounds above, which hold for every duty strictly between.
///
/// Bad input: a NaN or infinite float command or bus voltage, a bus voltage that is
/// zero, negative or (float/double) subnormal, or a command so large that its phase
/// references overflow the float range, gives 50 % on every phase, sector 0 and `fault` set.

#include <cstdint>
#include <limits>

#include "dqfx/extended.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"

namespace dqfx {

/// Modulation schemes (zero-sequence choices), as tag types for `svm`.
namespace modulation {
struct sinusoidal {};
struct centred {};
struct clamp_low {};
struct clamp_high {};
struct clamp_peak {};
}  // namespace modulation

/// What `svm` does with a command outside the linear range, as tag types.
namespace overmodulation {
struct keep_angle {};
struct minimum_distance {};
}  // namespace overmodulation

/// Three duties and what happened on the way.
template <class T> struct modulation_result {
  phases<T> duty{};            ///< in [0, 1]; for q15/q31 max() is 100 %
  std::uint8_t sector = 0;     ///< 60-degree sector of the command, 1 = [0, 60) degrees; 0 on fault
  bool limited = false;        ///< the command was outside the linear range and was brought back
  bool fault = false;          ///< the input was invalid; duties are 50 %
};

/// The largest duty: 1 for float and double, max() for q15 and q31 (where it means 100 %).
template <class T>
constexpr T full_duty() noexcept {
  if constexpr (is_fixed_v<T>) {
    return T::max();
  } else {
    return T{1};
  }
}

namespace detail {

/// A bus voltage `svm` can divide by: positive and, for float and double, not subnormal
/// (the reciprocal of a subnormal value overflows to infinity, and 0 * infinity is NaN).
template <class T>
constexpr bool usable_bus(T bus) noexcept {
  if constexpr (is_fixed_v<T>) {
    return bus > T{};
  } else {
    return bus >= std::numeric_limits<T>::min() && finite_value(bus);
  }
}

template <class T>
constexpr modulation_result<T> faulted_modulation() noexcept {
  const T half = from_double<T>(0.5);
  return {{half, half, half}, 0, false, true};
}

template <class E>
constexpr E clamp_symmetric(E x, E limit) noexcept {
  return x > limit ? limit : (x < -limit ? -limit : x);
}

/// Whether x counts as above y in the phase ordering. Equal references sit on a sector
/// boundary; counting x above exactly when the third phase z is above both puts every
/// boundary angle into the sector that starts there, so the sectors form a partition.
/// (Equality written as !(x < y) after x > y: the references are never NaN, and one
/// floating-point comparison then serves both tests.)
template <class E>
constexpr unsigned above(E x, E y, E z) noexcept {
  return (x > y || (!(x < y) && z > x)) ? 1u : 0u;
}

/// The phase ordering in one 60-degree sector (sector k covers [60(k-1), 60k) degrees).
struct phase_order {
  std::uint8_t sector, top, middle, bottom;
};

/// Indexed by 4*(a above b) + 2*(b above c) + (c above a); 0 is the zero vector and 7
/// cannot occur.
inline constexpr phase_order phase_orders[8] = {{1, 0, 1, 2}, {4, 2, 1, 0}, {2, 1, 0, 2}, {3, 1, 2, 0},
                                                {6, 0, 2, 1}, {5, 2, 0, 1}, {1, 0, 1, 2}, {1, 0, 1, 2}};

/// v[i] for i in 0..2, by selection rather than an indexed load.
template <class E>
constexpr E pick(const E (&v)[3], unsigned i) noexcept {
  return i == 0 ? v[0] : (i == 1 ? v[1] : v[2]);
}

template <class E>
constexpr E clamp_duty(E d, E full) noexcept {
  return d > full ? full : (d < E{} ? E{} : d);
}

/// Division of the modulator's extended values by one positive denominator (the bus, or
/// the spread of an over-modulated command), |num| <= den: divisor<T> (extended.hpp),
/// except for q15, which needs none of its 64-bit steps.
template <class T> struct modulation_divisor : divisor<T> {
  using divisor<T>::divisor;
};

/// q15: a 32-bit reciprocal of den (normalised to d in [2^31, 2^32)), seeded by one
/// 32-bit division and refined by one Newton step (within 2^-29 relative), and each
/// quotient one 32x32->64 product: within 2^-29 of num/den, truncated to the extended
/// resolution 2^-28. The same integer steps on every core.
template <> class modulation_divisor<q15> {
  using ext = extended<q15>;

 public:
  constexpr explicit modulation_divisor(ext den) noexcept : den_{static_cast<std::uint32_t>(den.raw())} {
    if (den.raw() <= 0) {
      den_ = 0;
      return;
    }
    shift_ = detail::leading_zeros(den_);  // >= 1: den < 2^31
    const std::uint32_t d = den_ << shift_;
    // r ~ 2^63 / d: 2^48 / d from the top 16 bits (relative error below 2^-15), then
    // r += r * (2^63 - d r) / 2^63 with the error term kept at 2^-43.
    std::uint64_t r = std::uint64_t{0xFFFFFFFFu / (d >> 16)} << 15;
    const std::uint64_t dr = d * r;  // < 2^64
    constexpr std::uint64_t one = std::uint64_t{1} << 63;
    const std::int64_t error = dr <= one ? static_cast<std::int64_t>((one - dr) >> 20)
                                         : -static_cast<std::int64_t>((dr - one) >> 20);
    const std::int64_t next = static_cast<std::int64_t>(r) + ((static_cast<std::int64_t>(r) * error) >> 43);
    reciprocal_ = next > 0xFFFFFFFF ? 0xFFFFFFFFu : static_cast<std::uint32_t>(next);
  }

  constexpr ext operator()(ext num) const noexcept {
    const std::uint32_t u = magnitude_of(num.raw());
    if (u >= den_) return den_ == 0 ? ext{} : (num.raw() < 0 ? -ext::one() : ext::one());
    // (u << shift) / d * 2^31 = num/den * 2^31; three bits more than the extended scale.
    const auto q = static_cast<std::int32_t>(multiply_high(u << shift_, reciprocal_) >> 3);
    return ext::from_raw(num.raw() < 0 ? -q : q);
  }

 private:
  std::uint32_t den_;
  int shift_ = 0;
  std::uint32_t reciprocal_ = 0;
};

/// q15, centred, angle kept: the values of the general path below, in plain 32-bit
/// integers at the extended scale 2^-28. Every intermediate lies within +/-4 (references
/// within 1.37, their spread within 2.74), far inside the extended range [-8, 8), so the
/// general path's overflow checks never fire and are left out.
template <bool PerBus>
constexpr modulation_result<q15> modulate_centred_q15(stationary<q15> command, std::int32_t bus) noexcept {
  using E = extended<q15>;
  constexpr precise_gain<q15> sqrt3 = precise_gain<q15>::from_double(1.73205080756887729353);
  constexpr int product_shift = sqrt3.shift() - E::guard_bits;
  static_assert(product_shift >= 1 && product_shift < 32, "sqrt(3) times a q15 value in one 32x32->64 product");
  const std::int32_t beta = command.beta.raw();
  const std::uint32_t magnitude = magnitude_of(beta);
  // exact_sum * precise_gain: the product truncated toward zero.
  const auto p = static_cast<std::int32_t>((std::uint64_t{magnitude} * sqrt3.mantissa()) >> product_shift);
  const std::int32_t s = beta < 0 ? -p : p;
  const std::int32_t v0 = command.alpha.raw() * (1 << E::guard_bits);
  const std::int32_t v1 = (s - v0) >> 1, v2 = (-(s + v0)) >> 1;
  const std::uint8_t sector = phase_orders[above(v0, v1, v2) * 4 + above(v1, v2, v0) * 2 + above(v2, v0, v1)].sector;
  const std::int32_t top = v0 > v1 ? (v0 > v2 ? v0 : v2) : (v1 > v2 ? v1 : v2);
  const std::int32_t bottom = v0 < v1 ? (v0 < v2 ? v0 : v2) : (v1 < v2 ? v1 : v2);
  const std::int32_t spread = top - bottom, offset = (top + bottom) >> 1;
  const bool limited = spread > bus;
  std::int32_t x0 = v0 - offset, x1 = v1 - offset, x2 = v2 - offset;
  if (!PerBus || limited) {
    const modulation_divisor<q15> over{E::from_raw(limited ? spread : bus)};
    x0 = over(E::from_raw(x0)).raw();
    x1 = over(E::from_raw(x1)).raw();
    x2 = over(E::from_raw(x2)).raw();
  }
  // Rounded, then clamped into [0, max()]: the same as clamping first (the rounding is
  // monotonic and max() is a whole q15 value), and one USAT.
  constexpr std::int32_t half = std::int32_t{1} << (E::fraction_bits - 1);
  auto duty = [](std::int32_t x) {
    return q15::from_raw(static_cast<std::int16_t>(saturate_unsigned<15>(round_shift(half + x, E::guard_bits))));
  };
  return {{duty(x0), duty(x1), duty(x2)}, sector, limited, false};
}

/// The modulation of a command relative to `bus` (positive); `PerBus`: bus is one and
/// no division is needed in the linear range.
template <class Scheme, class Limit, bool PerBus, class T>
constexpr modulation_result<T> modulate(stationary<T> command, extended<T> bus) noexcept {
  if constexpr (std::is_same_v<T, q15> && std::is_same_v<Scheme, modulation::centred> &&
                std::is_same_v<Limit, overmodulation::keep_angle>) {
    return modulate_centred_q15<PerBus>(command, bus.raw());
  }
  using E = extended<T>;
  constexpr precise_gain<T> sqrt3 = precise_gain<T>::from_double(1.73205080756887729353);
  constexpr bool keep_angle = std::is_same_v<Limit, overmodulation::keep_angle>;
  static_assert(keep_angle || std::is_same_v<Limit, overmodulation::minimum_distance>, "unknown over-modulation policy");

  // Phase references (inverse Clarke) and their ordering.
  const E alpha{command.alpha};
  const E s = exact_sum<T>{command.beta} * sqrt3;
  const E v[3] = {alpha, (s - alpha).half(), (-(s + alpha)).half()};
  const phase_order o = phase_orders[above(v[0], v[1], v[2]) * 4 + above(v[1], v[2], v[0]) * 2 + above(v[2], v[0], v[1])];
  const E top = pick(v, o.top), bottom = pick(v, o.bottom);
  if (!(top - bottom).is_finite()) return faulted_modulation<T>();

  modulation_result<T> out{};
  out.sector = o.sector;
  const E half{from_double<T>(0.5)}, full{full_duty<T>()};

  if constexpr (std::is_same_v<Scheme, modulation::sinusoidal>) {
    E d[3]{};
    // Duty offsets are the references themselves; the hexagon is |v_x| <= bus/2.
    const E peak = top > -bottom ? top : -bottom;
    E x[3] = {v[0], v[1], v[2]};
    E denominator = bus;
    out.limited = peak * 2 > bus;
    if (out.limited) {
      if constexpr (keep_angle) {
        denominator = peak * 2;
      } else {
        // Nearest point: the largest phase onto its face, the difference of the other
        // two clamped to that face's length.
        const int i = top > -bottom ? o.top : o.bottom;
        const int j = (i + 1) % 3, k = (i + 2) % 3;
        const E half_bus = bus.half();
        const E face = v[i] > E{} ? half_bus : -half_bus;
        const E split = clamp_symmetric(v[j] - v[k], half_bus);
        x[i] = face;
        x[j] = (split - face).half();
        x[k] = (-(split + face)).half();
      }
    }
    if (PerBus && !(keep_angle && out.limited)) {
      for (int p = 0; p < 3; ++p) d[p] = half + x[p];
    } else {
      const modulation_divisor<T> over{denominator};
      for (int p = 0; p < 3; ++p) d[p] = half + over(x[p]);
    }
    for (E& r : d) r = clamp_duty(r, full);
    out.duty = {d[0].rounded(), d[1].rounded(), d[2].rounded()};
  } else {
    static_assert(std::is_same_v<Scheme, modulation::centred> || std::is_same_v<Scheme, modulation::clamp_low> ||
                      std::is_same_v<Scheme, modulation::clamp_high> || std::is_same_v<Scheme, modulation::clamp_peak>,
                  "unknown modulation scheme");
    // Hexagon schemes, phase by phase: d_x = base + (x_x - offset) / den. The scheme's
    // zero sequence is (offset, base): the mean of the highest and lowest reference at
    // 50 % (centred), the lowest at 0, the highest at 100 %. den is the bus, or the
    // spread of an over-modulated command whose angle is kept (which puts the highest
    // and lowest phase one bus apart). No search for the phase of each rank.
    const E spread = top - bottom;
    out.limited = spread > bus;
    // Written out per phase, no arrays: indexed values cost a round trip through memory.
    E x0 = v[0], x1 = v[1], x2 = v[2];
    E high = top, low = bottom;
    if (!keep_angle && out.limited) {
      // Nearest point: the references about their mid-point clamped to half a bus each
      // way (the centred duties clamped to [0, 1]).
      const E centre = (top + bottom).half(), half_bus = bus.half();
      x0 = clamp_symmetric(x0 - centre, half_bus);
      x1 = clamp_symmetric(x1 - centre, half_bus);
      x2 = clamp_symmetric(x2 - centre, half_bus);
      high = half_bus;
      low = -half_bus;
    }
    bool to_top = std::is_same_v<Scheme, modulation::clamp_high>;
    if constexpr (std::is_same_v<Scheme, modulation::clamp_peak>) to_top = top + bottom >= E{};
    E offset = to_top ? high : low, base = to_top ? full : E{};
    if constexpr (std::is_same_v<Scheme, modulation::centred>) {
      offset = (high + low).half();
      base = half;
    }
    x0 = x0 - offset;
    x1 = x1 - offset;
    x2 = x2 - offset;
    if (!PerBus || (keep_angle && out.limited)) {
      const modulation_divisor<T> over{keep_angle && out.limited ? spread : bus};
      x0 = over(x0);
      x1 = over(x1);
      x2 = over(x2);
    }
    out.duty = {clamp_duty(base + x0, full).rounded(), clamp_duty(base + x1, full).rounded(),
                clamp_duty(base + x2, full).rounded()};
  }
  return out;
}

}  // namespace detail

/// Space-vector modulation of a command given relative to the DC-bus voltage
/// (v / V_dc). Needs no division unless the command is scaled back by `keep_angle`.
template <class Scheme = modulation::centred, class Limit = overmodulation::keep_angle, class T>
constexpr modulation_result<T> svm(stationary<T> command_per_bus) noexcept {
  if (!detail::finite_value(command_per_bus.alpha) || !detail::finite_value(command_per_bus.beta))
    return detail::faulted_modulation<T>();
  return detail::modulate<Scheme, Limit, true>(command_per_bus, extended<T>::one());
}

/// Space-vector modulation of a command and a DC-bus voltage in the same per-unit base.
/// One reciprocal per call (q15/q31: three Newton steps in integer multiplies).
template <class Scheme = modulation::centred, class Limit = overmodulation::keep_angle, class T>
constexpr modulation_result<T> svm(stationary<T> command, T bus) noexcept {
  if (!detail::finite_value(command.alpha) || !detail::finite_value(command.beta) || !detail::usable_bus(bus))
    return detail::faulted_modulation<T>();
  return detail::modulate<Scheme, Limit, false>(command, extended<T>{bus});
}

}  // namespace dqfx
