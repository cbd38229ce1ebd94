// SPDX-License-Identifier: MIT
#pragma once
// Accuracy rows for sincos_of, angle_of and magnitude against the long double reference.

#include <cstdint>
#include <random>

#include "accuracy/table.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/sincos.hpp"
#include "reference/trig_reference.hpp"

namespace dqfx_report {

template <class T>
void sincos_rows(const char* bound) {
  namespace ref = dqfx_reference;
  error_stats s;
  std::mt19937 rng(1);
  // Every 16-bit angle, then a million random 32-bit angles.
  for (std::uint32_t i = 0; i < 65536 + 1'000'000; ++i) {
    const std::uint32_t raw = i < 65536 ? i << 16 : static_cast<std::uint32_t>(rng());
    const auto sc = dqfx::sincos_of<T>(dqfx::angle::from_raw(raw));
    s.add(static_cast<double>(ref::exact(sc.sin) - ref::sin_of_raw(raw)));
    s.add(static_cast<double>(ref::exact(sc.cos) - ref::cos_of_raw(raw)));
  }
  print_row("sincos_of", dqfx::number_traits<T>::name, s, dqfx::number_traits<T>::lsb, "LSB", bound);
}

template <class T>
T random_component(std::mt19937_64& rng) {
  return dqfx::from_double<T>(std::uniform_real_distribution<double>(-1.0, 1.0)(rng));
}

template <class T>
void polar_rows(const char* angle_bound, const char* magnitude_bound) {
  namespace ref = dqfx_reference;
  error_stats angle_error, magnitude_error;
  std::mt19937_64 rng(2);
  for (int i = 0; i < 1'000'000; ++i) {
    const dqfx::stationary<T> v{random_component<T>(rng), random_component<T>(rng)};
    const long double x = ref::exact(v.alpha), y = ref::exact(v.beta);
    const long double length = ref::length(x, y);
    if (length >= 0.05L) {
      angle_error.add(static_cast<double>(ref::turn_error(dqfx::angle_of(v).raw(), ref::angle_turns(x, y))));
    }
    magnitude_error.add(static_cast<double>(ref::exact(dqfx::magnitude(v)) - ref::saturated<T>(length)));
  }
  print_row("angle_of (length >= 0.05)", dqfx::number_traits<T>::name, angle_error, 1.0 / 4294967296.0,
            "2^-32 turn", angle_bound);
  print_row("magnitude", dqfx::number_traits<T>::name, magnitude_error, dqfx::number_traits<T>::lsb, "LSB",
            magnitude_bound);
}

inline void report_trig() {
  print_header("Trigonometry: sincos_of over all 16-bit angles and 10^6 random 32-bit angles; "
               "angle_of and magnitude over 10^6 random vectors in [-1, 1)^2. "
               "LSB is 2^-15 (q15), 2^-31 (q31), 2^-23 (float), 2^-52 (double).");
  sincos_rows<dqfx::q15>("1 LSB");
  sincos_rows<dqfx::q31>("2 LSB");
  sincos_rows<float>("1.2e-7 abs");
  sincos_rows<double>("1e-12 abs");
  polar_rows<dqfx::q15>("2^-18 turn", "0.5 LSB");
  polar_rows<dqfx::q31>("2^-28 turn", "0.5 LSB");
  polar_rows<float>("2^-24 turn", "2 ulp");
  polar_rows<double>("2^-31 turn", "2 ulp");
}

}  // namespace dqfx_report
