// SPDX-License-Identifier: MIT
// Fuzz harness: space-vector modulation (every scheme and over-modulation policy, with
// and without a bus voltage), PWM compare values and dead-time compensation.
// Invariants: duties always inside [0, full_duty] and never NaN; a fault gives exactly
// 50 % on every phase and sector 0; valid input never faults; inside the linear range
// the line-to-line duty differences are within twice the bound documented in svm.hpp of
// the classic modulator (tests/reference/transforms_reference.hpp), each scheme puts its
// zero sequence where it says, and outside it the command is brought back onto the
// boundary; compare values stay in [0, period], map 0 and 100 % exactly, NaN to the
// middle, and respect the minimum pulse.
#include <cmath>

#include "dqfx/pwm.hpp"
#include "dqfx/svm.hpp"
#include "fuzz_input.hpp"
#include "reference/transforms_reference.hpp"
#include "reference/trig_reference.hpp"

namespace {

using namespace dqfx_fuzz;
namespace ref = dqfx_reference;
namespace mod = dqfx::modulation;
namespace over = dqfx::overmodulation;
using ref::real;

/// Documented duty error (absolute), without and with a bus voltage.
template <class T>
real duty_bound(bool with_bus, real bus = 1) {
  // The bounds documented in svm.hpp; q15: 0.5 + 2^-11 LSB, with a bus b 0.5 + 2^-10/b LSB.
  if constexpr (std::is_same_v<T, q15>) return (with_bus ? 0.5L + 1.0L / 1024 / bus : 0.5L + 1.0L / 2048) * lsb<T>();
  if constexpr (std::is_same_v<T, q31>) return (with_bus ? 1.25L : 0.75L) * lsb<T>();
  if constexpr (std::is_same_v<T, float>) return with_bus ? 4.8e-7L : 2.4e-7L;
  return with_bus ? 1e-15L : 5e-16L;
}

template <class T>
long double min_normal() {
  if constexpr (dqfx::is_fixed_v<T>) {
    return 0;
  } else {
    return std::numeric_limits<T>::min();
  }
}

template <class T>
bool in_duty_range(T d) {
  return d >= T{} && d <= dqfx::full_duty<T>();  // false for NaN
}

template <class S>
ref::scheme reference_scheme() {
  if constexpr (std::is_same_v<S, mod::sinusoidal>) return ref::scheme::sinusoidal;
  if constexpr (std::is_same_v<S, mod::centred>) return ref::scheme::centred;
  if constexpr (std::is_same_v<S, mod::clamp_low>) return ref::scheme::clamp_low;
  if constexpr (std::is_same_v<S, mod::clamp_high>) return ref::scheme::clamp_high;
  return ref::scheme::clamp_peak;
}

template <class T, class S, class L>
void modulation(byte_reader& in) {
  const bool with_bus = in.flag();
  const dqfx::stationary<T> command{in.mostly_unit<T>(), in.mostly_unit<T>()};
  const T bus = in.mostly_unit<T>();
  const dqfx::modulation_result<T> m = with_bus ? dqfx::svm<S, L>(command, bus) : dqfx::svm<S, L>(command);
  const T half = dqfx::from_double<T>(0.5);

  bool valid = is_finite(command.alpha) && is_finite(command.beta);
  // A bus must be positive; a float/double one also normal (svm.hpp).
  if (with_bus) valid = valid && is_finite(bus) && bus > T{} && (dqfx::is_fixed_v<T> || exact(bus) >= min_normal<T>());
  if (!valid) DQFX_FUZZ_CHECK(m.fault);
  // Finite input of any sensible size never faults (only float references beyond the
  // float range do, which needs commands near the largest float).
  const bool moderate = std::fabs(exact(command.alpha)) <= 1e30L && std::fabs(exact(command.beta)) <= 1e30L;
  if (valid && moderate) DQFX_FUZZ_CHECK(!m.fault);
  if (m.fault) {
    DQFX_FUZZ_CHECK(m.duty.a == half && m.duty.b == half && m.duty.c == half);
    DQFX_FUZZ_CHECK(m.sector == 0 && !m.limited);
    return;
  }
  DQFX_FUZZ_CHECK(in_duty_range(m.duty.a) && in_duty_range(m.duty.b) && in_duty_range(m.duty.c));
  DQFX_FUZZ_CHECK(m.sector >= 1 && m.sector <= 6);

  // Accuracy, for commands and bus voltages of sensible size.
  const real e_bus = with_bus ? exact(bus) : 1.0L;
  const real alpha = exact(command.alpha) / e_bus, beta = exact(command.beta) / e_bus;
  if (!(std::fabs(exact(command.alpha)) <= 1 && std::fabs(exact(command.beta)) <= 1 && e_bus >= 1.0L / 64 &&
        e_bus <= 1)) {
    return;
  }
  const bool sinusoidal = std::is_same_v<S, mod::sinusoidal>;
  const ref::hexagon hex = sinusoidal ? ref::sinusoidal_hexagon() : ref::space_vector_hexagon();
  const real length = std::hypot(alpha, beta);
  const real reach = length == 0 ? 1 : hex.reach(ref::angle_of(alpha, beta));
  const real da = exact(m.duty.a), db = exact(m.duty.b), dc = exact(m.duty.c);
  const real full = exact(dqfx::full_duty<T>());
  if (length <= reach * (1 - 1e-6L)) {
    DQFX_FUZZ_CHECK(!m.limited);
    // Line to line: what the motor sees, the same for every scheme.
    const ref::abc v = ref::inverse_clarke_amplitude(alpha, beta);
    // q15/q31 duties span [0, max()], one LSB short of [0, 1], and max() stands for
    // 100 % (svm.hpp): a duty at either rail may be one LSB further from the exact value.
    const real b1 = duty_bound<T>(with_bus, e_bus);
    const auto allowed = [&](real d) { return dqfx::is_fixed_v<T> && (d == full || d == 0) ? b1 + lsb<T>() : b1; };
    const real ba = allowed(da), bb = allowed(db), bc = allowed(dc);
    DQFX_FUZZ_CHECK(std::fabs((da - db) - (v.a - v.b)) <= ba + bb);
    DQFX_FUZZ_CHECK(std::fabs((db - dc) - (v.b - v.c)) <= bb + bc);
    DQFX_FUZZ_CHECK(std::fabs((dc - da) - (v.c - v.a)) <= bc + ba);
    // The zero sequence of each scheme.
    const real top = std::fmax(da, std::fmax(db, dc)), bottom = std::fmin(da, std::fmin(db, dc));
    if constexpr (std::is_same_v<S, mod::clamp_low>) DQFX_FUZZ_CHECK(bottom == 0);
    if constexpr (std::is_same_v<S, mod::clamp_high>) DQFX_FUZZ_CHECK(top == full);
    if constexpr (std::is_same_v<S, mod::clamp_peak>) DQFX_FUZZ_CHECK(bottom == 0 || top == full);
    if constexpr (std::is_same_v<S, mod::sinusoidal> || std::is_same_v<S, mod::centred>) {
      const ref::abc e = ref::duties(alpha, beta, reference_scheme<S>());
      DQFX_FUZZ_CHECK(std::fabs(da - e.a) <= ba && std::fabs(db - e.b) <= bb && std::fabs(dc - e.c) <= bc);
    }
  } else if (length >= reach * (1 + 1e-6L)) {
    DQFX_FUZZ_CHECK(m.limited);
    // The applied vector lies on the boundary: at the command's angle (keep_angle) or at
    // the nearest boundary point (minimum_distance).
    const ref::ab applied = ref::vector_of_duties(da, db, dc);
    const real tolerance = 8 * duty_bound<T>(with_bus, e_bus) + (dqfx::is_fixed_v<T> ? 0 : 1e-12L);
    if constexpr (std::is_same_v<L, over::keep_angle>) {
      const real scale = reach / length;
      DQFX_FUZZ_CHECK(std::hypot(applied.alpha - alpha * scale, applied.beta - beta * scale) <= tolerance);
    } else {
      const ref::ab target = hex.nearest(alpha, beta);
      DQFX_FUZZ_CHECK(std::hypot(applied.alpha - target.alpha, applied.beta - target.beta) <= tolerance);
    }
  }
}

template <class T>
void pwm(byte_reader& in) {
  dqfx::centre_aligned_pwm timer{};
  timer.period = in.flag() ? in.bits<std::uint32_t>() : in.bits<std::uint16_t>();
  timer.minimum_pulse = in.flag() ? in.bits<std::uint16_t>() : 0u;
  const T duty = in.mostly_unit<T>();
  const std::uint32_t n = timer.compare(duty);
  DQFX_FUZZ_CHECK(n <= timer.period);
  const std::uint32_t shortest = timer.minimum_pulse > timer.period / 2 ? timer.period / 2 : timer.minimum_pulse;
  DQFX_FUZZ_CHECK(n == 0 || n == timer.period || (n >= shortest && timer.period - n >= shortest));
  if (duty != duty) {
    DQFX_FUZZ_CHECK(n == timer.period / 2);
  } else if (!(duty > T{})) {
    DQFX_FUZZ_CHECK(n == 0);
  } else if (!(duty < dqfx::full_duty<T>())) {
    DQFX_FUZZ_CHECK(n == timer.period);
  } else if (timer.minimum_pulse == 0) {
    const real exact_count = exact(duty) * static_cast<real>(timer.period);
    // Rounded to nearest; float's own rounding of duty * period adds up to half an ulp.
    const real slack = dqfx::is_fixed_v<T> ? 0 : 2 * lsb<T>() * exact_count;
    DQFX_FUZZ_CHECK(std::fabs(static_cast<real>(n) - exact_count) <= 0.5L + slack);
  }

  // Dead-time compensation: duties stay in range whatever the inputs.
  const auto comp = dqfx::dead_time_compensation<T>::from_ratio(in.any_double(), in.any_double());
  const dqfx::phases<T> d = comp.apply({in.mostly_unit<T>(), in.mostly_unit<T>(), in.mostly_unit<T>()},
                                       {in.mostly_unit<T>(), in.mostly_unit<T>(), in.mostly_unit<T>()});
  DQFX_FUZZ_CHECK(in_duty_range(d.a) && in_duty_range(d.b) && in_duty_range(d.c));
}

template <class T, class S>
void with_limit(byte_reader& in) {
  if (in.flag()) {
    modulation<T, S, over::keep_angle>(in);
  } else {
    modulation<T, S, over::minimum_distance>(in);
  }
}

template <class T>
void run(byte_reader& in) {
  switch (in.choice(6)) {
    case 0: with_limit<T, mod::sinusoidal>(in); break;
    case 1: with_limit<T, mod::centred>(in); break;
    case 2: with_limit<T, mod::clamp_low>(in); break;
    case 3: with_limit<T, mod::clamp_high>(in); break;
    case 4: with_limit<T, mod::clamp_peak>(in); break;
    default: pwm<T>(in); break;
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  with_type(in.choice(4), [&](auto type) { run<decltype(type)>(in); });
  return 0;
}
