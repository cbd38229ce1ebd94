// SPDX-License-Identifier: MIT
#pragma once
// One random input set through every dqfx frame transform, each output paired with its
// exact value from the textbook reference (transforms_reference.hpp): the test suite
// and the accuracy report measure the same cases, each with its own error metric.

#include "dqfx/transforms.hpp"
#include "reference/transforms_reference.hpp"

namespace dqfx_reference {

enum class transform_family {
  clarke,                  ///< amplitude-invariant, three phases
  clarke_two_phase,        ///< amplitude-invariant, from a and b of a balanced set
  inverse_clarke,          ///< amplitude-invariant
  rotation,                ///< park and inverse_park
  power_clarke,            ///< power-invariant, three phases
  power_clarke_two_phase,  ///< power-invariant, two phases
  power_inverse_clarke,    ///< power-invariant inverse
};

/// Calls `check(family, got, exact)` for every output of every transform on phases or
/// stationary/rotating values made of (a, b, c) and the sine/cosine pair (s, k).
template <class T, class Check>
void each_transform_output(T a, T b, T c, T s, T k, Check&& check) {
  using f = transform_family;
  const real ra = dqfx::to_double(a), rb = dqfx::to_double(b), rc = dqfx::to_double(c);
  const real rs = dqfx::to_double(s), rk = dqfx::to_double(k);
  const auto pair = [&](f family, auto got, ab exact) {
    check(family, got.alpha, exact.alpha);
    check(family, got.beta, exact.beta);
  };
  const auto triple = [&](f family, dqfx::phases<T> got, abc exact) {
    check(family, got.a, exact.a);
    check(family, got.b, exact.b);
    check(family, got.c, exact.c);
  };
  pair(f::clarke, dqfx::clarke(dqfx::phases<T>{a, b, c}), clarke_amplitude(ra, rb, rc));
  pair(f::clarke_two_phase, dqfx::clarke(a, b), clarke_amplitude(ra, rb, -ra - rb));
  triple(f::inverse_clarke, dqfx::inverse_clarke(dqfx::stationary<T>{a, b}), inverse_clarke_amplitude(ra, rb));
  const auto dq = dqfx::park(dqfx::stationary<T>{a, b}, dqfx::sincos<T>{s, k});
  const ab edq = park(ra, rb, rs, rk);
  check(f::rotation, dq.d, edq.alpha);
  check(f::rotation, dq.q, edq.beta);
  pair(f::rotation, dqfx::inverse_park(dqfx::rotating<T>{a, b}, dqfx::sincos<T>{s, k}), inverse_park(ra, rb, rs, rk));
  pair(f::power_clarke, dqfx::clarke<dqfx::power_invariant>(dqfx::phases<T>{a, b, c}), clarke_power(ra, rb, rc));
  pair(f::power_clarke_two_phase, dqfx::clarke<dqfx::power_invariant>(a, b), clarke_power(ra, rb, -ra - rb));
  triple(f::power_inverse_clarke, dqfx::inverse_clarke<dqfx::power_invariant>(dqfx::stationary<T>{a, b}),
         inverse_clarke_power(ra, rb));
}

}  // namespace dqfx_reference
