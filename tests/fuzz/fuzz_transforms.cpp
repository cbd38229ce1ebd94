// SPDX-License-Identifier: MIT
// Fuzz harness: Clarke (both scalings, three-phase and two-phase forms), inverse Clarke,
// Park and inverse Park. For inputs in [-1, 1] every component must be within the bound
// documented in transforms.hpp of the exact result (long double textbook matrices,
// tests/reference/transforms_reference.hpp), saturated to T's range for q15/q31. Any
// other float input (NaN, infinities, huge values) must simply not fail.
#include <algorithm>
#include <cmath>
#include <initializer_list>

#include "dqfx/sincos.hpp"
#include "dqfx/transforms.hpp"
#include "fuzz_input.hpp"
#include "reference/transforms_reference.hpp"
#include "reference/trig_reference.hpp"

namespace {

using namespace dqfx_fuzz;
namespace ref = dqfx_reference;
using ref::real;

/// Documented error for a result r (absolute), `extra` LSB more for the two
/// power-invariant inverse Clarke phases of q15.
template <class T>
real bound(real r, real extra = 0) {
  // A hair of slack for the long double reference's own rounding at exact ties.
  const real slack = 1e-9L * lsb<T>();
  if constexpr (std::is_same_v<T, q15>) return (0.5L + extra) * lsb<T>() + slack;
  if constexpr (std::is_same_v<T, q31>) return lsb<T>() + slack;
  const real scale = std::fabs(r) > 1 ? std::fabs(r) : 1;
  if constexpr (std::is_same_v<T, float>) return 2.4e-7L * scale;
  return 4.5e-16L * scale;
}

template <class T>
void expect(T got, real exact_result, real extra = 0) {
  const real want = ref::saturated<T>(exact_result);
  DQFX_FUZZ_CHECK(std::fabs(exact(got) - want) <= bound<T>(want, extra));
}

template <class T>
bool all_unit(std::initializer_list<T> values) {
  return std::all_of(values.begin(), values.end(), [](T v) { return std::fabs(exact(v)) <= 1; });
}

template <class T, class Scaling>
void transforms(byte_reader& in) {
  constexpr bool power = std::is_same_v<Scaling, dqfx::power_invariant>;
  const T a = in.mostly_unit<T>(), b = in.mostly_unit<T>(), c = in.mostly_unit<T>();
  const T d = in.mostly_unit<T>(), q = in.mostly_unit<T>();
  // Park takes any sine and cosine: usually a true pair, sometimes arbitrary values.
  const dqfx::sincos<T> sc = in.flag() ? dqfx::sincos<T>{in.mostly_unit<T>(), in.mostly_unit<T>()}
                                       : dqfx::sincos_of<T>(in.angle());

  const dqfx::stationary<T> three = dqfx::clarke<Scaling>(dqfx::phases<T>{a, b, c});
  const dqfx::stationary<T> two = dqfx::clarke<Scaling>(a, b);
  const dqfx::phases<T> back = dqfx::inverse_clarke<Scaling>(dqfx::stationary<T>{d, q});
  const dqfx::rotating<T> turned = dqfx::park(dqfx::stationary<T>{a, b}, sc);
  const dqfx::stationary<T> unturned = dqfx::inverse_park(dqfx::rotating<T>{d, q}, sc);
  if (!all_unit({a, b, c, d, q, sc.sin, sc.cos})) return;  // outside the documented domain

  const real ea = exact(a), eb = exact(b), ec = exact(c), ed = exact(d), eq = exact(q);
  const ref::ab r3 = power ? ref::clarke_power(ea, eb, ec) : ref::clarke_amplitude(ea, eb, ec);
  expect(three.alpha, r3.alpha);
  expect(three.beta, r3.beta);
  const ref::ab r2 = power ? ref::clarke_power(ea, eb, -ea - eb) : ref::clarke_amplitude(ea, eb, -ea - eb);
  expect(two.alpha, r2.alpha);
  expect(two.beta, r2.beta);
  const ref::abc rb = power ? ref::inverse_clarke_power(ed, eq) : ref::inverse_clarke_amplitude(ed, eq);
  const real extra = power ? 1.0L / 65536 : 0;
  expect(back.a, rb.a);
  expect(back.b, rb.b, extra);
  expect(back.c, rb.c, extra);
  const real s = exact(sc.sin), co = exact(sc.cos);
  const ref::ab rp = ref::park(ea, eb, s, co);
  expect(turned.d, rp.alpha);
  expect(turned.q, rp.beta);
  const ref::ab ri = ref::inverse_park(ed, eq, s, co);
  expect(unturned.alpha, ri.alpha);
  expect(unturned.beta, ri.beta);
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  const bool power = in.flag();
  with_type(in.choice(4), [&](auto type) {
    using T = decltype(type);
    if (power) {
      transforms<T, dqfx::power_invariant>(in);
    } else {
      transforms<T, dqfx::amplitude_invariant>(in);
    }
  });
  return 0;
}
