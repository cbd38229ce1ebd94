// SPDX-License-Identifier: MIT
// The bad-input policy, one test case per policy (the policy text is in docs/bad-input.md;
// each case name starts with the policy's stable identifier, e.g. `svm-non-finite:`, and
// the docs.bad-input-ids test checks that the document and these cases name the same
// identifiers). Each case feeds the bad input its policy names to every kernel it concerns
// and checks the defined answer. Policies whose answer is a compile-time error are proven
// by the cases in tests/compile_fail/ named beside them.

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>

#include "dqfx/angle.hpp"
#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/hall.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/pwm.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/svm.hpp"
#include "dqfx/tracking_pll.hpp"
#include "dqfx/transforms.hpp"

using dqfx::q15;
using dqfx::q31;

namespace {

template <class T> constexpr T nan_of() { return std::numeric_limits<T>::quiet_NaN(); }
template <class T> constexpr T inf_of() { return std::numeric_limits<T>::infinity(); }
constexpr double nan_double = std::numeric_limits<double>::quiet_NaN();
constexpr double inf_double = std::numeric_limits<double>::infinity();

template <class T> T half() { return dqfx::from_double<T>(0.5); }

template <class T> bool is_half(const dqfx::phases<T>& d) {
  return d.a == half<T>() && d.b == half<T>() && d.c == half<T>();
}

template <class T> bool in_duty_range(T d) { return d >= T{} && d <= dqfx::full_duty<T>(); }

/// The float values that are not numbers the kernels can use.
template <class T> const T non_finite[] = {nan_of<T>(), inf_of<T>(), -inf_of<T>()};

/// Invented current-loop tuning (per unit), valid for every type.
dqfx::current_loop_parameters loop_parameters() {
  dqfx::current_loop_parameters p{};
  p.d = {0.5, 0.05, 0.5, -1.0, 1.0};
  p.q = {0.5, 0.05, 0.5, -1.0, 1.0};
  p.ld = 0.1;
  p.lq = 0.12;
  p.flux = 0.6;
  return p;
}

template <class T> dqfx::current_loop_input<T> good_loop_input() {
  dqfx::current_loop_input<T> in{};
  in.current = {dqfx::from_double<T>(0.2), dqfx::from_double<T>(-0.1), dqfx::from_double<T>(-0.1)};
  in.rotor = dqfx::sincos_of<T>(dqfx::angle::from_degrees(30.0));
  in.speed = dqfx::from_double<T>(0.3);
  in.setpoint = {T{}, dqfx::from_double<T>(0.4)};
  in.bus_voltage = dqfx::from_double<T>(0.9);
  return in;
}

}  // namespace

TEST_CASE_TEMPLATE("conversion-out-of-range: from_double maps NaN to zero and saturates out-of-range values and infinities", T, q15,
                   q31, float, double) {
  CHECK(dqfx::from_double<T>(nan_double) == T{});
  CHECK(dqfx::from_double<T>(inf_double) == dqfx::number_traits<T>::max());
  CHECK(dqfx::from_double<T>(-inf_double) == dqfx::number_traits<T>::lowest());
  if constexpr (dqfx::is_fixed_v<T>) {
    CHECK(dqfx::from_double<T>(1.0) == T::max());
    CHECK(dqfx::from_double<T>(1e300) == T::max());
    CHECK(dqfx::from_double<T>(-1.5) == T::lowest());
  } else if constexpr (std::is_same_v<T, float>) {
    CHECK(dqfx::from_double<T>(1e300) == std::numeric_limits<float>::max());
    CHECK(dqfx::from_double<T>(-1e300) == std::numeric_limits<float>::lowest());
  }
  // A NaN gain or precise constant is zero as well.
  CHECK(dqfx::from_double<T>(0.5) * dqfx::gain<T>::from_double(nan_double) == T{});
}

TEST_CASE_TEMPLATE("fixed-saturates: fixed-point arithmetic saturates on every raw input and never wraps", T, q15, q31) {
  const T lo = T::lowest(), hi = T::max();
  CHECK(-lo == hi);
  CHECK(dqfx::abs(lo) == hi);
  CHECK(lo * lo == hi);
  CHECK(hi + hi == hi);
  CHECK(lo + lo == lo);
  CHECK(lo - hi == lo);
  CHECK(hi - lo == hi);
  CHECK(dqfx::sum_of_products(lo, lo, lo, lo) == hi);
  CHECK(dqfx::difference_of_products(lo, lo, hi, lo) == hi);
  CHECK(hi * dqfx::gain<T>::from_double(1e12) == hi);  // a constant beyond 2^30 saturates too
  CHECK(lo * dqfx::gain<T>::from_double(1e12) == lo);
  dqfx::accumulator<T> acc{};
  for (int i = 0; i < 8; ++i) acc.add_product(lo, lo);  // the wide sum saturates, then the result
  CHECK(acc.result() == hi);
}

TEST_CASE_TEMPLATE("angle-non-finite: angles: non-finite values give angle 0, finite ones wrap, NaN speeds do not move",
                   T, q15, q31, float, double) {
  for (double bad : {nan_double, inf_double, -inf_double, 1e300}) {
    CHECK(dqfx::angle::from_turns(bad).raw() == 0u);
    CHECK(dqfx::angle::from_radians(bad).raw() == 0u);
    CHECK(dqfx::angle::from_degrees(bad).raw() == 0u);
  }
  CHECK(dqfx::angle::from_turns(3.25).raw() == 0x40000000u);
  CHECK(dqfx::angle::from_turns(-0.25).raw() == 0xC0000000u);
  // Invented scale: per-unit speed 1 is 2*pi*800 rad/s, sampled at 20 kHz.
  constexpr auto rate = dqfx::angle_rate<T>::from_base(5026.548245743669, 1.0 / 20000.0);
  const dqfx::angle a = dqfx::angle::from_raw(0xFFFFFF00u);
  if constexpr (!dqfx::is_fixed_v<T>) {
    CHECK(rate.advance(a, nan_of<T>()) == a);
    // An infinite speed saturates to the largest step, just under half a turn.
    CHECK(rate.step_raw(inf_of<T>()) == std::numeric_limits<std::int32_t>::max());
    CHECK(rate.step_raw(-inf_of<T>()) == std::numeric_limits<std::int32_t>::min());
  }
  CHECK(dqfx::difference(rate.advance(a, dqfx::number_traits<T>::max()), a) == rate.step_raw(dqfx::number_traits<T>::max()));
}

TEST_CASE_TEMPLATE("sincos-range: sincos_of accepts every angle; q15/q31 results stay within [-max, max]", T, q15, q31) {
  for (std::uint32_t raw : {0u, 1u, 0x3FFFFFFFu, 0x40000000u, 0x7FFFFFFFu, 0x80000000u, 0xC0000000u, 0xFFFFFFFFu}) {
    const dqfx::sincos<T> r = dqfx::sincos_of<T>(dqfx::angle::from_raw(raw));
    CHECK(r.sin != T::lowest());
    CHECK(r.cos != T::lowest());
    CHECK(-(-r.sin) == r.sin);  // negation is exact
  }
}

TEST_CASE_TEMPLATE("polar-edges: angle_of and magnitude: origin, saturation, NaN and infinity", T, q15, q31, float, double) {
  CHECK(dqfx::angle_of(dqfx::stationary<T>{}).raw() == 0u);
  CHECK(dqfx::magnitude(dqfx::stationary<T>{}) == T{});
  const T lo = dqfx::number_traits<T>::lowest();
  if constexpr (dqfx::is_fixed_v<T>) {
    CHECK(dqfx::magnitude(dqfx::stationary<T>{lo, lo}) == T::max());
    CHECK(dqfx::angle_of(dqfx::stationary<T>{lo, T{}}).raw() == 0x80000000u);
  } else {
    for (T bad : non_finite<T>) {
      CHECK(dqfx::angle_of(dqfx::stationary<T>{bad, T{1}}).raw() == 0u);
      CHECK(dqfx::angle_of(dqfx::stationary<T>{T{1}, bad}).raw() == 0u);
    }
    CHECK(std::isnan(dqfx::magnitude(dqfx::stationary<T>{nan_of<T>(), T{1}})));
    CHECK(dqfx::magnitude(dqfx::stationary<T>{-inf_of<T>(), T{1}}) == inf_of<T>());
    // Finite inputs whose squares overflow or underflow still give the length.
    const T big = std::numeric_limits<T>::max() / 2;
    CHECK(dqfx::magnitude(dqfx::stationary<T>{big, big}) == doctest::Approx(static_cast<double>(big) * std::sqrt(2.0)).epsilon(1e-6));
    const T tiny = std::numeric_limits<T>::denorm_min() * T{4};
    CHECK(dqfx::magnitude(dqfx::stationary<T>{T{}, tiny}) == tiny);
  }
}

TEST_CASE_TEMPLATE("transform-non-finite: transforms saturate in fixed point and pass non-finite floats on to the checks downstream",
                   T, q15, q31, float, double) {
  const T hi = dqfx::number_traits<T>::max(), lo = dqfx::number_traits<T>::lowest();
  if constexpr (dqfx::is_fixed_v<T>) {
    // 2a - b - c of (1, -1, -1) is 4/3: alpha saturates.
    CHECK(dqfx::clarke(dqfx::phases<T>{hi, lo, lo}).alpha == hi);
    CHECK(dqfx::inverse_clarke(dqfx::stationary<T>{lo, hi}).b == hi);
    CHECK(dqfx::park(dqfx::stationary<T>{lo, lo}, dqfx::sincos<T>{lo, lo}).d == hi);
  } else {
    const dqfx::stationary<T> s = dqfx::clarke(dqfx::phases<T>{nan_of<T>(), T{}, T{}});
    CHECK(std::isnan(s.alpha));
    // ... and the modulator downstream refuses it: NaN never reaches a duty.
    CHECK(dqfx::svm(s).fault);
  }
}

TEST_CASE_TEMPLATE("svm-non-finite: svm gives 50 % on every phase, sector 0 and fault for an unusable command or bus", T,
                   q15, q31, float, double) {
  const dqfx::stationary<T> command{dqfx::from_double<T>(0.2), dqfx::from_double<T>(0.1)};
  for (T bus : {T{}, dqfx::from_double<T>(-0.5), dqfx::number_traits<T>::lowest()}) {
    const auto m = dqfx::svm(command, bus);
    CHECK(m.fault);
    CHECK(is_half(m.duty));
    CHECK(m.sector == 0);
  }
  if constexpr (!dqfx::is_fixed_v<T>) {
    for (T bad : non_finite<T>) {
      CHECK(is_half(dqfx::svm(dqfx::stationary<T>{bad, T{}}).duty));
      CHECK(dqfx::svm(dqfx::stationary<T>{T{}, bad}).fault);
      CHECK(dqfx::svm(command, bad).fault);
    }
    // A subnormal bus (its reciprocal overflows) and a command whose references overflow.
    CHECK(dqfx::svm(dqfx::stationary<T>{}, std::numeric_limits<T>::denorm_min()).fault);
    CHECK(dqfx::svm(dqfx::stationary<T>{std::numeric_limits<T>::max(), std::numeric_limits<T>::max()}).fault);
  }
  // A command outside the linear range is brought back (not a fault).
  const auto big = dqfx::svm(dqfx::stationary<T>{dqfx::from_double<T>(0.9), dqfx::from_double<T>(0.9)});
  CHECK_FALSE(big.fault);
  CHECK(big.limited);
  CHECK((in_duty_range(big.duty.a) && in_duty_range(big.duty.b) && in_duty_range(big.duty.c)));
}

TEST_CASE_TEMPLATE("pwm-range: PWM compare values and dead-time compensation stay in range for any duty and current", T,
                   q15, q31, float, double) {
  const dqfx::centre_aligned_pwm pwm{1000, 0};
  CHECK(pwm.compare(dqfx::number_traits<T>::lowest()) == 0u);
  CHECK(pwm.compare(dqfx::number_traits<T>::max()) == 1000u);
  const auto comp = dqfx::dead_time_compensation<T>::from_ratio(0.02, 0.05);
  const auto off = dqfx::dead_time_compensation<T>::from_ratio(0.02, 0.0);  // no band: switched off
  const T lo = dqfx::number_traits<T>::lowest(), hi = dqfx::number_traits<T>::max();
  const dqfx::phases<T> d = comp.apply({lo, hi, T{}}, {lo, hi, hi});  // pushed further out: clamped
  CHECK((d.a == T{} && d.b == dqfx::full_duty<T>() && in_duty_range(d.c)));
  CHECK(off.correction(hi) == T{});
  if constexpr (!dqfx::is_fixed_v<T>) {
    CHECK(pwm.compare(nan_of<T>()) == 500u);
    CHECK(pwm.compare(inf_of<T>()) == 1000u);
    CHECK(pwm.compare(-inf_of<T>()) == 0u);
    CHECK(comp.correction(nan_of<T>()) == T{});
    CHECK(off.correction(inf_of<T>()) == T{});
    const dqfx::phases<T> n = comp.apply({nan_of<T>(), T{0.3f}, T{0.3f}}, {T{}, nan_of<T>(), inf_of<T>()});
    CHECK(n.a == half<T>());
    CHECK(n.b == T{0.3f});
    CHECK(in_duty_range(n.c));
    const dqfx::phases<T> o = off.apply({T{0.3f}, T{0.3f}, T{0.3f}}, {inf_of<T>(), -inf_of<T>(), nan_of<T>()});
    CHECK((o.a == T{0.3f} && o.b == T{0.3f} && o.c == T{0.3f}));
  }
}

TEST_CASE_TEMPLATE("adc-bad-sample: a missing, railed or out-of-range ADC sample is flagged and never used", T, q15, q31,
                   float, double) {
  // Invented 12-bit converter, rails within 8 codes of either end.
  constexpr dqfx::adc_format adc{12, 8};
  const auto channel = dqfx::current_channel<T>::from_amplifier(adc, -0.02, 10.0);
  const dqfx::adc_sample good{2100, true}, railed_low{3, true}, railed_high{4090, true}, missing{2048, false},
      beyond{5000, true};
  CHECK(channel.usable(good));
  CHECK_FALSE(channel.usable(railed_low));
  CHECK_FALSE(channel.usable(railed_high));
  CHECK_FALSE(channel.usable(missing));
  CHECK_FALSE(channel.usable(beyond));

  const dqfx::two_sensor<T> two{channel, channel};
  const auto m = two.reconstruct(good, railed_high);
  CHECK_FALSE(m.valid);
  CHECK(m.railed == 2);
  CHECK((m.current.a == T{} && m.current.b == T{} && m.current.c == T{}));
  CHECK(two.reconstruct(missing, good).missing == 1);

  // Three shunts: the railed phase is skipped and derived from the other two.
  const dqfx::three_shunt<T> three{{channel, channel, channel}, dqfx::from_double<T>(0.1)};
  const dqfx::phases<T> duty{dqfx::from_double<T>(0.3), dqfx::from_double<T>(0.4), dqfx::from_double<T>(0.5)};
  const auto r = three.reconstruct({railed_low, good, good}, duty);
  CHECK(r.valid);
  CHECK(r.railed == 1);
  CHECK(r.derived_phase == 0);
  // A low-side window below the minimum (duty 0.95 leaves 5 %) counts as missing.
  const auto w = three.reconstruct({good, good, good}, {dqfx::from_double<T>(0.95), duty.b, duty.c});
  CHECK(w.missing == 1);
  CHECK(w.derived_phase == 0);
  // Two phases lost: no measurement.
  const auto none = three.reconstruct({missing, railed_high, good}, duty);
  CHECK_FALSE(none.valid);
  if constexpr (!dqfx::is_fixed_v<T>) {
    const auto n = three.reconstruct({good, good, good}, {nan_of<T>(), duty.b, duty.c});
    CHECK(n.missing == 1);
  }

  // Offset calibration refuses a run with a missing or railed sample, or too much spread.
  dqfx::offset_calibration<T> cal{adc, 4, 10};
  for (const dqfx::adc_sample s : {good, good, railed_low, good}) cal.add(s);
  CHECK(cal.complete());
  CHECK_FALSE(cal.accepted());
  CHECK(cal.offset() == T{});
  dqfx::offset_calibration<T> spread{adc, 2, 10};
  spread.add({2000, true});
  spread.add({2100, true});
  CHECK_FALSE(spread.accepted());
}

TEST_CASE_TEMPLATE("adc-format: an ADC format outside 8..16 bits is a parameter fault: no usable sample, zero current",
                   T, q15, q31, float, double) {
  for (unsigned bits : {0u, 7u, 17u, 32u, 4294967295u}) {
    const dqfx::adc_format adc{bits, 0};
    CHECK_FALSE(adc.valid());
    CHECK(adc.largest_code() == 0u);  // every code counts as railed
    const auto channel = dqfx::current_channel<T>::from_amplifier(adc, -0.02, 10.0);
    CHECK(channel.parameter_fault());
    for (std::uint16_t code : {std::uint16_t{0}, std::uint16_t{2048}, std::uint16_t{65535}}) {
      CHECK_FALSE(channel.usable({code, true}));
      CHECK(channel.reading(code) == T{});
      CHECK(channel.current(code) == T{});
    }
    const dqfx::two_sensor<T> two{channel, channel};
    const auto m = two.reconstruct({2100, true}, {2000, true});
    CHECK_FALSE(m.valid);
    CHECK(m.railed == 3);
    dqfx::offset_calibration<T> cal{adc, 2, 10};
    CHECK(cal.parameter_fault());
    cal.add({2048, true});
    cal.add({2048, true});
    CHECK(cal.complete());
    CHECK_FALSE(cal.accepted());
    CHECK(cal.offset() == T{});
  }
  // The edges of the range are valid. (A constexpr channel on an invalid format does not
  // compile: tests/compile_fail/adc_bits_out_of_range.cpp.)
  for (unsigned bits : {8u, 16u}) {
    const auto channel = dqfx::current_channel<T>::from_amplifier(dqfx::adc_format{bits, 0}, -0.02, 10.0);
    CHECK_FALSE(channel.parameter_fault());
    CHECK(channel.usable({100, true}));
  }
}

TEST_CASE_TEMPLATE("pi-bad-input: the PI regulator refuses non-finite inputs and overflow, and orders its limits", T,
                   q15, q31, float, double) {
  dqfx::pi_regulator<T> pi{dqfx::pi_parameters{0.8, 0.05, 0.5, -0.5, 0.5}};
  pi.preload(dqfx::from_double<T>(0.2));
  const T before = pi.integral();
  if constexpr (!dqfx::is_fixed_v<T>) {
    for (T bad : non_finite<T>) {
      pi.clear_faults();
      CHECK(pi.step(bad) == T{});
      CHECK(pi.input_fault());
      CHECK(pi.integral() == before);
      pi.clear_faults();
      CHECK(pi.step(T{0.1f}, bad) == T{});
      CHECK(pi.input_fault());
      pi.clear_faults();
      pi.commit(pi.propose(T{0.1f}), bad);
      CHECK(pi.input_fault());
      CHECK(pi.integral() == before);
    }
    // Set-point minus measurement beyond the float range.
    pi.clear_faults();
    const T big = std::numeric_limits<T>::max();
    CHECK(pi.propose_from(big, -big, T{}).input_fault);
    // An integrator update that would overflow is refused.
    dqfx::pi_regulator<T> hot{dqfx::pi_parameters{1.0, 1e300, 0.0, -1.0, 1.0}};
    hot.step(big);
    CHECK(hot.input_fault());
    CHECK(std::isfinite(static_cast<double>(hot.integral())));
    CHECK(hot.step(-big) == T{-1});
  }
  // Limits in the wrong order at run time: swapped and flagged.
  pi.clear_faults();
  CHECK_FALSE(pi.set_limits(dqfx::from_double<T>(0.4), dqfx::from_double<T>(-0.4)));
  CHECK(pi.limits_fault());
  CHECK(pi.lower() == dqfx::from_double<T>(-0.4));
  CHECK(pi.upper() == dqfx::from_double<T>(0.4));
  if constexpr (!dqfx::is_fixed_v<T>) {
    pi.clear_faults();
    CHECK_FALSE(pi.set_limits(nan_of<T>(), T{1}));
    CHECK(pi.limits_fault());
    CHECK(pi.lower() == dqfx::from_double<T>(-0.4));  // unchanged
  }
  // Wrong order in the parameters of a regulator built at run time: put in order, flagged.
  // (A constexpr regulator does not compile: tests/compile_fail/pi_limits_wrong_order.cpp.)
  volatile double lower = 0.5;
  dqfx::pi_regulator<T> swapped{dqfx::pi_parameters{1.0, 0.0, 0.0, lower, -0.5}};
  CHECK(swapped.limits_fault());
  CHECK(swapped.lower() <= swapped.upper());
  // Whatever happens, the output stays inside the limits.
  for (int k = 0; k < 100; ++k) {
    const T out = pi.step(dqfx::number_traits<T>::max());
    CHECK((out >= pi.lower() && out <= pi.upper()));
  }
}

TEST_CASE_TEMPLATE("current-loop-bad-input: the current loop gives 50 % duties, zero voltage and fault on bad input", T, q15, q31,
                   float, double) {
  dqfx::current_loop<T> loop{loop_parameters()};
  loop.step(good_loop_input<T>());
  const T d_before = loop.d_regulator().integral(), q_before = loop.q_regulator().integral();
  auto expect_fault = [&](const dqfx::current_loop_input<T>& in) {
    const auto out = loop.step(in);
    CHECK(out.fault);
    CHECK(is_half(out.duty));
    CHECK((out.voltage.d == T{} && out.voltage.q == T{}));
    CHECK(out.sector == 0);
    CHECK(loop.d_regulator().integral() == d_before);
    CHECK(loop.q_regulator().integral() == q_before);
  };
  for (T bus : {T{}, dqfx::from_double<T>(-0.3)}) {
    auto in = good_loop_input<T>();
    in.bus_voltage = bus;
    expect_fault(in);
  }
  if constexpr (!dqfx::is_fixed_v<T>) {
    for (T bad : non_finite<T>) {
      for (int field = 0; field < 9; ++field) {
        auto in = good_loop_input<T>();
        T* slots[] = {&in.current.a, &in.current.b, &in.current.c, &in.rotor.sin, &in.rotor.cos,
                      &in.speed, &in.setpoint.d, &in.setpoint.q, &in.bus_voltage};
        *slots[field] = bad;
        expect_fault(in);
      }
    }
  }
  // Good input again: regulation resumes.
  const auto out = loop.step(good_loop_input<T>());
  CHECK_FALSE(out.fault);
  CHECK((in_duty_range(out.duty.a) && in_duty_range(out.duty.b) && in_duty_range(out.duty.c)));
}

namespace {

// Invented estimator designs: 20 kHz sampling, speed 1.0 = 1000 Hz electrical.
constexpr double two_pi = 6.283185307179586477;
constexpr double est_ts = 50e-6;
constexpr double est_base = two_pi * 1000;
// The base speed at which speed 1.0 moves exactly one binary-angle unit per sample.
constexpr double one_unit_base = two_pi / 4294967296.0 / est_ts;

dqfx::tracking_pll_parameters pll_design(double base_speed) { return {two_pi * 80, 1.0, base_speed, est_ts}; }

dqfx::encoder_parameters encoder_design(double base_speed, double tick_frequency = 100e6) {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = 4000;
  p.pole_pairs = 4;
  p.base_speed = base_speed;
  p.sample_time = est_ts;
  p.tick_frequency = tick_frequency;
  return p;
}

dqfx::hall_parameters hall_design(double base_speed, double tick_frequency = 10e6) {
  return {dqfx::hall_table::evenly({1, 3, 2, 6, 4, 5}, dqfx::angle::from_degrees(-30)), base_speed, est_ts,
          tick_frequency, 0.005};
}

dqfx::flux_observer_parameters observer_design(double base_speed, double flux = 0.25) {
  dqfx::flux_observer_parameters p{};
  p.resistance = 0.03;
  p.ld = 0.1;
  p.lq = 0.13;
  p.flux = flux;
  p.convergence_rate = 300;
  p.base_speed = base_speed;
  p.sample_time = est_ts;
  p.pll_frequency = two_pi * 80;
  p.minimum_speed = 0.05;
  return p;
}

template <class T> bool not_nan(T v) {
  if constexpr (dqfx::is_fixed_v<T>) {
    return true;
  } else {
    return v == v;
  }
}

}  // namespace

TEST_CASE_TEMPLATE("estimator-design: an estimator whose base speed moves less than 2^-32 turn or at least half a turn "
                   "per sample raises parameter_fault and gives speed 0",
                   T, q15, q31, float, double) {
  // 1e-300 makes the float speed scale 1/(base_speed * Ts) overflow (0 * infinity was NaN).
  for (double base : {0.99 * one_unit_base, 1e-300, 1.01 * 0.5 * 4294967296.0 * one_unit_base}) {
    CAPTURE(base);
    dqfx::tracking_pll<T> pll{pll_design(base)};
    CHECK(pll.parameter_fault());
    pll.update(dqfx::angle::from_degrees(90));
    pll.reset(dqfx::angle{}, dqfx::from_double<T>(0.5));
    CHECK(pll.speed() == T{});
    dqfx::encoder<T> encoder{encoder_design(base)};
    CHECK(encoder.parameter_fault());
    encoder.update(100);
    encoder.update(200);
    CHECK((encoder.speed() == T{} && encoder.raw_speed() == T{}));
    dqfx::hall_sensor<T> hall{hall_design(base)};
    CHECK(hall.parameter_fault());
    hall.update(1);
    hall.update(3);
    CHECK(hall.speed() == T{});
    dqfx::flux_observer<T> observer{observer_design(base)};
    CHECK(observer.parameter_fault());
    observer.update({dqfx::from_double<T>(0.5), T{}}, {T{}, dqfx::from_double<T>(0.5)});
    CHECK(observer.speed() == T{});
    CHECK((not_nan(observer.flux().alpha) && not_nan(observer.flux().beta)));
  }
  // Just inside the rule (a little over one unit per sample, a little under half a turn)
  // the designs are accepted.
  for (double base : {1.01 * one_unit_base, 0.99 * 0.5 * 4294967296.0 * one_unit_base}) {
    CAPTURE(base);
    CHECK_FALSE(dqfx::tracking_pll<T>{pll_design(base)}.parameter_fault());
    CHECK_FALSE(dqfx::hall_sensor<T>{hall_design(base)}.parameter_fault());
  }
  for (double base : {1.01 * one_unit_base, 0.99 * 0.5 * 4294967296.0 * one_unit_base}) {
    CHECK_FALSE(dqfx::encoder<T>{encoder_design(base)}.parameter_fault());
  }
  CHECK_FALSE(dqfx::flux_observer<T>{observer_design(1.01 * one_unit_base)}.parameter_fault());
  CHECK_FALSE(dqfx::flux_observer<T>{observer_design(est_base)}.parameter_fault());
}

TEST_CASE_TEMPLATE("capture-timer-design: an encoder or Hall capture timer that is negative, NaN or wraps within a sample "
                   "raises parameter_fault",
                   T, q15, q31, float, double) {
  for (double ticks : {-1.0, nan_double, inf_double, 2 * 4294967296.0 / est_ts, 1e300}) {
    CAPTURE(ticks);
    CHECK(dqfx::encoder<T>{encoder_design(est_base, ticks)}.parameter_fault());
    CHECK(dqfx::hall_sensor<T>{hall_design(est_base, ticks)}.parameter_fault());
  }
  for (double ticks : {0.0, 100e6, 4294967295.0 / est_ts}) {
    CAPTURE(ticks);
    CHECK_FALSE(dqfx::encoder<T>{encoder_design(est_base, ticks)}.parameter_fault());
    CHECK_FALSE(dqfx::hall_sensor<T>{hall_design(est_base, ticks)}.parameter_fault());
  }
}

TEST_CASE_TEMPLATE("estimator-reset-non-finite: a tracking PLL or flux observer reset with a NaN or infinite speed raises "
                   "input_fault and restarts at speed 0",
                   T, float, double) {
  for (T bad : non_finite<T>) {
    dqfx::tracking_pll<T> pll{pll_design(est_base)};
    pll.reset(dqfx::angle::from_degrees(10), T(0.3f));
    CHECK_FALSE(pll.fault());
    pll.reset(dqfx::angle::from_degrees(20), bad);
    CHECK(pll.fault());
    CHECK(pll.speed() == T{});
    CHECK(pll.electrical_angle() == dqfx::angle::from_degrees(20));
    CHECK(pll.next() == pll.electrical_angle());  // speed 0: it does not move
    dqfx::flux_observer<T> observer{observer_design(est_base)};
    observer.reset(dqfx::angle::from_degrees(20), bad);
    CHECK(observer.fault());
    CHECK(observer.speed() == T{});
  }
}

TEST_CASE_TEMPLATE("flux-observer-saturates: the float flux observer saturates where the q31 state does: any finite input gives "
                   "a finite flux and speed",
                   T, float, double) {
  constexpr T big = std::numeric_limits<T>::max();
  for (T x : {T(1e3f), T(1e30f), big, -big}) {
    CAPTURE(x);
    dqfx::flux_observer<T> observer{observer_design(est_base)};
    for (int k = 0; k < 200; ++k) {
      observer.update({x, -x}, {(k % 2 == 0) ? x : -x, x});
      const dqfx::stationary<T> f = observer.flux();
      REQUIRE((std::isfinite(static_cast<double>(f.alpha)) && std::isfinite(static_cast<double>(f.beta))));
      // The state is limited to +/-1 at its power-of-two scale (here 1: 2 (psi + Lq) < 1).
      CHECK((std::fabs(static_cast<double>(f.alpha)) <= 1.0 && std::fabs(static_cast<double>(f.beta)) <= 1.0));
      REQUIRE(std::isfinite(static_cast<double>(observer.speed())));
    }
    CHECK_FALSE(observer.fault());  // finite values are not a fault, only saturated
  }
  // A magnet flux so small that the radial correction gain exceeds 2^30 is refused (for
  // q15/q31 it would saturate; float would overflow).
  for (double flux : {1e-30, 1e-8}) {
    CAPTURE(flux);
    CHECK(dqfx::flux_observer<T>{observer_design(est_base, flux)}.parameter_fault());
    CHECK(dqfx::flux_observer<q31>{observer_design(est_base, flux)}.parameter_fault());
  }
  CHECK_FALSE(dqfx::flux_observer<T>{observer_design(est_base, 1e-3)}.parameter_fault());
}

namespace {
// Invented: 10,000 counts per turn, 7 pole pairs, 12 kHz, speed 1.0 = 500 Hz electrical:
// 59.5 counts per sample at max_speed 1.0 (largest accepted step 60).
dqfx::encoder_parameters glitch_drive() {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = 10000;
  p.pole_pairs = 7;
  p.base_speed = 6.283185307179586 * 500;
  p.sample_time = 1.0 / 12000;
  p.max_rejected = 8;
  return p;
}
}  // namespace

TEST_CASE_TEMPLATE("encoder-glitch: a glitch of n samples is rejected and costs exactly n samples at max_speed", T, q15,
                   q31, float, double) {
  dqfx::encoder<T> e{glitch_drive()};
  std::uint32_t count = 100;
  for (int k = 0; k < 100; ++k) e.update(count += 59);
  const dqfx::angle held = e.electrical_angle();
  for (int n = 0; n < 5; ++n) {  // five samples of a +20,000-count glitch at full speed
    count += 59;
    e.update((count + 20000u) & 0xFFFFu);
    CHECK(e.jump());
    CHECK(e.electrical_angle() == held);
  }
  e.update((count += 59) & 0xFFFFu);  // six samples of travel since the last good reading
  CHECK_FALSE(e.jump());
  CHECK(e.valid());
  CHECK(e.fault());
  CHECK(e.position() == (count % 10000u));
}

TEST_CASE_TEMPLATE("encoder-lost: after max_rejected bad readings the encoder is lost until index() or reset()", T, q15,
                   q31, float, double) {
  dqfx::encoder<T> e{glitch_drive()};
  std::uint32_t count = 100;
  for (int k = 0; k < 100; ++k) e.update(count += 59);
  for (int n = 0; n < 8; ++n) e.update((count += 59) + 20000u);
  CHECK(e.lost());
  CHECK_FALSE(e.valid());
  for (int n = 0; n < 3000; ++n) e.update((count += 59) & 0xFFFFu);  // good readings, many wraps
  CHECK(e.lost());
  e.index(count & 0xFFFFu);
  CHECK(e.valid());
  CHECK(e.position() == 0);  // index_position
  e.reset();
  CHECK_FALSE(e.valid());
  e.update(count & 0xFFFFu);
  CHECK(e.valid());
}
