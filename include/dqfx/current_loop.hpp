// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The field-oriented current loop, one call per PWM period, for q15, q31, float and
/// double (one code path; per-type recipes only for a square root and a division).
///
///   phase currents --Clarke--> alpha/beta --Park--> id, iq
///   ed = id* - id, eq = iq* - iq
///   vd = PI_d(ed) - w*Lq*iq                 (cross-coupling feed-forward)
///   vq = PI_q(eq) + w*Ld*id + w*psi
///   circular limit, d first: |vd| <= r, |vq| <= sqrt(r^2 - vd^2), r = m * vdc / sqrt(3)
///   the limited vd, vq go back to the regulators' anti-windup
///   vd, vq --inverse Park--> alpha/beta --/vdc--> svm --> three duties in [0, 1]
///
/// All quantities are per unit (see per_unit.hpp); speed is the electrical speed, and
/// the per-unit inductances and flux make w*L*i and w*psi per-unit voltages. The
/// feed-forward uses the measured currents.
///
/// Error bounds against a textbook double loop given the same inputs (sine and cosine
/// included), over 20,000 periods of a closed-loop scenario with 2,000 voltage-limited
/// periods (tests/test_current_loop.cpp): the limited d/q voltage within 4 LSB (q15),
/// 128 LSB (q31), 4 eps (float), 16 eps (double); the duties, which also carry the
/// division by the bus voltage (0.36 pu at its lowest there), within 16 LSB, 512 LSB,
/// 8 eps, 32 eps. The limited vector never leaves the circle of radius
/// modulation_limit * vdc / sqrt(3) (fixed point: checked on exact integer squares).
///
/// Bad input: a NaN or infinite float input, or a bus voltage <= 0 (any type), leaves
/// both regulators untouched and gives zero voltage, 50% duties and `fault`.

#include <cmath>
#include <cstdint>
#include <type_traits>

#include "dqfx/detail/square_root.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/gain_design.hpp"
#include "dqfx/number.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/svm.hpp"
#include "dqfx/transforms.hpp"

namespace dqfx {

/// Loop settings in per unit (plain numbers, converted once).
struct current_loop_parameters {
  pi_parameters d{};         ///< d-axis regulator (error in current, output in voltage)
  pi_parameters q{};         ///< q-axis regulator
  double ld = 0.0;           ///< d-axis inductance, per unit
  double lq = 0.0;           ///< q-axis inductance, per unit
  double flux = 0.0;         ///< permanent-magnet flux linkage, per unit
  /// Radius of the voltage limit as a fraction of the largest linear-range vector
  /// vdc/sqrt(3) of centred space-vector modulation; clamped into [0, 1].
  double modulation_limit = 1.0;
};

/// Motor data in SI units, for `design_current_loop`.
struct pm_motor_data {
  double resistance = 0.0;  ///< ohm, phase
  double ld = 0.0;          ///< H
  double lq = 0.0;          ///< H
  double flux = 0.0;        ///< Wb, peak phase flux linkage of the magnet
};

/// The loop for a motor: IMC current regulators (gain_design.hpp) on each axis with
/// its own inductance, back-calculation tracking gain Ts/Ti, everything in per unit.
constexpr current_loop_parameters design_current_loop(const per_unit_base& base, const pm_motor_data& m,
                                                      double bandwidth, double sample_time) noexcept {
  current_loop_parameters p{};
  p.d = base.current_regulator(imc_current_loop(m.resistance, m.ld, bandwidth, sample_time));
  p.q = base.current_regulator(imc_current_loop(m.resistance, m.lq, bandwidth, sample_time));
  p.ld = base.inductance(m.ld);
  p.lq = base.inductance(m.lq);
  p.flux = base.flux(m.flux);
  return p;
}

/// What the loop reads each period (per unit).
template <class T> struct current_loop_input {
  phases<T> current{};     ///< measured phase currents
  sincos<T> rotor{};       ///< sine and cosine of the electrical angle
  T speed{};               ///< electrical speed
  rotating<T> setpoint{};  ///< id*, iq*
  T bus_voltage{};         ///< DC-bus voltage
};

/// What the loop writes each period.
template <class T> struct current_loop_output {
  phases<T> duty{};                ///< in [0, 1]; 50% on all phases after a fault
  rotating<T> voltage{};           ///< the limited d/q voltage applied
  stationary<T> voltage_stationary{};
  rotating<T> current{};           ///< measured id, iq
  T voltage_limit{};               ///< radius of the circular limit this period
  std::uint8_t sector = 0;         ///< 60-degree sector of the voltage, 1..6 (svm); 0 on fault
  bool voltage_limited = false;    ///< the regulators asked for more than the circle
  bool fault = false;              ///< bad input: nothing was regulated this period
};

namespace detail {

/// The per-type parts of the loop: the room left for vq in the circle (rounded down so
/// the limited vector never leaves it) and the input check.
template <class T, class = void> struct loop_recipe {
  static T room(T radius, T d) noexcept {
    constexpr T shrink = T{1} - std::numeric_limits<T>::epsilon();
    // The squares of a radius far from 1 leave the normal range (float: below 2^-50 or
    // from 2^60 on) and lose the circle: scale by the radius there instead.
    constexpr bool single = std::is_same_v<T, float>;
    constexpr T small = single ? T(0x1p-50) : T(0x1p-400), big = single ? T(0x1p60) : T(0x1p500);
    if (!(radius > small && radius < big)) {
      if (!(radius > T{0})) return T{0};
      const T t = d / radius;
      return radius * std::sqrt((T{1} - t) * (T{1} + t)) * shrink;
    }
    const T r2 = radius * radius - d * d;
    return r2 > T{0} ? std::sqrt(r2) * shrink : T{0};
  }
  static constexpr bool finite(T v) noexcept { return v - v == v - v; }
};

template <class T> struct loop_recipe<T, std::enable_if_t<is_fixed_v<T>>> {
  using wide = typename T::wide_type;
  using uwide = std::make_unsigned_t<wide>;
  static constexpr int bits = T::fraction_bits;

  /// radius >= |d| >= 0 holds here, so the difference of squares is in [0, 2^(2*bits)].
  static constexpr T room(T radius, T d) noexcept {
    const uwide r = static_cast<uwide>(radius.raw());
    const uwide m = static_cast<uwide>(d.raw() < 0 ? -wide{d.raw()} : wide{d.raw()});
    return T::saturated(static_cast<wide>(floor_sqrt(static_cast<uwide>(r * r - m * m))));
  }
  static constexpr bool finite(T) noexcept { return true; }
};

}  // namespace detail

/// The current loop: two PI regulators (anti-windup policy `AntiWindup`), the motor's
/// feed-forward constants and the voltage-limit radius; `Scheme` is the modulation
/// (svm.hpp). The limit radius suits the schemes whose linear range is vdc/sqrt(3)
/// (all but `modulation::sinusoidal`, which needs modulation_limit <= sqrt(3)/2).
template <class T, class AntiWindup = back_calculation, class Scheme = modulation::centred>
class current_loop {
  static_assert(is_number_v<T>, "dqfx::current_loop supports q15, q31, float and double");
  using recipe = detail::loop_recipe<T>;

 public:
  using regulator = pi_regulator<T, AntiWindup>;

  constexpr current_loop() noexcept = default;
  constexpr explicit current_loop(const current_loop_parameters& p) noexcept
      : d_{p.d},
        q_{p.q},
        ld_{gain<T>::from_double(p.ld)},
        lq_{gain<T>::from_double(p.lq)},
        flux_{gain<T>::from_double(p.flux)},
        radius_{radius_of(p.modulation_limit)} {}

  /// One PWM period. Not constexpr for float/double (std::sqrt). Fixed point: no
  /// libm; one reciprocal (in svm, Newton steps in integer multiplies) and one integer
  /// square root per call.
  current_loop_output<T> step(const current_loop_input<T>& in) noexcept {
    if (!valid(in)) {
      current_loop_output<T> out{};
      const T half = from_double<T>(0.5);
      out.duty = {half, half, half};
      out.fault = true;
      return out;
    }
    const rotating<T> current = park(clarke(in.current), in.rotor);
    const T id = current.d, iq = current.q, w = in.speed;

    const T feed_d = -((w * iq) * lq_);
    const T feed_q = (w * id) * ld_ + w * flux_;
    const pi_proposal<T> pd = d_.propose_from(in.setpoint.d, id, feed_d);
    const pi_proposal<T> pq = q_.propose_from(in.setpoint.q, iq, feed_q);

    // Circular limit, d axis first: the d voltage sets the flux and must not be starved.
    const T r = in.bus_voltage * radius_;
    const T vd = clamp(pd.output, -r, r);
    const T room = recipe::room(r, vd);
    const T vq = clamp(pq.output, -room, room);
    d_.commit(pd, vd);
    q_.commit(pq, vq);

    // Built whole at the end: no zero fill of a result that is overwritten anyway.
    const rotating<T> voltage{vd, vq};
    const stationary<T> voltage_stationary = inverse_park(voltage, in.rotor);
    const modulation_result<T> m = svm<Scheme>(voltage_stationary, in.bus_voltage);
    return {m.duty, voltage, voltage_stationary, current, r, m.sector, vd != pd.output || vq != pq.output, false};
  }

  /// Clears both integrators (e.g. before enabling the bridge).
  constexpr void reset() noexcept {
    d_.reset();
    q_.reset();
  }
  constexpr regulator& d_regulator() noexcept { return d_; }
  constexpr regulator& q_regulator() noexcept { return q_; }
  constexpr const regulator& d_regulator() const noexcept { return d_; }
  constexpr const regulator& q_regulator() const noexcept { return q_; }

 private:
  static constexpr gain<T> radius_of(double modulation_limit) noexcept {
    const double m = modulation_limit > 1.0 ? 1.0 : (modulation_limit > 0.0 ? modulation_limit : 0.0);
    return gain<T>::from_double(m * 0.57735026918962576451);  // 1/sqrt(3)
  }
  static constexpr T clamp(T v, T lo, T hi) noexcept { return v > hi ? hi : (v < lo ? lo : v); }
  static constexpr bool valid(const current_loop_input<T>& in) noexcept {
    const bool finite = recipe::finite(in.current.a) && recipe::finite(in.current.b) &&
                        recipe::finite(in.current.c) && recipe::finite(in.rotor.sin) &&
                        recipe::finite(in.rotor.cos) && recipe::finite(in.speed) &&
                        recipe::finite(in.setpoint.d) && recipe::finite(in.setpoint.q) &&
                        recipe::finite(in.bus_voltage);
    return finite && in.bus_voltage > T{};
  }

  regulator d_{};
  regulator q_{};
  gain<T> ld_{};
  gain<T> lq_{};
  gain<T> flux_{};
  gain<T> radius_{};
};

}  // namespace dqfx
