// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The field-oriented current loop, one call per PWM period, for q15, q31, float and
/// double (one code path; per-type recipes only for the limit's square root and the
/// checks).
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
/// both regulators untouched and gives zero voltage, 50% duties and `fault`. The check
/// costs little: the step checks the bus once and, before it stores anything, that the
/// sums and new integrators are finite; only when not does it run the period
/// again checking every input and step (see `run`).

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

  /// The first value the loop cannot work with: a per-unit inductance or flux outside
  /// [0, 1) (w*L*i or w*psi at base speed and current beyond the voltage range: choose a
  /// larger base voltage or a smaller base speed or current), or a regulator gain that is
  /// negative, NaN or at least 2^30 (the fixed-point gain range).
  constexpr design_check check() const noexcept {
    using detail::misfit_unless;
    using detail::within;
    constexpr double gain_range = 1073741824.0;
    return detail::first_misfit(
        detail::first_misfit(
            detail::first_misfit(misfit_unless(within(ld, 1.0), "per-unit d inductance", ld),
                                 misfit_unless(within(lq, 1.0), "per-unit q inductance", lq)),
            detail::first_misfit(misfit_unless(within(flux, 1.0), "per-unit flux", flux),
                                 misfit_unless(within(d.kp, gain_range), "d regulator kp", d.kp))),
        detail::first_misfit(
            detail::first_misfit(misfit_unless(within(d.ki, gain_range), "d regulator ki", d.ki),
                                 misfit_unless(within(q.kp, gain_range), "q regulator kp", q.kp)),
            misfit_unless(within(q.ki, gain_range), "q regulator ki", q.ki)));
  }
};

/// Motor data in SI units, for `design_current_loop`.
struct pm_motor_data {
  double resistance = 0.0;  ///< ohm, phase
  double ld = 0.0;          ///< H
  double lq = 0.0;          ///< H
  double flux = 0.0;        ///< Wb, peak phase flux linkage of the magnet
};

/// The loop for a motor: IMC current regulators (gain_design.hpp) on each axis with
/// its own inductance, back-calculation tracking gain Ts/Ti, everything in per unit. In a
/// constant expression, a result that `check()` refuses does not compile; the diagnostic
/// names the quantity and shows its value in thousandths.
constexpr current_loop_parameters design_current_loop(const per_unit_base& base, const pm_motor_data& m,
                                                      double bandwidth, double sample_time) noexcept {
  current_loop_parameters p{};
  p.d = base.current_regulator(imc_current_loop(m.resistance, m.ld, bandwidth, sample_time));
  p.q = base.current_regulator(imc_current_loop(m.resistance, m.lq, bandwidth, sample_time));
  p.ld = base.inductance(m.ld);
  p.lq = base.inductance(m.lq);
  p.flux = base.flux(m.flux);
  namespace n = detail::refused;
  constexpr double gain_range = 1073741824.0;
  detail::refuse_unless(detail::within(p.ld, 1.0), n::per_unit_d_inductance, p.ld);
  detail::refuse_unless(detail::within(p.lq, 1.0), n::per_unit_q_inductance, p.lq);
  detail::refuse_unless(detail::within(p.flux, 1.0), n::per_unit_flux, p.flux);
  detail::refuse_unless(detail::within(p.d.kp, gain_range) && detail::within(p.q.kp, gain_range),
                        n::regulator_kp, p.d.kp > p.q.kp ? p.d.kp : p.q.kp);
  detail::refuse_unless(detail::within(p.d.ki, gain_range) && detail::within(p.q.ki, gain_range),
                        n::regulator_ki, p.d.ki > p.q.ki ? p.d.ki : p.q.ki);
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

/// The per-type parts of the loop: the limit of vq in the circle (the room rounded down
/// so that the limited vector never leaves it), and the checks.
template <class T, class = void> struct loop_recipe {
  /// q clamped to +/-sqrt(radius^2 - d^2), for |d| <= radius. `AnyRadius`: also radii
  /// whose squares leave the normal range (float: below 2^-50 or from 2^60 on), scaled
  /// by the radius there; otherwise the caller has checked `usual`.
  template <bool AnyRadius>
  static T limit(T radius, T d, T q) noexcept {
    const T r = AnyRadius ? room(radius, d) : usual_room(radius, d);
    return q > r ? r : (q < -r ? -r : q);
  }
  /// A radius whose square is a normal number: the fast path (which also implies a
  /// positive, finite bus voltage with a usable reciprocal).
  static constexpr bool usual(T radius, T) noexcept { return radius > small && radius < big; }
  /// All values finite: x - x is zero for finite x, NaN otherwise, and a NaN term makes
  /// the sum NaN (one comparison for all of them; no libm).
  template <class... V>
  static constexpr bool finite(V... v) noexcept {
    return ((v - v) + ...) == T{0};
  }

 private:
  static constexpr bool single = std::is_same_v<T, float>;
  static constexpr T small = single ? T(0x1p-50) : T(0x1p-400), big = single ? T(0x1p60) : T(0x1p500);
  static constexpr T shrink = T{1} - std::numeric_limits<T>::epsilon();

  static T usual_room(T radius, T d) noexcept {
    const T r2 = radius * radius - d * d;
    return r2 > T{0} ? std::sqrt(r2) * shrink : T{0};
  }
 public:
  /// sqrt(radius^2 - d^2) rounded down, for any radius (also field_weakening.hpp).
  static T room(T radius, T d) noexcept {
    if (usual(radius, d)) return usual_room(radius, d);
    if (!(radius > T{0})) return T{0};
    const T t = d / radius;
    return radius * std::sqrt((T{1} - t) * (T{1} + t)) * shrink;
  }
};

template <class T> struct loop_recipe<T, std::enable_if_t<is_fixed_v<T>>> {
  using wide = typename T::wide_type;
  using uwide = std::make_unsigned_t<wide>;

  /// radius >= |d| >= 0 holds here, so the difference of squares is in [0, 2^(2*bits)].
  /// The square root only when q is outside (|q| <= floor(sqrt(n)) iff q^2 <= n).
  template <bool>
  static constexpr T limit(T radius, T d, T q) noexcept {
    const uwide room2 = square(radius) - square(d);
    if (square(q) <= room2) return q;
    const T r = T::saturated(static_cast<wide>(floor_sqrt(room2)));
    return q.raw() > 0 ? r : -r;
  }
  /// floor(sqrt(radius^2 - d^2)) (also field_weakening.hpp).
  static constexpr T room(T radius, T d) noexcept {
    return T::saturated(static_cast<wide>(floor_sqrt(static_cast<uwide>(square(radius) - square(d)))));
  }
  static constexpr bool usual(T, T bus) noexcept { return bus > T{}; }
  template <class... V>
  static constexpr bool finite(V...) noexcept {
    return true;
  }

 private:
  static constexpr uwide square(T v) noexcept {
    const uwide m = static_cast<uwide>(v.raw() < 0 ? -wide{v.raw()} : wide{v.raw()});
    return m * m;
  }
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
  /// libm; one reciprocal (in svm, integer multiplies) and, when the voltage is
  /// limited, one integer square root per call.
  current_loop_output<T> step(const current_loop_input<T>& in) noexcept { return run<false>(in); }

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

  /// The period, on one of two paths with the same arithmetic. The fast path (`Careful`
  /// false) checks once: a usual bus voltage first, then that the sums and new
  /// integrators are finite (NaN and infinities propagate into them from any input)
  /// before it stores anything; otherwise it starts again on the careful path, which
  /// checks every input and step as pi_regulator and svm do on their own and defines
  /// what bad input gives. Fixed point has nothing to check beyond the bus voltage.
  template <bool Careful>
  current_loop_output<T> run(const current_loop_input<T>& in) noexcept {
    using access = detail::pi_internals;
    const T r = in.bus_voltage * radius_;
    if constexpr (Careful) {
      if (!valid(in)) return faulted();
    } else if (!recipe::usual(r, in.bus_voltage)) {
      // Fixed point: the bus voltage is all there is to check.
      if constexpr (is_fixed_v<T>) {
        return faulted();
      } else {
        return run<true>(in);
      }
    }
    const rotating<T> current = park(clarke(in.current), in.rotor);
    const T id = current.d, iq = current.q, w = in.speed;

    const T feed_d = -((w * iq) * lq_);
    const T feed_q = (w * id) * ld_ + w * flux_;
    const pi_proposal<T> pd = Careful ? d_.propose_from(in.setpoint.d, id, feed_d)
                                      : access::propose(d_, in.setpoint.d, id, feed_d);
    const pi_proposal<T> pq = Careful ? q_.propose_from(in.setpoint.q, iq, feed_q)
                                      : access::propose(q_, in.setpoint.q, iq, feed_q);

    // Circular limit, d axis first: the d voltage sets the flux and must not be starved.
    const T vd = clamp(pd.output, -r, r);
    const T vq = recipe::template limit<Careful>(r, vd, pq.output);
    if constexpr (Careful) {
      d_.commit(pd, vd);
      q_.commit(pq, vq);
    } else {
      const auto xd = access::next_integral(d_, pd, vd), xq = access::next_integral(q_, pq, vq);
      // A non-finite error makes its sum non-finite too (kp*e is infinite or NaN).
      if (!recipe::finite(pd.sum, pq.sum, xd, xq)) return run<true>(in);
      access::store(d_, xd);
      access::store(q_, xq);
    }

    // Built whole at the end: no zero fill of a result that is overwritten anyway.
    const rotating<T> voltage{vd, vq};
    const stationary<T> voltage_stationary = inverse_park(voltage, in.rotor);
    // The fast path has checked what svm checks: a usable bus and a finite command.
    const modulation_result<T> m =
        Careful ? svm<Scheme>(voltage_stationary, in.bus_voltage)
                : detail::modulate<Scheme, overmodulation::keep_angle, false>(voltage_stationary,
                                                                               extended<T>{in.bus_voltage});
    return {m.duty, voltage, voltage_stationary, current, r, m.sector, vd != pd.output || vq != pq.output, false};
  }
  static constexpr current_loop_output<T> faulted() noexcept {
    current_loop_output<T> out{};
    const T half = from_double<T>(0.5);
    out.duty = {half, half, half};
    out.fault = true;
    return out;
  }
  static constexpr bool valid(const current_loop_input<T>& in) noexcept {
    const bool finite = recipe::finite(in.current.a, in.current.b, in.current.c, in.rotor.sin, in.rotor.cos,
                                       in.speed, in.setpoint.d, in.setpoint.q, in.bus_voltage);
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
