// SPDX-License-Identifier: MIT
// Fuzz harness: sincos_of, angle_of and magnitude. Results must stay within the bounds
// documented in sincos.hpp and polar.hpp against long double references
// (tests/reference/trig_reference.hpp; magnitude of q15/q31 against an exact integer
// square root), q15/q31 sine and cosine must stay within [-max(), max()], the quadrant
// symmetries must hold bit for bit (wrap-safe angles), and NaN or infinite float
// components must give the documented answers.
#include <cmath>

#include "dqfx/polar.hpp"
#include "dqfx/sincos.hpp"
#include "fuzz_input.hpp"
#include "reference/exact_integer.hpp"
#include "reference/trig_reference.hpp"

namespace {

using namespace dqfx_fuzz;
namespace ref = dqfx_reference;

/// Documented error of sine and cosine, as an absolute value.
template <class T>
long double sincos_bound() {
  if constexpr (std::is_same_v<T, q15>) return lsb<T>();
  if constexpr (std::is_same_v<T, q31>) return 2 * lsb<T>();
  if constexpr (std::is_same_v<T, float>) return 1.2e-7L;
  return 1e-12L;
}

/// Documented error of angle_of in turns, for vectors of length >= 0.05.
template <class T>
long double angle_bound() {
  if constexpr (std::is_same_v<T, q15>) return std::ldexp(1.0L, -18);
  if constexpr (std::is_same_v<T, q31>) return std::ldexp(1.0L, -28);
  if constexpr (std::is_same_v<T, float>) return std::ldexp(1.0L, -24);
  return std::ldexp(1.0L, -31);
}

template <class T>
void sine_cosine(byte_reader& in) {
  const dqfx::angle a = in.angle();
  const dqfx::sincos<T> r = dqfx::sincos_of<T>(a);
  const long double s = ref::sin_of_raw(a.raw()), c = ref::cos_of_raw(a.raw());
  DQFX_FUZZ_CHECK(std::fabs(exact(r.sin) - ref::saturated<T>(s)) <= sincos_bound<T>());
  DQFX_FUZZ_CHECK(std::fabs(exact(r.cos) - ref::saturated<T>(c)) <= sincos_bound<T>());
  if constexpr (dqfx::is_fixed_v<T>) {
    DQFX_FUZZ_CHECK(r.sin != T::lowest() && r.cos != T::lowest());
  }
  // A quarter turn on is (cos, -sin) exactly, half a turn (-sin, -cos): the quadrant
  // handling is exact, so these hold bit for bit across the wrap at one turn.
  const dqfx::sincos<T> q = dqfx::sincos_of<T>(a + dqfx::angle::from_raw(0x40000000u));
  const dqfx::sincos<T> h = dqfx::sincos_of<T>(a + dqfx::angle::from_raw(0x80000000u));
  DQFX_FUZZ_CHECK(q.sin == r.cos && q.cos == -r.sin);
  DQFX_FUZZ_CHECK(h.sin == -r.sin && h.cos == -r.cos);
}

template <class T>
void polar(byte_reader& in) {
  const dqfx::stationary<T> v{in.mostly_unit<T>(), in.mostly_unit<T>()};
  const dqfx::angle a = dqfx::angle_of(v);
  const T m = dqfx::magnitude(v);
  const long double x = exact(v.alpha), y = exact(v.beta);
  if constexpr (dqfx::is_fixed_v<T>) {
    // magnitude: the exact length rounded to nearest (an exact integer square root),
    // saturated to max().
    const dqfx_ref::int128 n = dqfx_ref::int128{v.alpha.raw()} * v.alpha.raw() +
                               dqfx_ref::int128{v.beta.raw()} * v.beta.raw();
    dqfx_ref::int128 root = static_cast<dqfx_ref::int128>(std::sqrt(static_cast<long double>(n)));
    while (root * root > n) --root;
    while ((root + 1) * (root + 1) <= n) ++root;
    if (n - root * root > root) ++root;  // n >= (root + 1/2)^2: no ties for integers
    DQFX_FUZZ_CHECK(m.raw() == dqfx_ref::clamp_to<typename T::raw_type>(root));
    if (x == 0 && y == 0) DQFX_FUZZ_CHECK(a.raw() == 0);
    if (ref::length(x, y) >= 0.05L) {
      DQFX_FUZZ_CHECK(ref::turn_error(a.raw(), ref::angle_turns(x, y)) <= angle_bound<T>());
    }
  } else {
    if (std::isnan(v.alpha) || std::isnan(v.beta)) {
      DQFX_FUZZ_CHECK(a.raw() == 0 && std::isnan(m));
    } else if (std::isinf(v.alpha) || std::isinf(v.beta)) {
      DQFX_FUZZ_CHECK(a.raw() == 0 && std::isinf(m) && m > 0);
    } else {
      const long double exact_length = ref::length(x, y);
      DQFX_FUZZ_CHECK(std::isfinite(m) || exact_length > static_cast<long double>(std::numeric_limits<T>::max()));
      if (std::isfinite(m)) {
        // 2 ulp; a subnormal length has only the subnormal step.
        const long double tolerance = 2 * lsb<T>() * exact_length + std::numeric_limits<T>::denorm_min();
        DQFX_FUZZ_CHECK(std::fabs(static_cast<long double>(m) - exact_length) <= tolerance);
      }
      if (x == 0 && y == 0) DQFX_FUZZ_CHECK(a.raw() == 0);
      if (exact_length >= 0.05L) {
        DQFX_FUZZ_CHECK(ref::turn_error(a.raw(), ref::angle_turns(x, y)) <= angle_bound<T>());
      }
    }
  }
  // Mirror image: angle_of(alpha, -beta) is minus the angle, exactly (not for a fixed-
  // point beta at the most negative value, whose negation saturates).
  bool mirrorable = true;
  if constexpr (dqfx::is_fixed_v<T>) mirrorable = v.beta != T::lowest();
  if (mirrorable) DQFX_FUZZ_CHECK(dqfx::angle_of(dqfx::stationary<T>{v.alpha, -v.beta}) == -a);
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  const bool trig = in.flag();
  with_type(in.choice(4), [&](auto type) {
    using T = decltype(type);
    if (trig) {
      sine_cosine<T>(in);
    } else {
      polar<T>(in);
    }
  });
  return 0;
}
