// SPDX-License-Identifier: MIT
#pragma once
// Accuracy rows for the frame transforms and the modulator against the long double
// textbook reference of tests/reference/transforms_reference.hpp. Errors are taken
// against the exact result of the given inputs, clamped to the type's range.

#include <cmath>
#include <cstdint>
#include <random>
#include <type_traits>

#include "accuracy/table.hpp"
#include "dqfx/svm.hpp"
#include "dqfx/transforms.hpp"
#include "reference/transform_cases.hpp"
#include "reference/transforms_reference.hpp"

namespace dqfx_report {
namespace transforms_detail {

using real = long double;

template <class T> real exact_value(T x) { return static_cast<real>(dqfx::to_double(x)); }

/// Signed error against the exact value clamped to T's range.
template <class T> double error_of(T got, real exact) {
  if constexpr (dqfx::is_fixed_v<T>) {
    const real hi = exact_value(T::max()), lo = exact_value(T::lowest());
    exact = exact > hi ? hi : (exact < lo ? lo : exact);
  }
  return static_cast<double>(exact_value(got) - exact);
}

template <class T> T draw(std::mt19937_64& rng) {
  return dqfx::from_double<T>(std::uniform_real_distribution<double>(-1.0, 1.0)(rng));
}

template <class T> T raw15(int r) { return T::from_raw(static_cast<std::int16_t>(r)); }

template <class T>
void transform_rows(const char* clarke_bound, const char* park_bound, const char* power_bound) {
  namespace ref = dqfx_reference;
  error_stats clarke3, clarke2, inverse, rotation, power;
  std::mt19937_64 rng(3);
  if constexpr (std::is_same_v<T, dqfx::q15>) {
    // Every integer combination the q15 kernels form (see tests/test_transforms.cpp).
    for (int n = -65535; n <= 65535; ++n) {  // beta = (b - c) / sqrt3
      const int b = static_cast<int>(std::floor(n / 2.0)), c = b - n;
      const auto v = dqfx::clarke(dqfx::phases<T>{T{}, raw15<T>(b), raw15<T>(c)});
      clarke3.add(error_of(v.beta, ref::clarke_amplitude(0, b, c).beta / 32768));
    }
    for (int n = -3 * 32768; n <= 3 * 32767; ++n) {  // two-phase beta = (a + 2b) / sqrt3
      const long b0 = std::lround(n / 3.0);
      const int b = static_cast<int>(b0 > 32767 ? 32767 : (b0 < -32768 ? -32768 : b0)), a = n - 2 * b;
      const auto w = dqfx::clarke(raw15<T>(a), raw15<T>(b));
      clarke2.add(error_of(w.beta, ref::clarke_amplitude(a, b, -a - b).beta / 32768));
    }
    for (int beta = -32768; beta <= 32767; ++beta)
      for (int alpha = -32768; alpha <= 32767; alpha += 509) {
        const auto x = dqfx::inverse_clarke(dqfx::stationary<T>{raw15<T>(alpha), raw15<T>(beta)});
        const auto e = ref::inverse_clarke_amplitude(alpha / 32768.0L, beta / 32768.0L);
        inverse.add(error_of(x.a, e.a));
        inverse.add(error_of(x.b, e.b));
        inverse.add(error_of(x.c, e.c));
      }
  }
  for (int i = 0; i < 1'000'000; ++i) {
    const T a = draw<T>(rng), b = draw<T>(rng), c = draw<T>(rng), s = draw<T>(rng), k = draw<T>(rng);
    // Power-invariant results reach 2.12: float/double errors relative above 1.
    const auto scaled = [](double e, real exact) {
      return std::is_floating_point_v<T> ? e / static_cast<double>(std::fmax(1.0L, std::fabs(exact))) : e;
    };
    ref::each_transform_output(a, b, c, s, k, [&](ref::transform_family family, T got, real exact) {
      switch (family) {
        case ref::transform_family::clarke: clarke3.add(error_of(got, exact)); break;
        case ref::transform_family::clarke_two_phase: clarke2.add(error_of(got, exact)); break;
        case ref::transform_family::inverse_clarke: inverse.add(error_of(got, exact)); break;
        case ref::transform_family::rotation: rotation.add(error_of(got, exact)); break;
        default: power.add(scaled(error_of(got, exact), exact)); break;
      }
    });
  }
  const char* name = dqfx::number_traits<T>::name;
  const double lsb = dqfx::number_traits<T>::lsb;
  print_row("clarke (three phases)", name, clarke3, lsb, "LSB", clarke_bound);
  print_row("clarke (two phases)", name, clarke2, lsb, "LSB", clarke_bound);
  print_row("inverse_clarke", name, inverse, lsb, "LSB", clarke_bound);
  print_row("park, inverse_park", name, rotation, lsb, "LSB", park_bound);
  print_row("power_invariant clarke, inverse", name, power, lsb, "LSB", power_bound);
}

template <class T>
void modulation_rows(const char* bound, const char* bus_bound) {
  namespace ref = dqfx_reference;
  error_stats centred, discontinuous, with_bus;
  std::mt19937_64 rng(4);
  std::uniform_real_distribution<double> turn(0.0, 6.283185307179586), fraction(0.0, 0.995), bus(0.05, 0.999);
  auto add_duties = [](error_stats& s, const dqfx::phases<T>& d, const ref::abc& e, real shift) {
    s.add(error_of(d.a, e.a + shift));
    s.add(error_of(d.b, e.b + shift));
    s.add(error_of(d.c, e.c + shift));
  };
  for (int i = 0; i < 300'000; ++i) {
    const double t = turn(rng), m = fraction(rng) / 1.7320508075688772;
    const dqfx::stationary<T> v{dqfx::from_double<T>(m * std::cos(t)), dqfx::from_double<T>(m * std::sin(t))};
    const real alpha = exact_value(v.alpha), beta = exact_value(v.beta);
    add_duties(centred, dqfx::svm(v).duty, ref::dwell_time_duties(alpha, beta, ref::scheme::centred), 0);
    // clamp_low: the reference ties the lowest phase to 0 exactly as the kernel does.
    add_duties(discontinuous, dqfx::svm<dqfx::modulation::clamp_low>(v).duty,
               ref::dwell_time_duties(alpha, beta, ref::scheme::clamp_low), 0);
    const T vbus = dqfx::from_double<T>(bus(rng));
    const real b = exact_value(vbus);
    const dqfx::stationary<T> u{dqfx::from_double<T>(static_cast<double>(alpha * b)),
                                dqfx::from_double<T>(static_cast<double>(beta * b))};
    add_duties(with_bus, dqfx::svm(u, vbus).duty,
               ref::dwell_time_duties(exact_value(u.alpha) / b, exact_value(u.beta) / b, ref::scheme::centred), 0);
  }
  const char* name = dqfx::number_traits<T>::name;
  const double lsb = dqfx::number_traits<T>::lsb;
  print_row("svm centred, command / bus", name, centred, lsb, "LSB", bound);
  print_row("svm clamp_low, command / bus", name, discontinuous, lsb, "LSB", bound);
  print_row("svm centred, command and bus", name, with_bus, lsb, "LSB", bus_bound);
}

}  // namespace transforms_detail

inline void report_transforms() {
  using namespace transforms_detail;
  print_header("Frame transforms: q15 over every integer combination the kernels form plus 10^6 random "
               "inputs in [-1, 1); other types 10^6 random inputs. Modulation: 3*10^5 random commands "
               "inside the linear range against a classic sector/dwell-time modulator (duties). "
               "LSB is 2^-15 (q15), 2^-31 (q31), 2^-23 (float), 2^-52 (double).");
  transform_rows<dqfx::q15>("0.5 LSB", "0.5 LSB", "0.5 + 2^-16 LSB");
  transform_rows<dqfx::q31>("1 LSB", "0.5 LSB", "1 LSB");
  transform_rows<float>("2.4e-7 abs", "2.4e-7 abs", "2.4e-7 * max(1, |r|)");
  transform_rows<double>("4.5e-16 abs", "4.5e-16 abs", "4.5e-16 * max(1, |r|)");
  modulation_rows<dqfx::q15>("0.5 + 2^-11 LSB", "0.5 + 2^-10/bus LSB");
  modulation_rows<dqfx::q31>("0.75 LSB", "1.25 LSB");
  modulation_rows<float>("2.4e-7 abs", "4.8e-7 abs");
  modulation_rows<double>("5e-16 abs", "1e-15 abs");
}

}  // namespace dqfx_report
