// SPDX-License-Identifier: MIT
// Uses the q15/q31 paths of every fixed-point kernel there is. cmake/check_no_libm.cmake
// builds it for Cortex-M and links it without libm (and without libstdc++): the link
// succeeding, and no undefined symbol that libm defines, prove the fixed-point paths
// need neither. Kernels join as their headers appear.

#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/fixed.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#if __has_include("dqfx/sincos.hpp")
#include "dqfx/sincos.hpp"
#define DQFX_HAVE_SINCOS 1
#endif
#if __has_include("dqfx/polar.hpp")
#include "dqfx/polar.hpp"
#define DQFX_HAVE_POLAR 1
#endif

// volatile inputs and outputs: nothing can be folded away at compile time.
volatile std::int32_t input_a = 12345, input_b = -23456;
volatile std::uint32_t input_angle = 0x12345678u;
volatile double input_double = 0.3;
volatile std::int64_t output;

template <class T>
void exercise() {
  using raw = typename T::raw_type;
  const T a = T::from_raw(static_cast<raw>(input_a)), b = T::from_raw(static_cast<raw>(input_b));
  constexpr auto two_over_sqrt3 = dqfx::gain<T>::from_double(1.1547005383792515);
  T r = (a + b) - a * b;
  r = dqfx::abs(-r) * two_over_sqrt3;
  r = dqfx::sum_of_products(r, a, b, b) + dqfx::difference_of_products(a, b, r, a);
  r = r + dqfx::from_double<T>(input_double);  // runtime conversion: soft-float, not libm
  output = r.raw();

  constexpr auto rate = dqfx::angle_rate<T>::from_base(3000.0, 1e-4);
  const dqfx::angle th = rate.advance(dqfx::angle::from_raw(input_angle), a);
  output = dqfx::electrical(th, 4).raw();
#if DQFX_HAVE_SINCOS
  const dqfx::sincos<T> sc = dqfx::sincos_of<T>(th);
  output = sc.sin.raw() + sc.cos.raw();
#endif
#if DQFX_HAVE_POLAR
  const dqfx::stationary<T> v{a, b};
  output = dqfx::angle_of(v).raw();
  output = dqfx::magnitude(v).raw();
#endif
}

int main() {
  exercise<dqfx::q15>();
  exercise<dqfx::q31>();
  return 0;
}
