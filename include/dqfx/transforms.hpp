// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The frame transforms of field-oriented control: Clarke (three phases to the
/// stator-fixed alpha/beta frame), its inverse, Park (alpha/beta to the rotor-fixed d/q
/// frame at a given sine and cosine) and its inverse.
///
/// Clarke comes in two scalings, chosen by a tag: `amplitude_invariant` (the default:
/// the vector is as long as a phase's peak) and `power_invariant` (an orthonormal
/// transform: v_alpha*i_alpha + v_beta*i_beta = v_a*i_a + v_b*i_b + v_c*i_c). Park is a
/// rotation and the same for both.
///
/// Error against the exact result of the given inputs (proven in tests/test_transforms.cpp):
///   q15   correctly rounded: within 0.5 LSB; saturated where the exact result is outside
///         [-1, 1). (Power-invariant inverse Clarke b and c, with two irrational constants,
///         within 0.5 + 2^-16 LSB.)
///   q31   within 1 LSB (Clarke 0.93, Park and inverse Park 0.5); saturated likewise
///   float within 2.4e-7 absolute for inputs in [-1, 1) (power-invariant results, which
///         reach 2.12, within 2.4e-7 * max(1, |result|))
///   double within 4.5e-16 absolute, in the same sense
/// Fixed-point Clarke forms the exact integer combination of the inputs (2a - b - c,
/// b - c, ...), multiplies it by a 32-bit constant exactly and rounds once (`scale`); Park
/// forms both products exactly and rounds their sum once.

#include "dqfx/extended.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"

namespace dqfx {

/// Clarke scaling where a balanced set of phase amplitude A gives a vector of length A.
struct amplitude_invariant {};
/// Clarke scaling that keeps power and vector products: the transform is orthonormal
/// and a balanced set of phase amplitude A gives a vector of length sqrt(3/2)*A.
struct power_invariant {};

namespace detail {

/// Constants of one Clarke scaling, in the forms the kernels use:
///   alpha = (2a - b - c) * alpha_of_abc,   beta = (b - c) * beta_of_bc,
///   two-phase alpha = a * alpha_of_a,      beta = (a + 2b) * beta_of_bc,
///   inverse a = alpha * a_of_alpha,        b, c = -alpha * bc_of_alpha +/- beta * bc_of_beta.
template <class Scaling> struct clarke_constants;

template <> struct clarke_constants<amplitude_invariant> {
  static constexpr double alpha_of_abc = 1.0 / 3.0;
  static constexpr double beta_of_bc = 0.57735026918962576451;  // 1/sqrt(3)
  static constexpr double alpha_of_a = 1.0;
  static constexpr double a_of_alpha = 1.0;
  static constexpr double bc_of_alpha = 0.5;
  static constexpr double bc_of_beta = 0.86602540378443864676;  // sqrt(3)/2
};

template <> struct clarke_constants<power_invariant> {
  static constexpr double alpha_of_abc = 0.40824829046386301637;  // 1/sqrt(6)
  static constexpr double beta_of_bc = 0.70710678118654752440;    // 1/sqrt(2)
  static constexpr double alpha_of_a = 1.22474487139158904910;    // sqrt(3/2)
  static constexpr double a_of_alpha = 0.81649658092772603273;    // sqrt(2/3)
  static constexpr double bc_of_alpha = 0.40824829046386301637;   // 1/sqrt(6)
  static constexpr double bc_of_beta = 0.70710678118654752440;    // 1/sqrt(2)
};

template <class Scaling, class T> struct clarke_gains {
  using c = clarke_constants<Scaling>;
  static constexpr precise_gain<T> alpha_of_abc = precise_gain<T>::from_double(c::alpha_of_abc);
  static constexpr precise_gain<T> beta_of_bc = precise_gain<T>::from_double(c::beta_of_bc);
  static constexpr precise_gain<T> alpha_of_a = precise_gain<T>::from_double(c::alpha_of_a);
  static constexpr precise_gain<T> a_of_alpha = precise_gain<T>::from_double(c::a_of_alpha);
  static constexpr precise_gain<T> bc_of_alpha = precise_gain<T>::from_double(c::bc_of_alpha);
  static constexpr precise_gain<T> bc_of_beta = precise_gain<T>::from_double(c::bc_of_beta);
};

}  // namespace detail

/// Clarke transform of three phase quantities (any sum; the zero-sequence part
/// a + b + c is dropped).
template <class Scaling = amplitude_invariant, class T>
constexpr stationary<T> clarke(phases<T> x) noexcept {
  using g = detail::clarke_gains<Scaling, T>;
  const exact_sum<T> a{x.a}, b{x.b}, c{x.c};
  return {scale(a * 2 - b - c, g::alpha_of_abc), scale(b - c, g::beta_of_bc)};
}

/// Clarke transform from phases a and b of a balanced set (c = -a - b), e.g. two current
/// sensors.
template <class Scaling = amplitude_invariant, class T>
constexpr stationary<T> clarke(T a, T b) noexcept {
  using g = detail::clarke_gains<Scaling, T>;
  const exact_sum<T> ea{a}, eb{b};
  return {scale(ea, g::alpha_of_a), scale(ea + eb * 2, g::beta_of_bc)};
}

/// Inverse Clarke transform: the balanced phase quantities of a stationary vector.
template <class Scaling = amplitude_invariant, class T>
constexpr phases<T> inverse_clarke(stationary<T> v) noexcept {
  using g = detail::clarke_gains<Scaling, T>;
  const exact_sum<T> alpha{v.alpha}, beta{v.beta};
  return {scale(alpha, g::a_of_alpha), scale(-alpha, g::bc_of_alpha, beta, g::bc_of_beta),
          scale(-alpha, g::bc_of_alpha, -beta, g::bc_of_beta)};
}

/// Park transform: the stationary vector seen from a frame turned by the angle whose
/// sine and cosine are given: d = alpha*cos + beta*sin, q = beta*cos - alpha*sin.
template <class T>
constexpr rotating<T> park(stationary<T> v, sincos<T> angle) noexcept {
  return {sum_of_products(v.alpha, angle.cos, v.beta, angle.sin),
          difference_of_products(v.beta, angle.cos, v.alpha, angle.sin)};
}

/// Inverse Park transform: alpha = d*cos - q*sin, beta = d*sin + q*cos.
template <class T>
constexpr stationary<T> inverse_park(rotating<T> v, sincos<T> angle) noexcept {
  return {difference_of_products(v.d, angle.cos, v.q, angle.sin),
          sum_of_products(v.d, angle.sin, v.q, angle.cos)};
}

}  // namespace dqfx
