// SPDX-License-Identifier: MIT
#pragma once
// What every fuzz harness shares: a reader that turns the fuzzer's bytes into typed
// values (any byte string is a valid input; missing bytes read as zero, so the fuzzer
// explores values rather than a format), and the check that stops the run with a message
// when an invariant fails (libFuzzer then saves the input as a crash).
//
// Each harness defines LLVMFuzzerTestOneInput. Built with -fsanitize=fuzzer it is a
// libFuzzer target; built with replay_main.cpp it replays the checked-in corpus as an
// ordinary test with any compiler.

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <type_traits>

#include "dqfx/angle.hpp"
#include "dqfx/fixed.hpp"
#include "dqfx/number.hpp"

namespace dqfx_fuzz {

using dqfx::q15;
using dqfx::q31;

class byte_reader {
 public:
  byte_reader(const std::uint8_t* data, std::size_t size) noexcept : data_{data}, size_{size} {}

  /// The next sizeof(U) bytes, little-endian; zeros past the end.
  template <class U>
  U bits() noexcept {
    static_assert(std::is_unsigned_v<U>, "unsigned");
    U v = 0;
    for (std::size_t i = 0; i < sizeof(U); ++i) {
      const U byte = at_ < size_ ? data_[at_] : 0u;
      ++at_;
      v = static_cast<U>(v | static_cast<U>(byte << (8 * i)));
    }
    return v;
  }
  /// A number in [0, n), n >= 1.
  unsigned choice(unsigned n) noexcept { return trace("choice", bits<std::uint8_t>() % n); }
  bool flag() noexcept { return trace("flag", (bits<std::uint8_t>() & 1u) != 0); }
  bool empty() const noexcept { return at_ >= size_; }

  /// Any value of T: every raw pattern for q15/q31, every bit pattern (NaN, infinities,
  /// subnormals included) for float and double.
  template <class T>
  T any() noexcept {
    return trace("any", any_bits<T>());
  }

  /// A value of T in the per-unit range [-1, 1] (every raw pattern for q15/q31): most
  /// often a uniform fraction, sometimes a corner (+/-1, zero, +/- the smallest step).
  template <class T>
  T unit() noexcept {
    return trace("unit", unit_value<T>());
  }

  /// Either any value (one time in four) or a per-unit value, for kernels whose bad-input
  /// behaviour and in-range accuracy are both checked.
  template <class T>
  T mostly_unit() noexcept {
    return choice(4) == 0 ? any<T>() : unit<T>();
  }

  /// Any double: bit patterns, including NaN and infinities.
  double any_double() noexcept { return any<double>(); }

  dqfx::angle angle() noexcept { return dqfx::angle::from_raw(trace("angle", bits<std::uint32_t>())); }

 private:
  // Built with -DDQFX_FUZZ_TRACE, a harness prints every value it reads: run it on a
  // saved crash input to see what the bytes decoded to.
  template <class V>
  static V trace(const char* what, V v) noexcept {
#ifdef DQFX_FUZZ_TRACE
    if constexpr (dqfx::is_fixed_v<V>) {
      std::fprintf(stderr, "%s raw %ld (%.17g)\n", what, static_cast<long>(v.raw()), dqfx::to_double(v));
    } else if constexpr (std::is_floating_point_v<V>) {
      std::fprintf(stderr, "%s %.17g\n", what, static_cast<double>(v));
    } else {
      std::fprintf(stderr, "%s %lu\n", what, static_cast<unsigned long>(v));
    }
#else
    static_cast<void>(what);
#endif
    return v;
  }

  template <class T>
  T any_bits() noexcept {
    if constexpr (std::is_same_v<T, q15>) {
      return q15::from_raw(static_cast<std::int16_t>(bits<std::uint16_t>() - 32768));
    } else if constexpr (std::is_same_v<T, q31>) {
      return q31::from_raw(static_cast<std::int32_t>(std::int64_t{bits<std::uint32_t>()} - 2147483648));
    } else if constexpr (std::is_same_v<T, float>) {
      const std::uint32_t b = bits<std::uint32_t>();
      float f;
      std::memcpy(&f, &b, sizeof f);
      return f;
    } else {
      const std::uint64_t b = bits<std::uint64_t>();
      double d;
      std::memcpy(&d, &b, sizeof d);
      return d;
    }
  }

  template <class T>
  T unit_value() noexcept {
    if constexpr (dqfx::is_fixed_v<T>) {
      return any_bits<T>();
    } else {
      const std::uint64_t b = bits<std::uint64_t>();
      switch (b & 15u) {
        case 0: return T{1};
        case 1: return T{-1};
        case 2: return T{0};
        case 3: return std::numeric_limits<T>::epsilon() * ((b & 16u) != 0 ? T{-1} : T{1});
        default: break;
      }
      // 53 random bits into [-1, 1).
      const auto m = static_cast<std::int64_t>(b >> 11) - (std::int64_t{1} << 52);
      return static_cast<T>(static_cast<double>(m) * (1.0 / 4503599627370496.0));
    }
  }

  const std::uint8_t* data_;
  std::size_t size_;
  std::size_t at_ = 0;
};

[[noreturn]] inline void failed(const char* file, int line, const char* what) noexcept {
  std::fprintf(stderr, "%s:%d: invariant failed: %s\n", file, line, what);
  std::fflush(stderr);
  std::abort();
}

/// Exact value of a number as long double.
template <class T>
long double exact(T v) noexcept {
  if constexpr (dqfx::is_fixed_v<T>) {
    return std::ldexp(static_cast<long double>(v.raw()), -T::fraction_bits);
  } else {
    return static_cast<long double>(v);
  }
}

/// Size of one unit in the last place of T at 1.0, as long double.
template <class T>
long double lsb() noexcept {
  return static_cast<long double>(dqfx::number_traits<T>::lsb);
}

/// An exact result as a correct q15/q31 kernel returns it: clamped to [lowest, max].
template <class T>
long double saturated(long double r) noexcept {
  if constexpr (dqfx::is_fixed_v<T>) {
    const long double hi = exact(T::max()), lo = exact(T::lowest());
    return r > hi ? hi : (r < lo ? lo : r);
  } else {
    return r;
  }
}

template <class T>
bool is_finite(T v) noexcept {
  if constexpr (dqfx::is_fixed_v<T>) {
    return true;
  } else {
    return std::isfinite(v);
  }
}

/// Calls f.template operator()<T>() for the type chosen by one byte.
template <class F>
void with_type(unsigned which, F&& f) {
  switch (which % 4) {
    case 0: f(q15{}); break;
    case 1: f(q31{}); break;
    case 2: f(float{}); break;
    default: f(double{}); break;
  }
}

}  // namespace dqfx_fuzz

#define DQFX_FUZZ_CHECK(condition) \
  ((condition) ? static_cast<void>(0) : ::dqfx_fuzz::failed(__FILE__, __LINE__, #condition))
