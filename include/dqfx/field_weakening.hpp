// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Field weakening above base speed by voltage feedback, with the maximum-torque-per-volt
/// (MTPV) limit for motors whose ellipse centre lies inside the current circle, for q15,
/// q31, float and double.
///
/// Voltage feedback (S.-H. Kim and S.-K. Sul, "Speed control of interior permanent magnet
/// synchronous motor drive for the flux weakening operation", IEEE Trans. Industry
/// Applications, 1997; bibliographic details recalled from memory): an integrator on the
/// error between a reference voltage and the magnitude of the voltage the current loop
/// applied drives a shift of the d current below its MTPA value,
///   shift += gain * (reference * vlimit - |v|),   lower <= shift <= 0,
/// so below base speed, where |v| stays under the reference, the shift rests at 0 (MTPA)
/// and above it the d current goes just as negative as the bus voltage needs. The torque
/// set-point is then met at the shifted d current (torque_setpoint.hpp) as far as the
/// current circle and the voltage ellipse allow. No motor parameter enters the
/// feedback, so the R drop and parameter errors are corrected by the measured voltage.
///
/// Lower limit of the shift: the d current stays on or above
///   - the current circle, id >= -imax, and
///   - the MTPV curve, where a lower id would lower the torque at the same voltage (and
///     the voltage feedback would turn positive). On it the d flux is lq times the MTPA
///     d current of the same q current (from the Lagrange condition for maximum torque on
///     the flux ellipse; with Morimoto et al.'s MTPA closed form):
///       ld id + psi = lq * id_mtpa(iq),  id_mtpa(iq) = (psi - sqrt(psi^2 + (2 (lq - ld) iq)^2)) / (2 (lq - ld))
///     (surface magnets: id = -psi/ld, the ellipse centre). It matters only when
///     psi/ld < imax; the q current of the previous call is used. At high speed the
///     MTPV d current can lie above the MTPA d current of a torque beyond reach: the
///     d current is then raised to it.
///
/// Gain: the loop gain per call is about gain * w * ld (d|v|/did), largest at top speed;
/// `design_field_weakening` sets it to bandwidth * call period there.
///
/// Error bounds (tests/test_field_weakening.cpp): the shift is an integrator
/// (pi_regulator with kp = 0 and back-calculation kt = 1, so it never winds beyond its
/// limits); the set-points then carry the bounds of torque_setpoint. Against brute-force
/// searches: the MTPV d current within 3 LSB (q15), 1.5e-8 (q31, double: the search's
/// own resolution) and 1 eps (float); in steady state beyond reach, the torque is the
/// largest the circle and the voltage allow within 2.1e-4 (q15) and 1e-6 (the others);
/// a torque within reach is met within 4 LSB (measured 0.7) at |v| = reference * limit.
///
/// Bad input: a NaN or infinite float input or a bus voltage <= 0 gives zero set-points
/// and `fault` and leaves the integrator unchanged.

#include "dqfx/current_loop.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/per_unit.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/torque_setpoint.hpp"

namespace dqfx {

/// Settings of the voltage feedback (per unit).
struct field_weakening_parameters {
  /// Integrator gain per call: change of the d current per unit of voltage error.
  double gain = 0.0;
  /// |v| is held at this fraction of the current loop's voltage limit (below 1, so the
  /// current regulators keep room to act).
  double reference = 0.9;

  /// The first value that does not fit (see design_check): a gain that is negative, NaN or
  /// at least 2^30, or a reference outside (0, 1].
  constexpr design_check check() const noexcept {
    return detail::first_misfit(
        detail::misfit_unless(detail::within(gain, 1073741824.0), "field-weakening gain", gain),
        detail::misfit_unless(reference > 0.0 && reference <= 1.0, "field-weakening reference", reference));
  }
};

/// The voltage feedback for a motor (SI), called every `call_period` seconds, with the
/// loop crossing `bandwidth` (rad/s) at `top_speed` (electrical rad/s). A gain beyond the
/// fixed-point range (or NaN: a zero top speed or inductance) does not compile in a
/// constant expression; at run time `check()` reports it.
constexpr field_weakening_parameters design_field_weakening(const per_unit_base& base, const pm_motor_data& m,
                                                            double top_speed, double bandwidth, double call_period,
                                                            double reference = 0.9) noexcept {
  const field_weakening_parameters p{bandwidth * call_period / (base.speed(top_speed) * base.inductance(m.ld)),
                                     reference};
  detail::refuse_unless(detail::within(p.gain, 1073741824.0), detail::refused::field_weakening_gain, p.gain);
  return p;
}

/// Torque command to current set-points above and below base speed: MTPA while the
/// voltage allows it, field weakening by voltage feedback beyond, MTPV and the current
/// circle as the lower limit of the d current.
template <class T>
class field_weakening {
  static_assert(is_number_v<T>, "dqfx::field_weakening supports q15, q31, float and double");
  using recipe = detail::setpoint_recipe<T>;

 public:
  constexpr field_weakening() noexcept = default;
  constexpr field_weakening(const torque_setpoint_parameters& s, const field_weakening_parameters& f) noexcept
      : setpoint_{s},
        shift_{pi_parameters{0.0, f.gain, 1.0, -1.0, 0.0}},
        reference_{gain<T>::from_double(f.reference > 1.0 ? 1.0 : (f.reference > 0.0 ? f.reference : 0.0))} {
    if (!s.valid()) return;
    const double imax = s.current_limit, dl = s.lq - s.ld;
    current_limit_ = from_double<T>(imax);
    mtpv_ = s.flux / s.ld < imax;
    if (!mtpv_) return;
    constexpr double margin = 1.0078125;
    // Scale of the floor: |lq id_mtpa - psi| / ld <= (lq imax + psi) / ld.
    const double floor_scale = (s.lq * imax + s.flux) / s.ld * margin;
    floor_scale_ = gain<T>::from_double(floor_scale);
    floor_flux_ = from_double<T>(s.flux / s.ld / floor_scale);
    floor_lowest_ = from_double<T>(-imax / floor_scale);
    salient_ = dl > 0.0;
    if (!salient_) return;
    // id_mtpa(iq) = (psi - |(psi, 2 dl iq)|) / (2 dl), the vector scaled into the unit circle.
    const double vector_scale = detail::sqrt_newton(s.flux * s.flux + 4.0 * dl * dl * imax * imax) * margin;
    mtpa_flux_ = from_double<T>(s.flux / vector_scale);
    mtpa_q_ = gain<T>::from_double(2.0 * dl / vector_scale);
    mtpa_scale_ = gain<T>::from_double(vector_scale / (2.0 * dl));
    floor_lq_ = gain<T>::from_double(s.lq / s.ld / floor_scale);
  }

  /// One call: the torque command, electrical speed and bus voltage, and the d/q voltage
  /// the current loop applied last period with the radius of its limit (e.g. the
  /// `voltage` and `voltage_limit` of current_loop_output).
  current_setpoint<T> step(T torque, T speed, T bus_voltage, rotating<T> applied_voltage,
                           T voltage_limit) noexcept {
    if (!setpoint_.valid() || !recipe::finite(torque) || !recipe::finite(speed) || !recipe::finite(bus_voltage) ||
        !recipe::finite(applied_voltage.d) || !recipe::finite(applied_voltage.q) ||
        !recipe::finite(voltage_limit) || !(bus_voltage > T{})) {
      current_setpoint<T> out{};
      out.fault = true;
      return out;
    }
    const T mtpa = setpoint_.mtpa_d_current(torque);
    const T floor = mtpv_floor(last_q_);
    const T lowest = floor - mtpa;
    shift_.set_limits(lowest < T{} ? lowest : T{}, T{});
    const T used = magnitude(stationary<T>{applied_voltage.d, applied_voltage.q});
    const pi_proposal<T> p = shift_.propose_from(voltage_limit * reference_, used, T{});
    shift_.commit(p, p.output);
    shift_value_ = p.output;
    // At high speed the MTPV d current can lie above the MTPA one of a torque beyond reach.
    const T id = mtpa + p.output;
    const current_setpoint<T> out = setpoint_.at_d_current(torque, id < floor ? floor : id, speed, bus_voltage);
    last_q_ = abs(out.current.q);
    return out;
  }

  /// The lowest d current for a q current of magnitude `q`: the MTPV curve where it lies
  /// inside the current circle, else -imax.
  T mtpv_floor(T q) const noexcept {
    if (!mtpv_) return -current_limit_;
    T scaled = -floor_flux_;  // (lq id_mtpa - psi) / ld, scaled
    if (salient_) {
      const T vector = magnitude(stationary<T>{mtpa_flux_, abs(q) * mtpa_q_});
      const T mtpa = (mtpa_flux_ - vector) * mtpa_scale_;
      scaled = mtpa * floor_lq_ - floor_flux_;
    }
    return scaled < floor_lowest_ ? -current_limit_ : scaled * floor_scale_;
  }

  /// The present shift of the d current below MTPA (<= 0).
  constexpr T d_shift() const noexcept { return shift_value_; }
  constexpr void reset() noexcept {
    shift_.reset();
    shift_value_ = T{};
    last_q_ = T{};
  }
  constexpr const torque_setpoint<T>& setpoints() const noexcept { return setpoint_; }
  /// Whether the MTPV curve can limit the d current (psi / ld < imax).
  constexpr bool mtpv_applies() const noexcept { return mtpv_; }

 private:
  torque_setpoint<T> setpoint_{};
  pi_regulator<T, back_calculation> shift_{};
  gain<T> reference_{};
  T current_limit_{};
  T shift_value_{};
  T last_q_{};
  bool mtpv_ = false;
  bool salient_ = false;
  gain<T> floor_scale_{};
  T floor_flux_{};
  T floor_lowest_{};
  gain<T> floor_lq_{};
  T mtpa_flux_{};
  gain<T> mtpa_q_{};
  gain<T> mtpa_scale_{};
};

}  // namespace dqfx
