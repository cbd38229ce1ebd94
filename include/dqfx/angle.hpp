// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// 32-bit binary angle: raw() of 2^32 is one turn, so sums and differences wrap exactly
/// and for free in unsigned arithmetic.

#include <cstdint>
#include <type_traits>

#include "dqfx/number.hpp"

namespace dqfx {

class angle {
 public:
  /// One binary-angle unit in turns (2^-32).
  static constexpr double turns_per_unit = 1.0 / 4294967296.0;

  constexpr angle() noexcept = default;
  static constexpr angle from_raw(std::uint32_t r) noexcept { return angle{r}; }
  /// Nearest binary angle to a number of turns; any finite value wraps, NaN and
  /// infinities (and |turns| >= 2^31, where a double has no fraction bits left) give 0.
  static constexpr angle from_turns(double turns) noexcept {
    if (!(turns > -2147483648.0 && turns < 2147483648.0)) return angle{};
    const double whole = static_cast<double>(static_cast<std::int64_t>(turns));
    // Fraction in (-1, 1) exactly; scaled it stays below 2^32 in magnitude.
    const std::int64_t units = detail::round_half_away((turns - whole) * 4294967296.0);
    return angle{static_cast<std::uint32_t>(static_cast<std::uint64_t>(units))};
  }
  static constexpr angle from_radians(double radians) noexcept {
    return from_turns(radians * 0.15915494309189533577);  // 1 / (2*pi)
  }
  static constexpr angle from_degrees(double degrees) noexcept {
    return from_turns(degrees / 360.0);
  }

  constexpr std::uint32_t raw() const noexcept { return raw_; }
  /// Turns in [0, 1).
  constexpr double turns() const noexcept { return static_cast<double>(raw_) * turns_per_unit; }
  constexpr double radians() const noexcept { return turns() * 6.283185307179586477; }
  constexpr double degrees() const noexcept { return turns() * 360.0; }
  /// The same angle read as signed, in [-2^31, 2^31): turns in [-0.5, 0.5).
  constexpr std::int32_t signed_raw() const noexcept {
    // Written out because unsigned-to-signed conversion of large values is only
    // defined from C++20 on.
    return raw_ < 0x80000000u ? static_cast<std::int32_t>(raw_)
                              : -static_cast<std::int32_t>(~raw_) - 1;
  }

  friend constexpr angle operator+(angle a, angle b) noexcept { return angle{a.raw_ + b.raw_}; }
  friend constexpr angle operator-(angle a, angle b) noexcept { return angle{a.raw_ - b.raw_}; }
  friend constexpr angle operator-(angle a) noexcept { return angle{0u - a.raw_}; }
  constexpr angle& operator+=(angle b) noexcept { return *this = *this + b; }
  constexpr angle& operator-=(angle b) noexcept { return *this = *this - b; }
  friend constexpr bool operator==(angle a, angle b) noexcept { return a.raw_ == b.raw_; }
  friend constexpr bool operator!=(angle a, angle b) noexcept { return a.raw_ != b.raw_; }

 private:
  constexpr explicit angle(std::uint32_t r) noexcept : raw_{r} {}
  std::uint32_t raw_{0};
};

/// Signed shortest rotation from `from` to `to`, in binary-angle units; exactly half a
/// turn reads as -2^31.
constexpr std::int32_t difference(angle to, angle from) noexcept {
  return (to - from).signed_raw();
}

/// Electrical angle of a machine with `pole_pairs` pole pairs at mechanical angle `m`
/// (exact: multiplication modulo one turn).
constexpr angle electrical(angle mechanical, std::uint32_t pole_pairs) noexcept {
  return angle::from_raw(mechanical.raw() * pole_pairs);
}

/// Turns a per-unit speed in T into the angle travelled in one sample period:
/// `step(speed)` is speed * base_speed * sample_time, wrapped exactly.
///
/// Built once (constexpr) from the base speed in rad/s that speed 1.0 stands for and
/// the sample period in seconds. At most half a turn per sample at speed 1.0 is
/// representable (a faster scale aliases and is refused by saturating to that limit).
template <class T>
class angle_rate {
 public:
  static constexpr angle_rate from_base(double base_speed_rad_per_s, double sample_time_s) noexcept {
    const double half_turns = base_speed_rad_per_s * sample_time_s / 3.14159265358979323846;
    return angle_rate{half_turns};
  }
  /// Signed angle step for one sample at `speed` (per unit); NaN gives no step.
  /// Error in binary-angle units: q15/q31 within 1 + 2^-20; float/double within
  /// 1/2 + 3 * 2^-p * |step| (p = 24 or 53), the arithmetic being done in T itself.
  constexpr std::int32_t step_raw(T speed) const noexcept {
    if constexpr (is_fixed_v<T>) {
      // speed in [-1, 1) times a half-turn fraction in [-1, 1): a q31 product, scaled
      // so that 2^31 is half a turn.
      // (Multiplied, not shifted: a left shift of a negative value is undefined in C++17.)
      const q31 s = q31::from_raw(static_cast<std::int32_t>(
          std::int64_t{speed.raw()} * (std::int64_t{1} << (31 - T::fraction_bits))));
      return (s * scale_).raw();
    } else {
      // In T itself (a float stays single precision, cheap on a single-precision FPU);
      // scale_ is in binary-angle units per unit speed. Rounded half away from zero,
      // saturated to half a turn either way, NaN gives no step.
      const T units = speed * scale_;
      constexpr T limit = T(2147483648.0);
      if (!(units == units)) {
        detail::note_saturation();
        return 0;
      }
      if (units >= limit || units < -limit) {
        detail::note_saturation();
        return units < T(0) ? INT32_MIN : INT32_MAX;
      }
      return static_cast<std::int32_t>(units < T(0) ? units - T(0.5) : units + T(0.5));
    }
  }
  /// The angle one sample later at `speed`.
  constexpr angle advance(angle a, T speed) const noexcept {
    const std::int32_t d = step_raw(speed);
    // Two's-complement wrap done in unsigned arithmetic: defined for every d.
    return a + angle::from_raw(static_cast<std::uint32_t>(static_cast<std::int64_t>(d) & 0xFFFFFFFF));
  }

 private:
  // Fixed point: half turns per sample at speed 1.0, as a q31. Floating point: binary-
  // angle units per sample at speed 1.0.
  using scale_type = std::conditional_t<is_fixed_v<T>, q31, T>;
  constexpr explicit angle_rate(double half_turns) noexcept
      : scale_{from_double<scale_type>(is_fixed_v<T> ? half_turns : half_turns * 2147483648.0)} {}
  scale_type scale_{};
};

}  // namespace dqfx
