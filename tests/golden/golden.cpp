// SPDX-License-Identifier: MIT
// Golden vectors of the integer (q15/q31) kernels: every kernel runs on a fixed set of
// inputs (corner cases first, then pseudo-random ones) and the program prints, per kernel
// and type, the first vectors in full and a digest of all outputs. Integer arithmetic
// must give the same text with every compiler, language standard and optimisation level
// (and on the target): tests/golden/integer_kernels.txt is the checked-in copy, and
// `golden.*` tests compare against it. Regenerate it (only when a kernel's result is
// meant to change) with
//   cmake --build <build> --target dqfx_golden_update
#include <cstdint>
#include <cstdio>
#include <initializer_list>
#include <vector>

#include "dqfx/angle.hpp"
#include "dqfx/current_loop.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/number.hpp"
#include "dqfx/pi_regulator.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/pwm.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/svm.hpp"
#include "dqfx/transforms.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;

constexpr int printed_vectors = 12;
constexpr int random_inputs = 1500;

/// Marsaglia's xorshift32 (G. Marsaglia, "Xorshift RNGs", Journal of Statistical
/// Software 8(14), 2003): the same sequence everywhere.
struct xorshift {
  std::uint32_t state;
  std::uint32_t next() {
    state ^= state << 13;
    state ^= state >> 17;
    state ^= state << 5;
    return state;
  }
};

/// One kernel for one type: prints its first vectors and, at the end, the count and an
/// FNV-1a 64-bit digest (Fowler, Noll, Vo) of every output value.
class section {
 public:
  section(const char* kernel, const char* type) { std::printf("kernel %s %s\n", kernel, type); }
  section(const section&) = delete;
  section(section&&) = delete;
  section& operator=(const section&) = delete;
  section& operator=(section&&) = delete;
  ~section() { std::printf("  %d vectors, digest %016llx\n", count_, static_cast<unsigned long long>(digest_)); }

  void add(std::initializer_list<long long> in, std::initializer_list<long long> out) {
    for (long long v : out) {
      auto u = static_cast<unsigned long long>(v);
      for (int i = 0; i < 8; ++i) {
        digest_ ^= (u >> (8 * i)) & 0xFFu;
        digest_ *= 0x100000001b3ull;
      }
    }
    if (count_ < printed_vectors) {
      std::printf(" ");
      for (long long v : in) std::printf(" %llx", static_cast<unsigned long long>(v) & mask(v));
      std::printf(" ->");
      for (long long v : out) std::printf(" %llx", static_cast<unsigned long long>(v) & mask(v));
      std::printf("\n");
    }
    ++count_;
  }

 private:
  // Negative values print as 32-bit two's complement when they fit, else 64-bit.
  static unsigned long long mask(long long v) {
    return v >= -2147483648LL && v < 4294967296LL ? 0xFFFFFFFFull : ~0ull;
  }
  std::uint64_t digest_ = 0xcbf29ce484222325ull;
  int count_ = 0;
};

template <class T> const char* name() { return dqfx::number_traits<T>::name; }
template <class T> long long r(T v) { return v.raw(); }
long long r(dqfx::angle a) { return a.raw(); }

/// Inputs of a kernel: the corner values first (every combination for small arities is
/// the caller's loop), then pseudo-random raw values.
template <class T> std::vector<T> corners() {
  using raw = typename T::raw_type;
  constexpr raw lo = std::numeric_limits<raw>::min(), hi = std::numeric_limits<raw>::max();
  return {T::from_raw(lo), T::from_raw(lo + 1), T::from_raw(lo / 2), T::from_raw(-1), T{},
          T::from_raw(1),  T::from_raw(hi / 2), T::from_raw(hi - 1), T::from_raw(hi)};
}

template <class T> T random_value(xorshift& g) {
  if constexpr (std::is_same_v<T, q15>) {
    return q15::from_raw(static_cast<std::int16_t>(static_cast<std::int32_t>(g.next() >> 16) - 32768));
  } else {
    return q31::from_raw(static_cast<std::int32_t>(static_cast<std::int64_t>(g.next()) - 2147483648LL));
  }
}

/// Corner combinations of `arity` values, then random ones: calls f(values).
template <class T, class F> void for_inputs(int arity, F f) {
  const std::vector<T> c = corners<T>();
  std::vector<T> v(static_cast<std::size_t>(arity));
  std::size_t combos = 1;
  for (int i = 0; i < arity && combos < 1000; ++i) combos *= c.size();
  for (std::size_t k = 0; k < combos && arity <= 3; ++k) {
    std::size_t rest = k;
    for (auto& x : v) {
      x = c[rest % c.size()];
      rest /= c.size();
    }
    f(v);
  }
  xorshift g{0x9E3779B9u};
  for (int k = 0; k < random_inputs; ++k) {
    for (auto& x : v) x = random_value<T>(g);
    f(v);
  }
}

/// Angles: the quadrant and sector boundaries and their neighbours, then random ones.
template <class F> void for_angles(F f) {
  for (std::uint32_t k = 0; k < 12; ++k) {
    const std::uint32_t base = static_cast<std::uint32_t>((std::uint64_t{k} << 32) / 12);
    for (std::uint32_t d : {0u, 1u, 0xFFFFFFFFu}) f(dqfx::angle::from_raw(base + d));
  }
  xorshift g{0x2545F491u};
  for (int k = 0; k < random_inputs; ++k) f(dqfx::angle::from_raw(g.next()));
}

template <class T> void number_layer() {
  {
    section s{"multiply", name<T>()};
    for_inputs<T>(2, [&](const std::vector<T>& v) { s.add({r(v[0]), r(v[1])}, {r(v[0] * v[1])}); });
  }
  {
    section s{"add_subtract_negate_abs", name<T>()};
    for_inputs<T>(2, [&](const std::vector<T>& v) {
      s.add({r(v[0]), r(v[1])}, {r(v[0] + v[1]), r(v[0] - v[1]), r(-v[0]), r(dqfx::abs(v[0]))});
    });
  }
  {
    section s{"gain", name<T>()};
    constexpr auto two_over_sqrt3 = dqfx::gain<T>::from_double(1.1547005383792515);
    constexpr auto forty = dqfx::gain<T>::from_double(40.5);
    constexpr auto small = dqfx::gain<T>::from_double(-1.25e-4);
    for_inputs<T>(1, [&](const std::vector<T>& v) {
      s.add({r(v[0])}, {r(v[0] * two_over_sqrt3), r(v[0] * forty), r(v[0] * small)});
    });
  }
  {
    section s{"sum_difference_of_products", name<T>()};
    for_inputs<T>(4, [&](const std::vector<T>& v) {
      s.add({r(v[0]), r(v[1]), r(v[2]), r(v[3])},
            {r(dqfx::sum_of_products(v[0], v[1], v[2], v[3])), r(dqfx::difference_of_products(v[0], v[1], v[2], v[3]))});
    });
  }
  {
    section s{"from_double", name<T>()};
    xorshift g{12345u};
    for (int k = 0; k < random_inputs; ++k) {
      const auto m = static_cast<std::int32_t>(g.next());
      const double x = static_cast<double>(m) / 1073741824.0;  // exact, in [-2, 2)
      s.add({m}, {r(dqfx::from_double<T>(x))});
    }
  }
  {
    section s{"angle_rate_advance", name<T>()};
    constexpr auto rate = dqfx::angle_rate<T>::from_base(5026.548245743669, 1.0 / 20000.0);  // invented scale
    xorshift g{777u};
    for_inputs<T>(1, [&](const std::vector<T>& v) {
      const dqfx::angle a = dqfx::angle::from_raw(g.next());
      s.add({r(a), r(v[0])}, {r(rate.advance(a, v[0]))});
    });
  }
}

template <class T> void trigonometry() {
  {
    section s{"sincos_of", name<T>()};
    for_angles([&](dqfx::angle a) {
      const auto sc = dqfx::sincos_of<T>(a);
      s.add({r(a)}, {r(sc.sin), r(sc.cos)});
    });
  }
  {
    section s{"angle_of_magnitude", name<T>()};
    for_inputs<T>(2, [&](const std::vector<T>& v) {
      const dqfx::stationary<T> x{v[0], v[1]};
      s.add({r(v[0]), r(v[1])}, {r(dqfx::angle_of(x)), r(dqfx::magnitude(x))});
    });
  }
}

template <class T> void transforms() {
  {
    section s{"clarke", name<T>()};
    for_inputs<T>(3, [&](const std::vector<T>& v) {
      const auto a = dqfx::clarke(dqfx::phases<T>{v[0], v[1], v[2]});
      const auto p = dqfx::clarke<dqfx::power_invariant>(dqfx::phases<T>{v[0], v[1], v[2]});
      const auto two = dqfx::clarke(v[0], v[1]);
      s.add({r(v[0]), r(v[1]), r(v[2])}, {r(a.alpha), r(a.beta), r(p.alpha), r(p.beta), r(two.alpha), r(two.beta)});
    });
  }
  {
    section s{"inverse_clarke", name<T>()};
    for_inputs<T>(2, [&](const std::vector<T>& v) {
      const auto a = dqfx::inverse_clarke(dqfx::stationary<T>{v[0], v[1]});
      const auto p = dqfx::inverse_clarke<dqfx::power_invariant>(dqfx::stationary<T>{v[0], v[1]});
      s.add({r(v[0]), r(v[1])}, {r(a.a), r(a.b), r(a.c), r(p.a), r(p.b), r(p.c)});
    });
  }
  {
    section s{"park_inverse_park", name<T>()};
    xorshift g{4242u};
    for_inputs<T>(2, [&](const std::vector<T>& v) {
      const dqfx::angle a = dqfx::angle::from_raw(g.next());
      const auto sc = dqfx::sincos_of<T>(a);
      const auto dq = dqfx::park(dqfx::stationary<T>{v[0], v[1]}, sc);
      const auto ab = dqfx::inverse_park(dqfx::rotating<T>{v[0], v[1]}, sc);
      s.add({r(v[0]), r(v[1]), r(a)}, {r(dq.d), r(dq.q), r(ab.alpha), r(ab.beta)});
    });
  }
}

template <class T, class S, class L> void modulation_scheme(const char* kernel) {
  section s{kernel, name<T>()};
  auto record = [&](dqfx::stationary<T> c, T bus) {
    const auto m = dqfx::svm<S, L>(c);
    const auto b = dqfx::svm<S, L>(c, bus);
    s.add({r(c.alpha), r(c.beta), r(bus)},
          {r(m.duty.a), r(m.duty.b), r(m.duty.c), m.sector, m.limited, m.fault, r(b.duty.a), r(b.duty.b),
           r(b.duty.c), b.sector, b.limited, b.fault});
  };
  // Sector boundaries at magnitudes around the linear limit 1/sqrt(3) = 0.577.
  for_angles([&](dqfx::angle a) {
    const auto sc = dqfx::sincos_of<T>(a);
    for (double m : {0.3, 0.5773, 0.5774, 0.99}) {
      const T k = dqfx::from_double<T>(m);
      record({sc.cos * k, sc.sin * k}, dqfx::from_double<T>(m + 0.25));
    }
  });
  for_inputs<T>(3, [&](const std::vector<T>& v) { record({v[0], v[1]}, v[2]); });
}

template <class T> void modulation() {
  namespace mod = dqfx::modulation;
  namespace over = dqfx::overmodulation;
  modulation_scheme<T, mod::sinusoidal, over::keep_angle>("svm_sinusoidal_keep_angle");
  modulation_scheme<T, mod::centred, over::keep_angle>("svm_centred_keep_angle");
  modulation_scheme<T, mod::centred, over::minimum_distance>("svm_centred_minimum_distance");
  modulation_scheme<T, mod::clamp_low, over::keep_angle>("svm_clamp_low_keep_angle");
  modulation_scheme<T, mod::clamp_high, over::minimum_distance>("svm_clamp_high_minimum_distance");
  modulation_scheme<T, mod::clamp_peak, over::keep_angle>("svm_clamp_peak_keep_angle");
  {
    section s{"pwm_compare_dead_time", name<T>()};
    constexpr dqfx::centre_aligned_pwm pwm{2100, 12};  // invented timer: 2100 counts, 12-count minimum pulse
    constexpr auto comp = dqfx::dead_time_compensation<T>::from_ratio(0.012, 0.04);
    for_inputs<T>(2, [&](const std::vector<T>& v) {
      const auto d = comp.apply({v[0], v[1], v[0]}, {v[1], v[0], -v[1]});
      s.add({r(v[0]), r(v[1])}, {pwm.compare(v[0]), r(d.a), r(d.b), r(d.c)});
    });
  }
}

template <class T> void sensing() {
  section s{"current_sensing", name<T>()};
  // Invented board: 12-bit converter, rails within 6 codes, 0.015 A per code inverted,
  // base current 25 A.
  constexpr dqfx::adc_format adc{12, 6};
  const auto channel = dqfx::current_channel<T>::from_amplifier(adc, -0.015, 25.0);
  const auto shifted = channel.with_offset(dqfx::from_double<T>(0.0071));
  const dqfx::three_shunt<T> three{{channel, shifted, channel}, dqfx::from_double<T>(0.08)};
  xorshift g{99u};
  for_inputs<T>(3, [&](const std::vector<T>& d) {
    const std::uint32_t bits = g.next();
    const dqfx::adc_sample a{static_cast<std::uint16_t>(bits & 4095u), (bits & 0x10000u) == 0};
    const dqfx::adc_sample b{static_cast<std::uint16_t>((bits >> 12) & 4095u), true};
    const dqfx::adc_sample c{static_cast<std::uint16_t>((bits >> 20) & 4095u), (bits & 0x20000u) == 0};
    const auto m = three.reconstruct({a, b, c}, {d[0], d[1], d[2]});
    s.add({a.code, a.present, b.code, c.code, c.present, r(d[0]), r(d[1]), r(d[2])},
          {r(m.current.a), r(m.current.b), r(m.current.c), m.valid, m.derived_phase, m.railed, m.missing});
  });
}

template <class T, class W> void regulator(const char* kernel) {
  section s{kernel, name<T>()};
  // Invented tuning with a large proportional gain (the split product of pi_regulator).
  dqfx::pi_regulator<T, W> pi{dqfx::pi_parameters{300.0, 0.02, 0.4, -0.7, 0.8}};
  dqfx::pi_regulator<T, W> soft{dqfx::pi_parameters{0.9, 0.003, 0.2, -0.5, 0.5}};
  for_inputs<T>(2, [&](const std::vector<T>& v) {
    const T a = pi.step(v[0], v[1]);
    const T b = soft.step(v[0]);
    s.add({r(v[0]), r(v[1])}, {r(a), r(pi.integral()), r(b), r(soft.integral())});
  });
}

template <class T> void current_loop() {
  section s{"current_loop_step", name<T>()};
  // Invented drive: 20 A, 60 V bases, 2*pi*1000 rad/s, 4 pole pairs; invented motor:
  // 0.1 ohm, 0.15 mH / 0.2 mH, 4 mWb; 500 Hz bandwidth at 20 kHz.
  constexpr auto p = dqfx::design_current_loop(dqfx::per_unit_base{20.0, 60.0, 6283.185307179586, 4},
                                               dqfx::pm_motor_data{0.1, 0.15e-3, 0.2e-3, 0.004}, 3141.592653589793,
                                               50e-6);
  dqfx::current_loop<T> loop{p};
  xorshift g{31337u};
  for_inputs<T>(3, [&](const std::vector<T>& v) {
    dqfx::current_loop_input<T> in{};
    in.current = {v[0], v[1], v[2]};
    const dqfx::angle a = dqfx::angle::from_raw(g.next());
    in.rotor = dqfx::sincos_of<T>(a);
    in.speed = v[1];
    in.setpoint = {v[2], v[0]};
    in.bus_voltage = v[0];
    const auto out = loop.step(in);
    s.add({r(v[0]), r(v[1]), r(v[2]), r(a)},
          {r(out.duty.a), r(out.duty.b), r(out.duty.c), r(out.voltage.d), r(out.voltage.q), out.sector,
           out.voltage_limited, out.fault});
  });
}

template <class T> void all() {
  number_layer<T>();
  trigonometry<T>();
  transforms<T>();
  modulation<T>();
  sensing<T>();
  regulator<T, dqfx::back_calculation>("pi_back_calculation");
  regulator<T, dqfx::conditional_integration>("pi_conditional_integration");
  current_loop<T>();
}

}  // namespace

int main() {
  std::printf("dqfx golden vectors of the integer kernels (inputs -> outputs, hexadecimal raw values)\n");
  all<q15>();
  all<q31>();
  return 0;
}
