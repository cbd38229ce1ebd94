// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The kernels the Cortex-M harness times, and their inputs. To add a kernel, write a
/// struct like `multiply` below and list it in `timed_kernels` at the end: it is then
/// timed on every core, sized, and (for q15/q31) checked bit for bit against the host.
///
/// A kernel struct has
///   - `name`: how the report shows it (no spaces),
///   - optionally `kind`: `role::step` for a whole current-loop step, which the report
///     compares with the textbook baseline (default `role::part`),
///   - `types`: the number types it runs for,
///   - `input<T>`, `output<T>`: plain structs,
///   - `make<T>(random_bits&)`: one input, drawn from the shared generator,
///   - `run<T>(input<T>&)`: the call being timed, inlined into its wrapper. A kernel with
///     state (a regulator, a loop) keeps it in the input and updates it in place, as a
///     firmware updates its objects in RAM; stateless kernels take `const input<T>&`.

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <new>
#include <type_traits>
#include <utility>

#include "dqfx/angle.hpp"
#include "dqfx/current_loop.hpp"
#include "dqfx/encoder.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/hall.hpp"
#include "dqfx/tracking_pll.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/svm.hpp"
#include "dqfx/transforms.hpp"
#include "textbook.hpp"

#if defined(__GNUC__) && !defined(__clang__)
// Neither inlined nor analysed across calls: the caller cannot see what the wrapper does.
#define DQFX_TARGET_OPAQUE __attribute__((noipa))
#else
#define DQFX_TARGET_OPAQUE __attribute__((noinline))
#endif
// The timed wrapper inlines everything the kernel calls (as a firmware's small interrupt
// translation unit would let the compiler do), so that a kernel's count does not depend
// on how many other kernels this one large translation unit holds: GCC's inliner stops
// at a growth limit of the whole unit, and a kernel added to the registry used to move
// the figures of others by a call or two.
#define DQFX_TARGET_WHOLE __attribute__((flatten))

namespace dqfx_target {

using dqfx::q15;
using dqfx::q31;

template <class... T> struct type_list {};
using all_types = type_list<q15, q31, float, double>;

/// Marsaglia's xorshift32 (G. Marsaglia, "Xorshift RNGs", Journal of Statistical
/// Software 8(14), 2003): the same sequence on every platform.
class random_bits {
 public:
  explicit constexpr random_bits(std::uint32_t seed) noexcept : state_{seed} {}
  constexpr std::uint32_t next() noexcept {
    state_ ^= state_ << 13;
    state_ ^= state_ >> 17;
    state_ ^= state_ << 5;
    return state_;
  }

 private:
  std::uint32_t state_;
};

/// A value of T spread uniformly over [-1, 1), with one draw in sixteen a corner case
/// (-1, the largest value: 1 - lsb for q15/q31 and 1 for float/double, or zero).
template <class T>
T any_value(random_bits& r) noexcept {
  const std::uint32_t u = r.next();
  if ((u & 15u) == 0) {
    switch ((u >> 4) % 3) {
      case 0: return dqfx::from_double<T>(-1.0);
      case 1: return dqfx::from_double<T>(1.0);
      default: return T{};
    }
  }
  if constexpr (std::is_same_v<T, q15>) {
    return q15::from_raw(static_cast<std::int16_t>(static_cast<std::int32_t>(u >> 16) - 32768));
  } else if constexpr (std::is_same_v<T, q31>) {
    return q31::from_raw(static_cast<std::int32_t>(static_cast<std::int64_t>(u) - 2147483648));
  } else if constexpr (std::is_same_v<T, float>) {
    return static_cast<float>(static_cast<std::int32_t>(u >> 8) - 8388608) * (1.0f / 8388608.0f);
  } else {
    const std::uint64_t w = (std::uint64_t{u} << 21) ^ (r.next() >> 11);  // 53 bits
    return static_cast<double>(static_cast<std::int64_t>(w) - (std::int64_t{1} << 52)) *
           (1.0 / 4503599627370496.0);
  }
}

inline dqfx::angle any_angle(random_bits& r) noexcept { return dqfx::angle::from_raw(r.next()); }

/// What a kernel is to the report: the textbook baseline, a whole current-loop step (its
/// ratio to the baseline is shown) or a part of one.
enum class role { part, step, baseline };
inline constexpr const char* role_names[] = {"part", "step", "baseline"};

// Kernels of the number layer.

struct multiply {
  static constexpr const char* name = "a*b";
  using types = all_types;
  template <class T> struct input { T a, b; };
  template <class T> using output = T;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_value<T>(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return in.a * in.b;
  }
};

struct gain_multiply {
  static constexpr const char* name = "a*gain";
  using types = all_types;
  template <class T> struct input { T a; };
  template <class T> using output = T;
  template <class T> static input<T> make(random_bits& r) noexcept { return {any_value<T>(r)}; }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    constexpr auto two_over_sqrt3 = dqfx::gain<T>::from_double(1.1547005383792515);
    return in.a * two_over_sqrt3;
  }
};

struct sum_of_products {
  static constexpr const char* name = "sum_of_products";
  using types = all_types;
  template <class T> struct input { T a, b, c, d; };
  template <class T> using output = T;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_value<T>(r), any_value<T>(r), any_value<T>(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::sum_of_products(in.a, in.b, in.c, in.d);
  }
};

struct angle_advance {
  static constexpr const char* name = "angle_rate::advance";
  using types = all_types;
  template <class T> struct input { dqfx::angle a; T speed; };
  template <class T> using output = dqfx::angle;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_angle(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    // Invented scale: per-unit speed 1 is 2*pi*800 rad/s electrical, sampled at 20 kHz.
    constexpr auto rate = dqfx::angle_rate<T>::from_base(5026.548245743669, 1.0 / 20000.0);
    return rate.advance(in.a, in.speed);
  }
};

// Trigonometry.

struct sine_cosine {
  static constexpr const char* name = "sincos_of";
  using types = all_types;
  template <class T> struct input { dqfx::angle a; };
  template <class T> using output = dqfx::sincos<T>;
  template <class T> static input<T> make(random_bits& r) noexcept { return {any_angle(r)}; }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::sincos_of<T>(in.a);
  }
};

struct vector_angle {
  static constexpr const char* name = "angle_of";
  using types = all_types;
  template <class T> using input = dqfx::stationary<T>;
  template <class T> using output = dqfx::angle;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_value<T>(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::angle_of(in);
  }
};

struct vector_magnitude {
  static constexpr const char* name = "magnitude";
  using types = all_types;
  template <class T> using input = dqfx::stationary<T>;
  template <class T> using output = T;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_value<T>(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::magnitude(in);
  }
};

// Frame transforms and modulation.

struct clarke_transform {
  static constexpr const char* name = "clarke";
  using types = all_types;
  template <class T> using input = dqfx::phases<T>;
  template <class T> using output = dqfx::stationary<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {any_value<T>(r), any_value<T>(r), any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::clarke(in);
  }
};


struct park_transform {
  static constexpr const char* name = "park";
  using types = all_types;
  template <class T> struct input { dqfx::stationary<T> v; dqfx::sincos<T> angle; };
  template <class T> using output = dqfx::rotating<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {{any_value<T>(r), any_value<T>(r)}, dqfx::sincos_of<T>(any_angle(r))};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::park(in.v, in.angle);
  }
};

struct inverse_park_transform {
  static constexpr const char* name = "inverse_park";
  using types = all_types;
  template <class T> struct input { dqfx::rotating<T> v; dqfx::sincos<T> angle; };
  template <class T> using output = dqfx::stationary<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {{any_value<T>(r), any_value<T>(r)}, dqfx::sincos_of<T>(any_angle(r))};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::inverse_park(in.v, in.angle);
  }
};

struct space_vector_modulation {
  static constexpr const char* name = "svm";
  using types = all_types;
  template <class T> using input = dqfx::stationary<T>;
  template <class T> using output = dqfx::phases<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Commands relative to the bus up to 0.7 per axis: some beyond the linear range.
    const T scale = dqfx::from_double<T>(0.7);
    return {any_value<T>(r) * scale, any_value<T>(r) * scale};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::svm(in).duty;
  }
};

struct svm_with_bus {
  static constexpr const char* name = "svm(bus)";
  using types = all_types;
  template <class T> struct input { dqfx::stationary<T> command; T bus; };
  template <class T> using output = dqfx::phases<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // The current loop's use: a bus from 0.6 to 1 and commands up to 0.7 of it per axis.
    const double bus = 0.8 + 0.2 * dqfx::to_double(any_value<T>(r));
    const double x = 0.7 * bus * dqfx::to_double(any_value<T>(r)), y = 0.7 * bus * dqfx::to_double(any_value<T>(r));
    return {{dqfx::from_double<T>(x), dqfx::from_double<T>(y)}, dqfx::from_double<T>(bus)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::svm(in.command, in.bus).duty;
  }
};

// Regulation.

struct pi_step {
  static constexpr const char* name = "pi_regulator::step";
  using types = all_types;
  template <class T> struct input {
    dqfx::pi_regulator<T> regulator;
    T error;
  };
  template <class T> using output = T;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Invented tuning: kp 0.8, ki 0.05 per sample, tracking gain 0.5, limits +/-0.9.
    dqfx::pi_regulator<T> regulator{dqfx::pi_parameters{0.8, 0.05, 0.5, -0.9, 0.9}};
    regulator.preload(any_value<T>(r) * dqfx::from_double<T>(0.9));
    return {regulator, any_value<T>(r)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    return in.regulator.step(in.error);
  }
};

// The whole current-loop step, the figure to set beside the textbook baseline.

struct current_step {
  static constexpr const char* name = "current_loop::step";
  using types = all_types;
  template <class T> struct input {
    dqfx::current_loop<T> loop;
    dqfx::phases<T> current;
    dqfx::angle rotor;
    T speed;
    dqfx::rotating<T> setpoint;
    T bus;
  };
  template <class T> using output = dqfx::phases<T>;

  /// Invented drive and motor: 12 A and 24 V peak bases, 2*pi*600 rad/s electrical,
  /// 4 pole pairs; 0.12 ohm, 0.1 mH / 0.14 mH, 3 mWb; 400 Hz bandwidth at 20 kHz.
  static constexpr dqfx::current_loop_parameters parameters = dqfx::design_current_loop(
      dqfx::per_unit_base{12.0, 24.0, 3769.9111843077517, 4}, dqfx::pm_motor_data{0.12, 0.1e-3, 0.14e-3, 0.003},
      2513.2741228718346, 50e-6);

  template <class T> static input<T> make(random_bits& r) noexcept {
    // Two measured currents and c = -a - b (no libm: inputs must be the same everywhere),
    // integrators anywhere, speed, set-points and bus voltage varied: the voltage limit
    // is reached on a part of the inputs.
    const double ia = 0.45 * dqfx::to_double(any_value<T>(r));
    const double ib = 0.45 * dqfx::to_double(any_value<T>(r));
    input<T> in{dqfx::current_loop<T>{parameters},
                {dqfx::from_double<T>(ia), dqfx::from_double<T>(ib), dqfx::from_double<T>(-ia - ib)},
                any_angle(r),
                dqfx::from_double<T>(0.6 * dqfx::to_double(any_value<T>(r))),
                {dqfx::from_double<T>(-0.1), dqfx::from_double<T>(0.6 * dqfx::to_double(any_value<T>(r)))},
                dqfx::from_double<T>(0.8 + 0.2 * dqfx::to_double(any_value<T>(r)))};
    in.loop.d_regulator().preload(dqfx::from_double<T>(0.3 * dqfx::to_double(any_value<T>(r))));
    in.loop.q_regulator().preload(dqfx::from_double<T>(0.5 * dqfx::to_double(any_value<T>(r))));
    return in;
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    const dqfx::current_loop_input<T> period{in.current, dqfx::sincos_of<T>(in.rotor), in.speed,
                                             in.setpoint, in.bus};
    return in.loop.step(period).duty;
  }
  static constexpr role kind = role::step;
};

// The step split into its phases, for the report's phase table: each phase timed alone,
// on the inputs `current_step` draws, with what the earlier phases made computed while
// the inputs are filled. The phases' sum is near, not equal to, the whole step (each
// wrapper has its own loads, stores and call). q15 and float only: more call sites of the
// regulator's steps change GCC's inlining of q31's pi_regulator::step (timed above).
using phase_types = type_list<q15, float>;

struct step_phase_sincos : current_step {
  static constexpr const char* name = "step.1:sincos";
  using types = phase_types;
  static constexpr role kind = role::part;
  template <class T> using output = dqfx::sincos<T>;
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::sincos_of<T>(in.rotor);
  }
};

struct step_phase_frames {
  static constexpr const char* name = "step.2:clarke+park";
  using types = phase_types;
  template <class T> struct input { dqfx::phases<T> current; dqfx::sincos<T> rotor; };
  template <class T> using output = dqfx::rotating<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    const current_step::input<T> s = current_step::make<T>(r);
    return {s.current, dqfx::sincos_of<T>(s.rotor)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::park(dqfx::clarke(in.current), in.rotor);
  }
};

/// The two regulators and the motor's feed-forward constants, as the loop holds them.
template <class T> struct step_regulators {
  using access = dqfx::detail::pi_internals;
  dqfx::pi_regulator<T> d, q;
  dqfx::gain<T> ld = dqfx::gain<T>::from_double(current_step::parameters.ld);
  dqfx::gain<T> lq = dqfx::gain<T>::from_double(current_step::parameters.lq);
  dqfx::gain<T> flux = dqfx::gain<T>::from_double(current_step::parameters.flux);
  /// The proposals of both regulators with the feed-forward (phase 3).
  [[gnu::always_inline]] std::pair<dqfx::pi_proposal<T>, dqfx::pi_proposal<T>> propose(
      dqfx::rotating<T> current, T w, dqfx::rotating<T> setpoint) const noexcept {
    const T feed_d = -((w * current.q) * lq);
    const T feed_q = (w * current.d) * ld + w * flux;
    return {access::propose(d, setpoint.d, current.d, feed_d), access::propose(q, setpoint.q, current.q, feed_q)};
  }
  static step_regulators of(const current_step::input<T>& s) noexcept {
    return {s.loop.d_regulator(), s.loop.q_regulator()};
  }
};

struct step_phase_regulators {
  static constexpr const char* name = "step.3:feed-forward+PI";
  using types = phase_types;
  template <class T> struct input {
    step_regulators<T> regulators;
    dqfx::rotating<T> current, setpoint;
    T speed, bus;
  };
  template <class T> using output = dqfx::rotating<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    const current_step::input<T> s = current_step::make<T>(r);
    return {step_regulators<T>::of(s), dqfx::park(dqfx::clarke(s.current), dqfx::sincos_of<T>(s.rotor)), s.setpoint,
            s.speed, s.bus};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    const auto p = in.regulators.propose(in.current, in.speed, in.setpoint);
    return {p.first.output, p.second.output};
  }
};

struct step_phase_limit {
  static constexpr const char* name = "step.4:limit+anti-windup";
  using types = phase_types;
  template <class T> struct input {
    step_regulators<T> regulators;
    dqfx::pi_proposal<T> d, q;
    T radius;
  };
  template <class T> using output = dqfx::rotating<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    const step_phase_regulators::input<T> s = step_phase_regulators::make<T>(r);
    const auto p = s.regulators.propose(s.current, s.speed, s.setpoint);
    return {s.regulators, p.first, p.second, s.bus * dqfx::gain<T>::from_double(0.57735026918962576451)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    using access = dqfx::detail::pi_internals;
    using recipe = dqfx::detail::loop_recipe<T>;
    const T r = in.radius, ud = in.d.output, uq = in.q.output;
    const T vd = ud > r ? r : (ud < -r ? -r : ud);
    const T vq = recipe::template limit<false>(r, vd, uq);
    const auto xd = access::next_integral(in.regulators.d, in.d, vd);
    const auto xq = access::next_integral(in.regulators.q, in.q, vq);
    if (recipe::finite(in.d.sum, in.q.sum, xd, xq)) {
      access::store(in.regulators.d, xd);
      access::store(in.regulators.q, xq);
    }
    return {vd, vq};
  }
};

struct step_phase_modulation {
  static constexpr const char* name = "step.5:inverse_park+svm(bus)";
  using types = phase_types;
  template <class T> struct input {
    dqfx::rotating<T> voltage;
    dqfx::sincos<T> rotor;
    T bus;
  };
  template <class T> using output = dqfx::phases<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    current_step::input<T> s = current_step::make<T>(r);
    const dqfx::sincos<T> rotor = dqfx::sincos_of<T>(s.rotor);
    const auto out = s.loop.step({s.current, rotor, s.speed, s.setpoint, s.bus});
    return {out.voltage, rotor, s.bus};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    namespace d = dqfx::detail;
    return d::modulate<dqfx::modulation::centred, dqfx::overmodulation::keep_angle, false>(
               dqfx::inverse_park(in.voltage, in.rotor), dqfx::extended<T>{in.bus})
        .duty;
  }
};

// The comparison figure.

struct textbook_current_step {
  static constexpr const char* name = "textbook_step";
  using types = type_list<float>;
  template <class T> struct input {
    textbook_loop loop;
    textbook_measurement measured;
  };
  template <class T> using output = textbook_duties;
  template <class T> static input<T> make(random_bits& r) noexcept {
    input<T> in{};
    in.loop = {0.5f * any_value<float>(r), 0.5f * any_value<float>(r)};
    in.measured.ia = 0.9f * any_value<float>(r);
    in.measured.ib = 0.9f * any_value<float>(r);
    in.measured.theta = static_cast<float>(r.next() >> 8) * (6.2831853f / 16777216.0f);
    in.measured.id_ref = 0.0f;
    in.measured.iq_ref = 0.5f * any_value<float>(r);
    return in;
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    return textbook_step(in.loop, in.measured);
  }
  static constexpr role kind = role::baseline;
};


// Angle and speed estimators (invented drive: 20 kHz, speed 1.0 = 1000 Hz electrical).

/// Angle and speed; fixed-point speeds as a 32-bit raw value (no padding to compare).
template <class T> struct estimate {
  using speed_type = std::conditional_t<dqfx::is_fixed_v<T>, std::int32_t, T>;
  dqfx::angle position;
  speed_type speed;
  static estimate of(dqfx::angle a, T v) noexcept {
    if constexpr (dqfx::is_fixed_v<T>) {
      return {a, static_cast<std::int32_t>(v.raw())};
    } else {
      return {a, v};
    }
  }
};

struct pll_update {
  static constexpr const char* name = "tracking_pll::update";
  using types = all_types;
  template <class T> struct input {
    dqfx::tracking_pll<T> pll;
    dqfx::angle measured;
  };
  template <class T> using output = estimate<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    dqfx::tracking_pll<T> pll{dqfx::tracking_pll_parameters{502.65, 1.0, 6283.1853, 50e-6}};
    const dqfx::angle a = dqfx::angle::from_raw(r.next());
    pll.reset(a, any_value<T>(r) * dqfx::from_double<T>(0.5));
    return {pll, a + dqfx::angle::from_raw(r.next() >> 8)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    in.pll.update(in.measured);
    return estimate<T>::of(in.pll.electrical_angle(), in.pll.speed());
  }
};

struct encoder_update {
  static constexpr const char* name = "encoder::update";
  using types = all_types;
  template <class T> struct input {
    dqfx::encoder<T> encoder;
    std::uint32_t count, edge, now;
  };
  template <class T> using output = estimate<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    dqfx::encoder_parameters p{};
    p.counts_per_turn = 4000;
    p.pole_pairs = 4;
    p.base_speed = 6283.1853;
    p.sample_time = 50e-6;
    p.tick_frequency = 100e6;
    p.filter_bandwidth = 2000;
    dqfx::encoder<T> e{p};
    const std::uint32_t c = r.next() & 0xFFFFu;
    for (std::uint32_t k = 0; k < 20; ++k) e.update((c + 15 * k) & 0xFFFFu, 5000 * k - 40, 5000 * k);
    return {e, (c + 15 * 20 + (r.next() & 7u)) & 0xFFFFu, 5000 * 20 - 33, 5000 * 20};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    in.encoder.update(in.count, in.edge, in.now);
    return estimate<T>::of(in.encoder.electrical_angle(), in.encoder.speed());
  }
};

struct hall_update {
  static constexpr const char* name = "hall_sensor::update";
  using types = all_types;
  template <class T> struct input {
    dqfx::hall_sensor<T> hall;
    std::uint8_t state;
    std::uint32_t edge, now;
  };
  template <class T> using output = estimate<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    constexpr std::uint8_t order[6] = {1, 3, 2, 6, 4, 5};
    dqfx::hall_sensor<T> h{dqfx::hall_parameters{
        dqfx::hall_table::evenly({1, 3, 2, 6, 4, 5}, dqfx::angle::from_degrees(-30)), 6283.1853, 50e-6, 10e6, 0.005}};
    const std::uint32_t first = r.next() % 6;
    for (std::uint32_t k = 0; k < 3; ++k) h.update(order[(first + k) % 6], 5000 * k, 5000 * k + 100);
    // Either the next edge now or a sample between edges.
    const bool edge = (r.next() & 1u) != 0;
    const std::uint8_t s = order[(first + (edge ? 3 : 2)) % 6];
    return {h, s, edge ? 15000u : 10000u, 15000u + (r.next() & 1023u)};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    in.hall.update(in.state, in.edge, in.now);
    return estimate<T>::of(in.hall.electrical_angle(), in.hall.speed());
  }
};

struct observer_update {
  static constexpr const char* name = "flux_observer::update";
  using types = all_types;
  template <class T> struct input {
    dqfx::flux_observer<T> observer;
    dqfx::stationary<T> current, voltage;
  };
  template <class T> using output = estimate<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Invented interior-magnet motor in per unit (R, Ld, Lq, flux).
    dqfx::flux_observer_parameters p{};
    p.resistance = 0.0333;
    p.ld = 0.314;
    p.lq = 0.419;
    p.flux = 0.419;
    p.convergence_rate = 300;
    p.base_speed = 6283.1853;
    p.sample_time = 50e-6;
    p.pll_frequency = 502.65;
    p.minimum_speed = 0.05;
    dqfx::flux_observer<T> o{p};
    const dqfx::sincos<T> sc = dqfx::sincos_of<T>(dqfx::angle::from_raw(r.next()));
    o.reset(dqfx::angle::from_raw(r.next()), dqfx::from_double<T>(0.3));
    const T i = dqfx::from_double<T>(0.4), v = dqfx::from_double<T>(0.13);
    return {o, {-(i * sc.sin), i * sc.cos}, {-(v * sc.sin), v * sc.cos}};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(input<T>& in) noexcept {
    in.observer.update(in.current, in.voltage);
    return estimate<T>::of(in.observer.electrical_angle(), in.observer.speed());
  }
};

/// Every kernel the harness times, in report order.
template <class... K> struct kernel_list {};
using timed_kernels = kernel_list<textbook_current_step, current_step, step_phase_sincos, step_phase_frames,
                                  step_phase_regulators, step_phase_limit, step_phase_modulation, multiply, gain_multiply, sum_of_products,
                                  angle_advance, sine_cosine, vector_angle, vector_magnitude,
                                  clarke_transform, park_transform, inverse_park_transform,
                                  space_vector_modulation, svm_with_bus, pi_step, pll_update, encoder_update, hall_update,
                                  observer_update>;

// Adversarial inputs: the same kernels on the corner cases the fuzzers (tests/fuzz) probe,
// so that the report's worst case covers them, not only random inputs: saturation corners
// (-1, one LSB above it, 1 - LSB, 1, zero and one LSB either side), binary angles on the
// octant and sector boundaries and one unit either side, commands at the boundary of
// the linear modulation range (where over-modulation divides) and bus voltages down to
// one LSB (the longest division), regulators wound up against their limits.

/// A value from the saturation corners: -1, -1 + LSB, -1/2, -LSB, 0, LSB, 1/2, 1 - LSB,
/// 1 (saturated to max() for q15/q31); LSB is the machine epsilon for float and double.
template <class T>
T corner_value(random_bits& r) noexcept {
  constexpr double e = dqfx::number_traits<T>::lsb;
  constexpr double corners[] = {-1.0, -1.0 + e, -0.5, -e, 0.0, e, 0.5, 1.0 - e, 1.0};
  return dqfx::from_double<T>(corners[r.next() % 9]);
}

/// A binary angle on an octant or 60-degree sector boundary, or one unit either side.
inline dqfx::angle boundary_angle(random_bits& r) noexcept {
  const std::uint32_t u = r.next();
  const std::uint32_t k = (u >> 8) % 14;  // 8 octant and 6 sector boundaries (some shared)
  const std::uint32_t base = k < 8 ? k << 29 : static_cast<std::uint32_t>((std::uint64_t{k - 8} << 32) / 6);
  return dqfx::angle::from_raw(base + (u & 3u) - 1u);
}

/// A vector at a boundary angle with a length from just inside the linear range of space-
/// vector modulation (1/sqrt(3) relative to the bus) to well beyond it.
template <class T>
dqfx::stationary<T> boundary_vector(random_bits& r) noexcept {
  constexpr double lengths[] = {0.5, 0.5773, 0.5774, 0.75, 1.0};
  const dqfx::sincos<T> sc = dqfx::sincos_of<T>(boundary_angle(r));
  const T length = dqfx::from_double<T>(lengths[r.next() % 5]);
  return {sc.cos * length, sc.sin * length};
}

struct multiply_corners : multiply {
  static constexpr const char* name = "a*b@corners";
  template <class T> static input<T> make(random_bits& r) noexcept { return {corner_value<T>(r), corner_value<T>(r)}; }
};

struct sine_cosine_boundaries : sine_cosine {
  static constexpr const char* name = "sincos_of@boundaries";
  template <class T> static input<T> make(random_bits& r) noexcept { return {boundary_angle(r)}; }
};

struct vector_angle_corners : vector_angle {
  static constexpr const char* name = "angle_of@corners";
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Octant boundaries (x, +/-x), the axes, and vectors of one LSB.
    const T x = corner_value<T>(r);
    switch (r.next() % 3) {
      case 0: return {x, r.next() % 2 == 0 ? x : -x};
      case 1: return {x, T{}};
      default: return {corner_value<T>(r), corner_value<T>(r)};
    }
  }
};

struct vector_magnitude_corners : vector_magnitude {
  static constexpr const char* name = "magnitude@corners";
  template <class T> static input<T> make(random_bits& r) noexcept {
    return vector_angle_corners::make<T>(r);
  }
};

struct clarke_corners : clarke_transform {
  static constexpr const char* name = "clarke@corners";
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {corner_value<T>(r), corner_value<T>(r), corner_value<T>(r)};
  }
};

struct park_corners : park_transform {
  static constexpr const char* name = "park@corners";
  template <class T> static input<T> make(random_bits& r) noexcept {
    return {{corner_value<T>(r), corner_value<T>(r)}, dqfx::sincos_of<T>(boundary_angle(r))};
  }
};

struct svm_boundaries : space_vector_modulation {
  static constexpr const char* name = "svm@boundaries";
  template <class T> static input<T> make(random_bits& r) noexcept {
    return r.next() % 4 == 0 ? input<T>{corner_value<T>(r), corner_value<T>(r)} : boundary_vector<T>(r);
  }
};

struct svm_with_bus_corners {
  static constexpr const char* name = "svm(bus)@corners";
  using types = all_types;
  template <class T> struct input { dqfx::stationary<T> command; T bus; };
  template <class T> using output = dqfx::phases<T>;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Bus voltages from one LSB (every command over-modulates; the longest division) to 1.
    constexpr double e = dqfx::number_traits<T>::is_fixed ? dqfx::number_traits<T>::lsb : 1e-30;
    constexpr double buses[] = {e, 0.05, 0.36, 0.8, 1.0};
    return {boundary_vector<T>(r), dqfx::from_double<T>(buses[r.next() % 5])};
  }
  template <class T> [[gnu::always_inline]] static output<T> run(const input<T>& in) noexcept {
    return dqfx::svm(in.command, in.bus).duty;
  }
};

struct pi_step_corners : pi_step {
  static constexpr const char* name = "pi_regulator::step@corners";
  template <class T> static input<T> make(random_bits& r) noexcept {
    // The same invented tuning, the integrator wound up against a limit or beyond.
    dqfx::pi_regulator<T> regulator{dqfx::pi_parameters{0.8, 0.05, 0.5, -0.9, 0.9}};
    regulator.preload(corner_value<T>(r));
    return {regulator, corner_value<T>(r)};
  }
};

struct current_step_corners : current_step {
  static constexpr const char* name = "current_loop::step@corners";
  static constexpr role kind = role::part;
  template <class T> static input<T> make(random_bits& r) noexcept {
    // Saturated currents, speeds and set-points, a rotor on a sector boundary, a low or
    // full bus, wound-up integrators: the voltage limit and the modulator's division.
    constexpr double buses[] = {0.05, 0.36, 1.0};
    input<T> in{dqfx::current_loop<T>{parameters},
                {corner_value<T>(r), corner_value<T>(r), corner_value<T>(r)},
                boundary_angle(r),
                corner_value<T>(r),
                {corner_value<T>(r), corner_value<T>(r)},
                dqfx::from_double<T>(buses[r.next() % 3])};
    in.loop.d_regulator().preload(corner_value<T>(r));
    in.loop.q_regulator().preload(corner_value<T>(r));
    return in;
  }
};

using adversarial_kernels = kernel_list<current_step_corners, multiply_corners, sine_cosine_boundaries,
                                        vector_angle_corners, vector_magnitude_corners, clarke_corners,
                                        park_corners, svm_boundaries, svm_with_bus_corners, pi_step_corners>;

// The registry: one entry per (kernel, type).

/// The number of inputs per kernel (a board short of RAM may build with fewer).
#ifndef DQFX_TARGET_SAMPLES
#define DQFX_TARGET_SAMPLES 256
#endif
inline constexpr unsigned samples = DQFX_TARGET_SAMPLES;

using call_function = void (*)(void* input, void* output);

struct entry {
  const char* kernel;
  const char* type;
  call_function call;
  void (*fill)(unsigned char* inputs);  // writes `samples` inputs, 8-byte aligned
  std::size_t input_size;
  std::size_t output_size;
  bool exact;  // integer arithmetic: the target must match the host bit for bit
  role kind;
};

template <class T> constexpr const char* type_name() noexcept {
  return dqfx::number_traits<T>::name;
}

/// The timed call: reads one input (and updates it if the kernel has state), runs the
/// kernel (inlined here), writes one output.
template <class K, class T>
DQFX_TARGET_OPAQUE DQFX_TARGET_WHOLE void call(void* input, void* output) {
  using in_t = typename K::template input<T>;
  using out_t = typename K::template output<T>;
  ::new (output) out_t(K::template run<T>(*static_cast<in_t*>(input)));
}

template <class K, class T>
void fill(unsigned char* inputs) {
  using in_t = typename K::template input<T>;
  random_bits r{0x2545F491u};
  for (unsigned i = 0; i < samples; ++i) ::new (inputs + i * sizeof(in_t)) in_t(K::template make<T>(r));
}

template <class K, class = void> struct role_of : std::integral_constant<role, role::part> {};
template <class K>
struct role_of<K, std::void_t<decltype(K::kind)>> : std::integral_constant<role, K::kind> {};

template <class K, class T>
constexpr entry make_entry() noexcept {
  using in_t = typename K::template input<T>;
  using out_t = typename K::template output<T>;
  static_assert(alignof(in_t) <= 8 && alignof(out_t) <= 8, "records are 8-byte aligned");
  constexpr bool exact = dqfx::is_fixed_v<T>;
  // Outputs are compared as bytes: an exact kernel's output must have no padding.
  static_assert(!exact || std::has_unique_object_representations_v<out_t>, "padding in output");
  return entry{K::name,      type_name<T>(), &call<K, T>, &fill<K, T>, sizeof(in_t),
               sizeof(out_t), exact,          role_of<K>::value};
}

template <class K, class F, class... T>
void for_each_type(F& f, type_list<T...>) {
  (f(make_entry<K, T>()), ...);
}

template <class F, class... K>
void for_each_kernel(F& f, kernel_list<K...>) {
  (for_each_type<K>(f, typename K::types{}), ...);
}

/// Calls f(entry) for every (kernel, type) in `timed_kernels`.
template <class F>
void for_each_entry(F f) {
  for_each_kernel(f, timed_kernels{});
  for_each_kernel(f, adversarial_kernels{});
}

template <class K, class... T>
constexpr std::size_t largest_record(type_list<T...>) noexcept {
  return std::max({sizeof(typename K::template input<T>)..., sizeof(typename K::template output<T>)...});
}
template <class... K>
constexpr std::size_t largest_record(kernel_list<K...>) noexcept {
  return std::max({largest_record<K>(typename K::types{})...});
}
/// Bytes of the largest input or output record: the harness's buffers hold `samples` of
/// them.
inline constexpr std::size_t record_capacity =
    std::max(largest_record(timed_kernels{}), largest_record(adversarial_kernels{}));

/// FNV-1a, 64 bit (G. Fowler, L. C. Noll, K.-P. Vo; IETF draft-eastlake-fnv): a digest
/// of the outputs that host and target print and compare.
inline std::uint64_t digest(const unsigned char* bytes, std::size_t n) noexcept {
  std::uint64_t h = 0xcbf29ce484222325u;
  for (std::size_t i = 0; i < n; ++i) {
    h ^= bytes[i];
    h *= 0x100000001b3u;
  }
  return h;
}

}  // namespace dqfx_target
