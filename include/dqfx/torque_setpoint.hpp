// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Torque command to d/q current set-points for surface and interior permanent-magnet
/// motors, kept inside the current limit (a circle) and the voltage limit (an ellipse
/// that shrinks with speed and grows with the bus voltage), for q15, q31, float and double.
///
/// All per unit (per_unit.hpp), where the torque is simply
///   t = psi*iq + (ld - lq)*id*iq        (1.5 * pole pairs is in the torque base)
///
/// Maximum torque per ampere (MTPA): for lq > ld the current that gives a torque with the
/// least magnitude has, for each iq, the d current of the closed form of Morimoto,
/// Takeda, Hirasa and Taniguchi (IEEE Trans. Industry Applications, 1990; also Jahns,
/// Kliman and Neumann, IEEE Trans. Industry Applications, 1986):
///   id = psi / (2 (lq - ld)) - sqrt(psi^2 / (4 (lq - ld)^2) + iq^2),
/// and id = 0 for surface magnets (ld = lq). Torque to current has no closed form (a
/// quartic), so the constructor tabulates the closed form once (constexpr) against the
/// square root of the torque (32 segments, dense where the d current starts to grow), and
/// each call interpolates id and then takes iq = t / (psi + (ld - lq) id) by one division:
/// the torque is met to rounding, and the current magnitude, being minimal along the
/// torque curve, errs only by the square of the interpolation error. The table is 33
/// values of T; a call costs one square root for the table position, one for each limit
/// and up to two divisions (fixed point: integer square roots, 64-bit divisions, no libm).
///
/// Limits, for the d current in use (MTPA, or lower from field_weakening.hpp):
///   circle   id^2 + iq^2 <= imax^2
///   ellipse  (w (psi + ld id))^2 + (w lq iq)^2 <= vmax^2,  vmax = voltage_use * vdc / sqrt(3)
/// (steady state, resistance neglected; vdc/sqrt(3) is the linear range of centred space
/// vectors, Holtz, Proc. IEEE, 1994). iq is cut back to the nearer of the two and the
/// shortfall flagged; a d current whose back-EMF alone exceeds vmax leaves iq = 0.
///
/// Error bounds (tests/test_torque_setpoint.cpp, four invented motors from surface
/// magnets to a magnet-assisted reluctance motor with 2 (lq - ld) imax / psi = 19):
///   current magnitude against a brute-force search over the current angle: within 0.1%
///   plus 1 LSB (fixed point) for every type; measured for magnitudes above 0.05 per
///   unit: q15 3.0e-4 relative, q31, float and double 4.5e-5 (the table, on the
///   reluctance-dominated motor; below 2e-7 on the others);
///   torque t(id*, iq*) against the command below base speed: within 4 LSB (float,
///   double: 4 eps), measured 1.3 LSB at most;
///   q15/q31/float set-points against the double ones: within 2 LSB where no limit cuts
///   iq back and in current magnitude on the circle; on the ellipse the voltage the
///   set-point needs within 4 LSB (near the ends of the circle and the tip of the ellipse
///   iq is ill-conditioned, so the set-points agree on the limit rather than on iq).
///
/// Bad input: a torque beyond the limits is met as far as they allow (the set-points
/// land on the circle or the ellipse) and `torque_limited` is raised; a NaN or infinite
/// float input, a bus voltage <= 0, or invalid parameters (see `valid`) give zero
/// set-points and `fault`.

#include <array>
#include <cmath>
#include <cstdint>
#include <type_traits>

#include "dqfx/current_loop.hpp"
#include "dqfx/detail/estimation.hpp"
#include "dqfx/extended.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/polar.hpp"

namespace dqfx {

/// Motor and limits in per unit (plain numbers, converted once).
struct torque_setpoint_parameters {
  double ld = 0.0;             ///< d-axis inductance
  double lq = 0.0;             ///< q-axis inductance, >= ld (surface: equal; interior: larger)
  double flux = 0.0;           ///< magnet flux linkage, > 0
  double current_limit = 0.0;  ///< radius of the current circle, peak phase current
  /// Radius of the voltage ellipse as a fraction of vdc/sqrt(3); keep it below the
  /// current loop's modulation_limit so the regulators have room to act.
  double voltage_use = 0.95;

  /// Whether the set-points can be computed (otherwise every call faults).
  constexpr bool valid() const noexcept {
    // The comparisons also refuse NaN; the last two keep the internal scales below 2^7.
    return flux > 0.0 && ld > 0.0 && lq >= ld && current_limit > 0.0 && voltage_use > 0.0 &&
           voltage_use <= 1.0 && lq < 100.0 && flux + (lq - ld) * current_limit < 100.0;
  }
  /// The first value outside what a drive's per-unit system should give (see
  /// design_check): inductances, flux and current limit in [0, 1) (the current limit is a
  /// q15/q31 number; w*L*i and w*psi must stay within the voltage range at base values).
  constexpr design_check check() const noexcept {
    using detail::misfit_unless;
    using detail::within;
    return detail::first_misfit(
        detail::first_misfit(misfit_unless(within(ld, 1.0), "per-unit d inductance", ld),
                             misfit_unless(within(lq, 1.0), "per-unit q inductance", lq)),
        detail::first_misfit(misfit_unless(within(flux, 1.0), "per-unit flux", flux),
                             misfit_unless(within(current_limit, 1.0), "per-unit current limit", current_limit)));
  }
};

/// The set-point parameters of a motor given in SI, with the current limit in amperes. In
/// a constant expression, a result that `check()` refuses does not compile (the
/// diagnostic names the quantity and shows its value in thousandths).
constexpr torque_setpoint_parameters design_torque_setpoint(const per_unit_base& base, const pm_motor_data& m,
                                                            double current_limit, double voltage_use = 0.95) noexcept {
  const torque_setpoint_parameters p{base.inductance(m.ld), base.inductance(m.lq), base.flux(m.flux),
                                     base.current(current_limit), voltage_use};
  namespace n = detail::refused;
  detail::refuse_unless(detail::within(p.ld, 1.0), n::per_unit_d_inductance, p.ld);
  detail::refuse_unless(detail::within(p.lq, 1.0), n::per_unit_q_inductance, p.lq);
  detail::refuse_unless(detail::within(p.flux, 1.0), n::per_unit_flux, p.flux);
  detail::refuse_unless(detail::within(p.current_limit, 1.0), n::per_unit_current_limit, p.current_limit);
  return p;
}

/// What a call gives.
template <class T> struct current_setpoint {
  rotating<T> current{};          ///< id*, iq*
  T torque{};                     ///< torque of these currents, psi*iq + (ld - lq)*id*iq
  bool torque_limited = false;    ///< less torque than commanded: a limit held it back
  bool current_limited = false;   ///< the current circle cut iq back
  bool voltage_limited = false;   ///< the voltage ellipse cut iq back
  bool fault = false;             ///< bad input or parameters: zero set-points
};

namespace detail {

/// The torque-to-current map of MTPA, in double, for the constructor and for tests.
struct mtpa_geometry {
  double flux = 0.0, saliency = 0.0;  // psi and lq - ld, per unit

  /// Morimoto et al.'s closed form, rationalised (no cancellation for small saliency).
  constexpr double d_of_q(double iq) const noexcept {
    const double q2 = iq * iq;
    return -2.0 * saliency * q2 / (flux + sqrt_newton(flux * flux + 4.0 * saliency * saliency * q2));
  }
  /// The same closed form for the current magnitude.
  constexpr double d_of_magnitude(double i) const noexcept {
    const double i2 = i * i;
    return -2.0 * saliency * i2 / (flux + sqrt_newton(flux * flux + 8.0 * saliency * saliency * i2));
  }
  constexpr double torque(double id, double iq) const noexcept { return iq * (flux - saliency * id); }
  /// The q current of the MTPA point with torque t in [0, peak], by bisection.
  constexpr double q_of_torque(double t, double q_peak) const noexcept {
    double lo = 0.0, hi = q_peak;
    for (int i = 0; i < 64; ++i) {
      const double mid = 0.5 * (lo + hi);
      (torque(d_of_q(mid), mid) < t ? lo : hi) = mid;
    }
    return 0.5 * (lo + hi);
  }
};

/// Per-type pieces: one (or the nearest below), square root in [0, 1], the table
/// position of u in [0, 1] and the float input check.
template <class T, class = void> struct setpoint_recipe {
  static constexpr T unit() noexcept { return T{1}; }
  static T root(T x) noexcept { return std::sqrt(x); }
  template <int Bits> static constexpr void position(T u, int& k, T& fraction) noexcept {
    constexpr int last = (1 << Bits) - 1;
    const T p = u * static_cast<T>(1 << Bits);
    k = p >= static_cast<T>(last) ? last : static_cast<int>(p);
    fraction = p - static_cast<T>(k);
  }
  static constexpr bool finite(T v) noexcept { return v - v == v - v; }
};

template <class T> struct setpoint_recipe<T, std::enable_if_t<is_fixed_v<T>>> {
  using raw = typename T::raw_type;
  using uwide = std::make_unsigned_t<typename T::wide_type>;
  static constexpr int bits = T::fraction_bits;

  static constexpr T unit() noexcept { return T::max(); }  // 1 - 1 LSB
  static constexpr T root(T x) noexcept {
    const uwide r = x.raw() > 0 ? static_cast<uwide>(x.raw()) : uwide{0};
    return T::saturated(static_cast<std::int64_t>(rounded_sqrt<uwide>(r << bits)));
  }
  template <int Bits> static constexpr void position(T u, int& k, T& fraction) noexcept {
    const auto r = static_cast<std::uint32_t>(u.raw() > 0 ? u.raw() : 0);
    k = static_cast<int>(r >> (bits - Bits));
    fraction = T::from_raw(static_cast<raw>((r & ((1u << (bits - Bits)) - 1u)) << Bits));
  }
  static constexpr bool finite(T) noexcept { return true; }
};

/// A positive constant of any size below 2^8 for extended values: a precise_gain in
/// [1, 2) (or below 1) times a power of two, both exact on extended<T>.
template <class T> class wide_gain {
 public:
  constexpr wide_gain() noexcept = default;
  static constexpr wide_gain from_double(double v) noexcept {
    int times = 1;
    while (v >= 2.0 * times && times < 128) times *= 2;
    return wide_gain{precise_gain<T>::from_double(v / times), times};
  }
  friend constexpr extended<T> operator*(extended<T> x, wide_gain g) noexcept { return (x * g.mantissa_) * g.times_; }

 private:
  constexpr wide_gain(precise_gain<T> m, int t) noexcept : mantissa_{m}, times_{t} {}
  precise_gain<T> mantissa_{};
  int times_ = 1;
};

/// num / den for 0 <= num <= den, den > 0, rounded once to T (saturating at 1).
template <class T>
constexpr T quotient(extended<T> num, extended<T> den) noexcept {
  return divisor<T>{den}(num).rounded();
}

// Deliberately not constexpr: a constexpr torque_setpoint with bad parameters stops here.
inline void torque_setpoint_parameters_invalid() noexcept {}

}  // namespace detail

/// Torque command to current set-points: MTPA inside the current circle and the voltage
/// ellipse. Build it once (constexpr where possible), call it at the speed-loop rate.
template <class T>
class torque_setpoint {
  static_assert(is_number_v<T>, "dqfx::torque_setpoint supports q15, q31, float and double");
  using recipe = detail::setpoint_recipe<T>;

 public:
  /// MTPA table segments (power of two: the fixed-point index is a shift).
  static constexpr int segment_bits = 5;
  static constexpr int segments = 1 << segment_bits;

  constexpr torque_setpoint() noexcept = default;
  constexpr explicit torque_setpoint(const torque_setpoint_parameters& p) noexcept {
    if (!p.valid()) {
      detail::torque_setpoint_parameters_invalid();
      return;
    }
    valid_ = true;
    const double imax = p.current_limit;
    const double dl = p.lq - p.ld;
    const detail::mtpa_geometry mtpa{p.flux, dl};
    const double d_peak = mtpa.d_of_magnitude(imax);
    const double q_peak = detail::sqrt_newton(imax * imax - d_peak * d_peak);
    const double peak = mtpa.torque(d_peak, q_peak);
    // Internal scales, a little above the largest value, keep sums of terms inside [-1, 1).
    constexpr double margin = 1.0078125;
    const double scale_den = (p.flux + dl * imax) * margin;  // bounds psi + (lq - ld)|id|
    const double scale_flux = (p.flux + p.ld * imax) * margin;  // bounds |psi + ld id|

    current_limit_ = from_double<T>(imax);
    peak_torque_ = from_double<T>(peak);
    per_peak_torque_ = gain<T>::from_double(1.0 / peak);
    den_flux_ = from_double<T>(p.flux / scale_den);
    den_saliency_ = gain<T>::from_double(dl / scale_den);
    den_scale_ = gain<T>::from_double(scale_den);
    den_scale_wide_ = detail::wide_gain<T>::from_double(scale_den);
    flux_ = from_double<T>(p.flux / scale_flux);
    flux_ld_ = gain<T>::from_double(p.ld / scale_flux);
    flux_scale_ = gain<T>::from_double(scale_flux);
    lq_ = gain<T>::from_double(p.lq);
    lq_wide_ = detail::wide_gain<T>::from_double(p.lq);
    voltage_radius_ = gain<T>::from_double(p.voltage_use * 0.57735026918962576451);  // 1/sqrt(3)

    salient_ = dl > 0.0;
    if (!salient_) return;  // surface magnets: id = 0, table of zeros
    // h(u) = id / u^2 at the MTPA point of torque u^2 * peak; h(0) = 0 (id grows as t^2).
    std::array<double, segments + 1> h{};
    double largest = 0.0;
    for (int k = 1; k <= segments; ++k) {
      const double u = static_cast<double>(k) / segments;
      const double t = u * u * peak;
      const double id = k == segments ? d_peak : mtpa.d_of_q(mtpa.q_of_torque(t, q_peak));
      h[static_cast<std::size_t>(k)] = -id / (u * u);
      largest = h[static_cast<std::size_t>(k)] > largest ? h[static_cast<std::size_t>(k)] : largest;
    }
    // Stored as h / (largest * margin) in [0, 1).
    table_scale_ = gain<T>::from_double(largest * margin);
    for (std::size_t k = 0; k <= segments; ++k) table_[k] = from_double<T>(h[k] / (largest * margin));
  }

  /// The MTPA set-points for `torque` (electrical speed and bus voltage per unit).
  current_setpoint<T> operator()(T torque, T speed, T bus_voltage) const noexcept {
    return at_d_current(torque, mtpa_d_current(torque), speed, bus_voltage);
  }

  /// The d current of MTPA for |torque| (limited to the peak torque): <= 0.
  T mtpa_d_current(T torque) const noexcept {
    if (!salient_ || !recipe::finite(torque)) return T{};
    const T a = magnitude_of(torque);
    const T r = a < peak_torque_ ? a * per_peak_torque_ : recipe::unit();  // t / peak = u^2, in [0, 1]
    int k = 0;
    T f{};
    recipe::template position<segment_bits>(recipe::root(r), k, f);
    const auto at = static_cast<std::size_t>(k);
    const T h = table_[at] + f * (table_[at + 1] - table_[at]);
    return -((r * h) * table_scale_);
  }

  /// Set-points for `torque` with the d current given (field weakening passes the MTPA
  /// d current plus its shift): id is clamped into [-imax, 0], iq gives the torque at
  /// that id, then both limits cut iq back if they must.
  current_setpoint<T> at_d_current(T torque, T d_current, T speed, T bus_voltage) const noexcept {
    current_setpoint<T> out{};
    if (!valid_ || !recipe::finite(torque) || !recipe::finite(d_current) || !recipe::finite(speed) ||
        !recipe::finite(bus_voltage) || !(bus_voltage > T{})) {
      out.fault = true;
      return out;
    }
    const T a = magnitude_of(torque);
    const T id = d_current > T{} ? T{} : (d_current < -current_limit_ ? -current_limit_ : d_current);
    const T id_size = -id;

    // iq for the torque: t / (psi + (lq - ld)|id|), the divisor scaled by 1/scale_den in T
    // and scaled back in extended precision, so the torque itself is not rounded.
    const T den = den_flux_ + id_size * den_saliency_;
    T iq = detail::quotient<T>(a, extended<T>{den} * den_scale_wide_);

    // Current circle.
    const T circle = detail::loop_recipe<T>::room(current_limit_, id_size);
    if (iq > circle) {
      iq = circle;
      out.current_limited = true;
    }

    // Voltage ellipse: the q voltage w (psi + ld id) is the back-EMF, the d voltage
    // w lq iq must fit in what is left of the circle of radius vmax.
    const T w = abs(speed);
    const T vmax = bus_voltage * voltage_radius_;
    const T emf = abs((w * (flux_ + id * flux_ld_)) * flux_scale_);
    if (emf >= vmax) {
      if (iq > T{}) out.voltage_limited = true;
      iq = T{};
    } else {
      const T room = detail::loop_recipe<T>::room(vmax, emf);
      if ((w * iq) * lq_ > room) {
        const T fits = detail::quotient<T>(room, extended<T>{w} * lq_wide_);  // room / (w lq) < iq
        iq = fits < iq ? fits : iq;
        out.voltage_limited = true;
      }
    }

    const bool negative = torque < T{};
    out.current = {id, negative ? -iq : iq};
    const T delivered = (iq * den) * den_scale_;
    out.torque = negative ? -delivered : delivered;
    out.torque_limited = out.current_limited || out.voltage_limited || abs(torque) > peak_torque_;
    return out;
  }

  /// MTPA torque at the current limit (saturated to T's range).
  constexpr T peak_torque() const noexcept { return peak_torque_; }
  constexpr T current_limit() const noexcept { return current_limit_; }
  constexpr bool valid() const noexcept { return valid_; }

 private:
  /// |t| limited to the peak torque.
  constexpr T magnitude_of(T torque) const noexcept {
    const T a = abs(torque);
    return a > peak_torque_ ? peak_torque_ : a;
  }

  std::array<T, segments + 1> table_{};
  gain<T> table_scale_{};
  T current_limit_{};
  T peak_torque_{};
  gain<T> per_peak_torque_{};
  T den_flux_{};
  gain<T> den_saliency_{};
  gain<T> den_scale_{};
  detail::wide_gain<T> den_scale_wide_{};
  T flux_{};
  gain<T> flux_ld_{};
  gain<T> flux_scale_{};
  gain<T> lq_{};
  detail::wide_gain<T> lq_wide_{};
  gain<T> voltage_radius_{};
  bool salient_ = false;
  bool valid_ = false;
};

}  // namespace dqfx
