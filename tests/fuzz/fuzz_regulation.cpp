// SPDX-License-Identifier: MIT
// Fuzz harness: the PI regulator (every anti-windup policy, any gains and limits, any
// sequence of step / propose+commit / set_limits / preload / reset) and the whole
// current-loop step (any parameters, any inputs, several periods).
// Invariants: a regulator's output is always inside its limits and never NaN, its limits
// stay ordered, a non-finite input is refused with the output at zero clamped into the
// limits and `input_fault`; the first step of a fresh regulator is kp*e + ff (gains as
// held) within the documented 0.5 LSB. The loop's duties are always inside [0, 1] and
// never NaN, exactly 50 % with zero voltage and untouched regulators on a fault, and
// otherwise the limited voltage lies inside the circle and the duties are those of svm
// for the applied vector.
#include <cmath>

#include "dqfx/current_loop.hpp"
#include "dqfx/sincos.hpp"
#include "fuzz_input.hpp"
#include "reference/exact_integer.hpp"

namespace {

using namespace dqfx_fuzz;
using dqfx_ref::int128;

/// A parameter: sometimes any double, mostly a value of sensible size and either sign.
double parameter(byte_reader& in, int largest_exponent) {
  if (in.choice(8) == 0) return in.any_double();
  return std::ldexp(in.unit<double>(), static_cast<int>(in.choice(static_cast<unsigned>(largest_exponent) + 12)) - 12);
}

dqfx::pi_parameters any_pi(byte_reader& in) {
  dqfx::pi_parameters p{};
  p.kp = parameter(in, 6);
  p.ki = parameter(in, 0);
  p.kt = parameter(in, 0);
  p.lower = in.flag() ? -std::fabs(parameter(in, 0)) : parameter(in, 0);
  p.upper = in.flag() ? std::fabs(parameter(in, 0)) : parameter(in, 0);
  return p;
}

template <class T>
bool inside(T v, T lower, T upper) {
  return v >= lower && v <= upper;  // false for NaN
}

template <class T, class W>
void regulator(byte_reader& in) {
  const dqfx::pi_parameters p = any_pi(in);
  dqfx::pi_regulator<T, W> pi{p};
  DQFX_FUZZ_CHECK(pi.lower() <= pi.upper());

  // A fresh regulator: the first output is kp*e + ff with the gains as held, rounded once.
  {
    const T e = in.mostly_unit<T>(), ff = in.mostly_unit<T>();
    const auto proposal = pi.propose(e, ff);
    if (is_finite(e) && is_finite(ff)) {
      long double want = 0;
      if constexpr (dqfx::is_fixed_v<T>) {
        const long double kp = std::ldexp(static_cast<long double>(pi.kp().mantissa()), pi.kp().shift() - 31);
        want = kp * exact(e) + exact(ff);
        if (std::fabs(want) < 255) {
          // pi_regulator.hpp: 0.5 LSB (q31), 0.5 + 2^-11 LSB (q15: kp*e is rounded to the
          // 2^-25 state unit first).
          const long double tolerance = lsb<T>() / 2 + (std::is_same_v<T, q15> ? std::ldexp(1.0L, -26) : 0.0L);
          DQFX_FUZZ_CHECK(std::fabs(exact(proposal.unlimited) - saturated<T>(want)) <= tolerance);
        }
      } else {
        const long double kp = static_cast<long double>(pi.kp() * T{1});
        want = kp * exact(e) + exact(ff);
        const long double size = std::fabs(kp * exact(e)) + std::fabs(exact(ff));
        if (size < static_cast<long double>(std::numeric_limits<T>::max()) / 4) {
          // 1.5 ulp of the size of the terms; below the normal range, the subnormal step.
          const long double tolerance = 1.5L * lsb<T>() * size + std::numeric_limits<T>::denorm_min();
          DQFX_FUZZ_CHECK(std::fabs(exact(proposal.unlimited) - want) <= tolerance);
        }
      }
    }
  }

  const unsigned steps = in.choice(24);
  for (unsigned k = 0; k < steps; ++k) {
    const T lower = pi.lower(), upper = pi.upper();
    const T e = in.mostly_unit<T>(), ff = in.mostly_unit<T>();
    switch (in.choice(6)) {
      case 0:
      case 1: {
        const T out = pi.step(e, ff);
        DQFX_FUZZ_CHECK(inside(out, lower, upper));
        if (!is_finite(e) || !is_finite(ff)) DQFX_FUZZ_CHECK(pi.input_fault());
        break;
      }
      case 2: {
        const auto proposal = in.flag() ? pi.propose(e, ff) : pi.propose_from(e, in.mostly_unit<T>(), ff);
        DQFX_FUZZ_CHECK(inside(proposal.output, lower, upper));
        if (proposal.input_fault) {
          const T zero = T{} > upper ? upper : (T{} < lower ? lower : T{});
          DQFX_FUZZ_CHECK(proposal.output == zero);
        }
        // Applied: the proposal, or something limited further outside (or anything).
        const T applied = in.flag() ? proposal.output : in.mostly_unit<T>();
        pi.commit(proposal, applied);
        if (proposal.input_fault || !is_finite(applied)) DQFX_FUZZ_CHECK(pi.input_fault());
        break;
      }
      case 3: {
        const bool ok = pi.set_limits(in.mostly_unit<T>(), in.mostly_unit<T>());
        if (!ok) DQFX_FUZZ_CHECK(pi.limits_fault());
        DQFX_FUZZ_CHECK(pi.lower() <= pi.upper());
        break;
      }
      case 4: pi.preload(in.mostly_unit<T>(), e, ff); break;
      default:
        if (in.flag()) pi.reset(); else pi.clear_faults();
        break;
    }
    DQFX_FUZZ_CHECK(pi.lower() <= pi.upper());
    const T integral = pi.integral();
    if constexpr (!dqfx::is_fixed_v<T>) DQFX_FUZZ_CHECK(integral == integral);
  }
}

template <class T>
bool fixed_inside_circle(T vd, T vq, T r) {
  const int128 d = vd.raw(), q = vq.raw(), rr = r.raw();
  return d * d + q * q <= rr * rr;
}

template <class T, class W, class S>
void loop(byte_reader& in) {
  dqfx::current_loop_parameters p{};
  p.d = any_pi(in);
  p.q = any_pi(in);
  p.ld = parameter(in, 2);
  p.lq = parameter(in, 2);
  p.flux = parameter(in, 1);
  p.modulation_limit = parameter(in, 0);
  dqfx::current_loop<T, W, S> control{p};
  const T half = dqfx::from_double<T>(0.5);

  const unsigned periods = 1 + in.choice(8);
  for (unsigned k = 0; k < periods; ++k) {
    dqfx::current_loop_input<T> x{};
    x.current = {in.mostly_unit<T>(), in.mostly_unit<T>(), in.mostly_unit<T>()};
    x.rotor = in.flag() ? dqfx::sincos<T>{in.mostly_unit<T>(), in.mostly_unit<T>()} : dqfx::sincos_of<T>(in.angle());
    x.speed = in.mostly_unit<T>();
    x.setpoint = {in.mostly_unit<T>(), in.mostly_unit<T>()};
    x.bus_voltage = in.mostly_unit<T>();
    const T before_d = control.d_regulator().integral(), before_q = control.q_regulator().integral();

    const dqfx::current_loop_output<T> out = control.step(x);
    const dqfx::phases<T> d = out.duty;
    const T full = dqfx::full_duty<T>();
    DQFX_FUZZ_CHECK(inside(d.a, T{}, full) && inside(d.b, T{}, full) && inside(d.c, T{}, full));

    const bool finite = is_finite(x.current.a) && is_finite(x.current.b) && is_finite(x.current.c) &&
                        is_finite(x.rotor.sin) && is_finite(x.rotor.cos) && is_finite(x.speed) &&
                        is_finite(x.setpoint.d) && is_finite(x.setpoint.q) && is_finite(x.bus_voltage);
    const bool valid = finite && x.bus_voltage > T{};
    DQFX_FUZZ_CHECK(out.fault == !valid);
    if (out.fault) {
      DQFX_FUZZ_CHECK(d.a == half && d.b == half && d.c == half);
      DQFX_FUZZ_CHECK(out.voltage.d == T{} && out.voltage.q == T{} && out.sector == 0);
      DQFX_FUZZ_CHECK(control.d_regulator().integral() == before_d && control.q_regulator().integral() == before_q);
      continue;
    }
    const T r = out.voltage_limit;
    DQFX_FUZZ_CHECK(r >= T{});
    if constexpr (dqfx::is_fixed_v<T>) {
      DQFX_FUZZ_CHECK(fixed_inside_circle(out.voltage.d, out.voltage.q, r));
    } else {
      const long double vd = out.voltage.d, vq = out.voltage.q, rr = r;
      // Within rounding; a subnormal radius has only the subnormal step.
      const long double reach = rr * (1 + 2 * lsb<T>()) + 2 * std::numeric_limits<T>::denorm_min();
      DQFX_FUZZ_CHECK(vd * vd + vq * vq <= reach * reach);
    }
    // The duties are those of the modulator for the applied vector (or 50 % where the
    // modulator itself refuses it).
    const auto m = dqfx::svm<S>(out.voltage_stationary, x.bus_voltage);
    DQFX_FUZZ_CHECK(m.duty.a == d.a && m.duty.b == d.b && m.duty.c == d.c);
  }
}

template <class T, class W>
void run(byte_reader& in) {
  switch (in.choice(4)) {
    case 0: loop<T, W, dqfx::modulation::centred>(in); break;
    case 1: loop<T, W, dqfx::modulation::clamp_peak>(in); break;
    default: regulator<T, W>(in); break;
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  const unsigned policy = in.choice(3);
  with_type(in.choice(4), [&](auto type) {
    using T = decltype(type);
    switch (policy) {
      case 0: run<T, dqfx::back_calculation>(in); break;
      case 1: run<T, dqfx::conditional_integration>(in); break;
      default: run<T, dqfx::no_anti_windup>(in); break;
    }
  });
  return 0;
}
