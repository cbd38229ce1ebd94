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
/// guard bits (cheap on a 32-bit core); q31 carries the 32-bit constant sqrt(3) and (with
/// a bus) a 32-bit reciprocal. For q15/q31, whose range stops one LSB short of 1, a
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
template <class E>
constexpr unsigned above(E x, E y, E z) noexcept {
  return (x > y || (x == y && z > x)) ? 1u : 0u;
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

/// The modulation of a command relative to `bus` (positive); `PerBus`: bus is one and
/// no division is needed in the linear range.
template <class Scheme, class Limit, bool PerBus, class T>
constexpr modulation_result<T> modulate(stationary<T> command, extended<T> bus) noexcept {
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
      const divisor<T> over{denominator};
      for (int p = 0; p < 3; ++p) d[p] = half + over(x[p]);
    }
    for (E& r : d) r = clamp_duty(r, full);
    out.duty = {d[0].rounded(), d[1].rounded(), d[2].rounded()};
  } else {
    // Hexagon schemes: the top and bottom phases sit symmetrically about their middle,
    // at +/- q_top; only the middle phase has an offset of its own.
    const E spread = top - bottom;
    E x_middle = pick(v, o.middle) - (top + bottom).half();
    E q_top{}, q_middle{};
    out.limited = spread > bus;
    if (!out.limited) {
      if constexpr (PerBus) {
        q_top = spread.half();
        q_middle = x_middle;
      } else {
        const divisor<T> over{bus};
        q_top = over(spread.half());
        q_middle = over(x_middle);
      }
    } else {
      q_top = half;  // on the boundary: top and bottom one bus apart
      if constexpr (keep_angle) {
        q_middle = divisor<T>{spread}(x_middle);
      } else {
        x_middle = clamp_symmetric(x_middle, bus.half());
        q_middle = PerBus ? x_middle : divisor<T>{bus}(x_middle);
      }
    }
    // The scheme's zero sequence.
    bool to_top = std::is_same_v<Scheme, modulation::clamp_high>;
    if constexpr (std::is_same_v<Scheme, modulation::clamp_peak>) to_top = top + bottom >= E{};
    // Duties by rank (top, middle, bottom), handed to the phases at the end: no
    // indexed stores, which cost a round trip through memory.
    E d_top{}, d_middle{}, d_bottom{};
    if constexpr (std::is_same_v<Scheme, modulation::centred>) {
      d_top = half + q_top;
      d_middle = half + q_middle;
      d_bottom = half - q_top;
    } else {
      static_assert(std::is_same_v<Scheme, modulation::clamp_low> || std::is_same_v<Scheme, modulation::clamp_high> ||
                        std::is_same_v<Scheme, modulation::clamp_peak>,
                    "unknown modulation scheme");
      if (to_top) {
        d_top = full;
        d_middle = full - (q_top - q_middle);
        d_bottom = full - q_top * 2;
      } else {
        d_top = q_top * 2;
        d_middle = q_middle + q_top;
        d_bottom = E{};
      }
    }
    const T duty_top = clamp_duty(d_top, full).rounded();
    const T duty_middle = clamp_duty(d_middle, full).rounded();
    const T duty_bottom = clamp_duty(d_bottom, full).rounded();
    const auto phase = [&](unsigned p) { return p == o.top ? duty_top : (p == o.bottom ? duty_bottom : duty_middle); };
    out.duty = {phase(0), phase(1), phase(2)};
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
