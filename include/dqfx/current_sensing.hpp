// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Phase currents and the bus voltage from ADC codes: conversion to per-unit current with
/// offset and gain, offset calibration at zero current, reconstruction of the three phase
/// currents from three low-side shunts or two phase sensors, and the bus voltage with
/// under- and over-voltage limits (`voltage_channel`). A railed or missing sample is
/// flagged and never used.
///
/// Codes are read relative to mid-scale and the full ADC range: x = (code - 2^(bits-1))
/// / 2^bits, in [-1/2, 1/2), so that a reading minus its offset, x - o, stays in (-1, 1)
/// and the conversion current = (x - o) * gain is one rounding (q15: exact x for ADCs of
/// up to 15 bits; a 16-bit code is rounded to 15). Error against the exact
/// (x - o) * gain (tests/test_current_sensing.cpp): q15 0.5 + 2^-16 LSB, q31 1 LSB, float
/// and double one rounding of the product (the gain's own rounding included).
///
/// Bad input: a missing sample, a code at a rail or beyond the largest code is flagged and
/// never used. An `adc_format` outside 8..16 bits is a parameter fault: `valid()` is false,
/// a channel or calibration built from it is a compile-time error where constexpr, else
/// raises `parameter_fault()`, reads every code as zero current and finds no sample usable
/// (a reconstruction reports them railed; a calibration is never accepted).

#include <cstdint>

#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/svm.hpp"

namespace dqfx {

/// ADC resolution and where its rails begin.
struct adc_format {
  /// Resolution in bits, 8 to 16 (others: see `valid()`).
  unsigned bits = 12;
  /// Codes within this distance of 0 or of the largest code count as railed: the
  /// amplifier or converter is saturated there and the reading is not the current.
  std::uint16_t rail_margin = 0;

  /// 8 to 16 bits: what the conversions are defined and tested for.
  constexpr bool valid() const noexcept { return bits >= 8 && bits <= 16; }
  /// 2^bits - 1; 0 for an invalid format, so that every code counts as railed.
  constexpr std::uint32_t largest_code() const noexcept { return valid() ? (std::uint32_t{1} << bits) - 1u : 0u; }
  constexpr bool railed(std::uint16_t code) const noexcept {
    return code <= rail_margin || std::uint32_t{code} + rail_margin >= largest_code();
  }
};

/// One conversion result, or the lack of one (no sampling window, conversion not done).
struct adc_sample {
  std::uint16_t code = 0;
  bool present = true;
};

namespace detail {

// Deliberately not constexpr: reaching it for a constexpr channel stops compilation.
inline void adc_bits_outside_8_to_16() noexcept {}

/// steps / 2^bits in T, for |steps| < 2^bits (a code minus a reference code). q15 keeps 15
/// fraction bits (16-bit codes are rounded); q31, float and double are exact.
template <class T>
constexpr T code_fraction(std::int32_t steps, unsigned bits) noexcept {
  if constexpr (is_fixed_v<T>) {
    const int up = T::fraction_bits - static_cast<int>(bits);
    if (up >= 0) return T::saturated(std::int64_t{steps} * (std::int64_t{1} << up));
    return T::saturated(round_shift(std::int64_t{steps}, -up));
  } else {
    T x = static_cast<T>(steps);
    for (unsigned i = 0; i < bits; ++i) x *= T{0.5};
    return x;
  }
}

/// (code - mid-scale) / 2^bits in T. Zero for bits outside 8..16.
template <class T>
constexpr T centred_code(std::uint16_t code, unsigned bits) noexcept {
  if (!adc_format{bits, 0}.valid()) return T{};
  return code_fraction<T>(static_cast<std::int32_t>(code) - (std::int32_t{1} << (bits - 1)), bits);
}

// Deliberately not constexpr: reaching it for a constexpr channel stops compilation.
inline void voltage_channel_needs_positive_scale() noexcept {}

}  // namespace detail

/// One current channel: ADC code to per-unit current, current = (x - offset) * gain.
template <class T>
class current_channel {
 public:
  constexpr current_channel() noexcept = default;
  /// From the amplifier: `amps_per_code` (negative for an inverting amplifier) and the
  /// base current of the per-unit system. The offset starts at mid-scale. An invalid
  /// format gives a channel with `parameter_fault()` and gain 0.
  static constexpr current_channel from_amplifier(adc_format format, double amps_per_code,
                                                  double base_amps) noexcept {
    if (!format.valid()) {
      detail::adc_bits_outside_8_to_16();
      return current_channel{format, gain<T>{}, T{}};
    }
    double full_range = amps_per_code / base_amps;
    for (unsigned i = 0; i < format.bits; ++i) full_range *= 2.0;
    return current_channel{format, gain<T>::from_double(full_range), T{}};
  }
  /// The same channel with a calibrated offset (from `offset_calibration`).
  constexpr current_channel with_offset(T offset) const noexcept {
    return current_channel{format_, gain_, offset};
  }

  constexpr const adc_format& format() const noexcept { return format_; }
  constexpr T offset() const noexcept { return offset_; }
  /// The code as a reading x = (code - mid-scale) / 2^bits.
  constexpr T reading(std::uint16_t code) const noexcept { return detail::centred_code<T>(code, format_.bits); }
  /// Per-unit current of a code (railed or not: check `usable` first).
  constexpr T current(std::uint16_t code) const noexcept { return (reading(code) - offset_) * gain_; }
  /// The ADC format is outside 8..16 bits: no code is usable, every current is zero.
  constexpr bool parameter_fault() const noexcept { return !format_.valid(); }
  /// The sample exists and is not at a rail (never for an invalid format).
  constexpr bool usable(adc_sample s) const noexcept {
    return s.present && std::uint32_t{s.code} <= format_.largest_code() && !format_.railed(s.code);
  }

 private:
  constexpr current_channel(adc_format f, gain<T> g, T o) noexcept : format_{f}, gain_{g}, offset_{o} {}
  adc_format format_{};
  gain<T> gain_{};
  T offset_{};
};

/// One voltage reading and what was wrong with it.
template <class T> struct voltage_measurement {
  T voltage{};           ///< per unit; zero unless `valid`
  bool valid = false;    ///< present, not at a rail, and within the limits
  bool missing = false;  ///< no sample this period
  bool railed = false;   ///< at a rail of the converter, or beyond its largest code
  bool low = false;      ///< below the lower limit (under-voltage)
  bool high = false;     ///< above the upper limit (over-voltage, or beyond what T holds)
};

/// A unipolar voltage (the DC bus) from an ADC code behind a divider, in integer
/// arithmetic for q15/q31: voltage = (code - zero_code) / 2^bits * gain, the gain being
/// volts_per_code * 2^bits / base_volts. One rounding for ADCs of up to 15 bits in q15
/// (16-bit codes: two), so the error against the exact (code - zero) * volts_per_code /
/// base_volts is within 0.5 LSB plus the gain's own rounding (q15, q31; float and double:
/// one rounding of the product and the gain's). The limits are compared in codes, exactly.
///
/// Bad input: a missing sample, a code at a rail or beyond the largest code, or a code
/// outside the limits gives an invalid measurement with voltage 0 (which the current loop
/// answers with its fault). An invalid format, a non-positive scale or base is a
/// parameter fault: a compile-time error where constexpr, else `parameter_fault()` and no
/// valid reading.
template <class T>
class voltage_channel {
 public:
  constexpr voltage_channel() noexcept = default;
  /// `volts_per_code` of divider and converter together, `base_volts` of the per-unit
  /// system, `zero_code` the code at 0 V. The upper limit starts at the largest code that
  /// T holds (fixed point: below 1 per unit), the lower at `zero_code`.
  static constexpr voltage_channel from_divider(adc_format format, double volts_per_code, double base_volts,
                                                std::uint16_t zero_code = 0) noexcept {
    if (!format.valid()) detail::adc_bits_outside_8_to_16();
    if (!(volts_per_code > 0.0 && base_volts > 0.0)) detail::voltage_channel_needs_positive_scale();
    if (!format.valid() || !(volts_per_code > 0.0 && base_volts > 0.0)) return voltage_channel{};
    double full_range = volts_per_code / base_volts;
    for (unsigned i = 0; i < format.bits; ++i) full_range *= 2.0;
    voltage_channel c{};
    c.format_ = format;
    c.gain_ = gain<T>::from_double(full_range);
    c.volts_per_code_ = volts_per_code;
    c.zero_ = zero_code;
    c.lower_ = zero_code;
    // Fixed point holds values below 1: the code of base_volts and above saturates.
    const double top = is_fixed_v<T> ? zero_code + base_volts / volts_per_code : 1e300;
    c.upper_ = c.code_at_or_below(top, is_fixed_v<T>);
    c.valid_ = true;
    return c;
  }
  /// The same channel accepting only [lower_volts, upper_volts] (under- and over-voltage
  /// limits, rounded inwards to codes; never beyond what T holds).
  constexpr voltage_channel with_limits(double lower_volts, double upper_volts) const noexcept {
    voltage_channel c = *this;
    if (!valid_) return c;
    const double lower = zero_ + lower_volts / volts_per_code_;
    const double low_code = lower <= 0.0 ? 0.0 : lower;
    const std::uint16_t l = c.code_at_or_below(low_code, false);
    c.lower_ = static_cast<double>(l) < lower ? static_cast<std::uint16_t>(l + 1) : l;
    const std::uint16_t u = c.code_at_or_below(zero_ + upper_volts / volts_per_code_, false);
    c.upper_ = u < upper_ ? u : upper_;
    return c;
  }

  constexpr const adc_format& format() const noexcept { return format_; }
  constexpr std::uint16_t lower_code() const noexcept { return lower_; }
  constexpr std::uint16_t upper_code() const noexcept { return upper_; }
  constexpr bool parameter_fault() const noexcept { return !valid_; }
  /// Per-unit voltage of a code, saturated (check the flags with `read`).
  constexpr T voltage(std::uint16_t code) const noexcept {
    if (!valid_) return T{};
    return detail::code_fraction<T>(static_cast<std::int32_t>(code) - zero_, format_.bits) * gain_;
  }
  /// The sample with its flags; the voltage only when valid.
  constexpr voltage_measurement<T> read(adc_sample s) const noexcept {
    voltage_measurement<T> m{};
    m.missing = !s.present;
    m.railed = s.present && (!valid_ || std::uint32_t{s.code} > format_.largest_code() || format_.railed(s.code));
    const bool usable = s.present && !m.railed;
    m.low = usable && s.code < lower_;
    m.high = usable && s.code > upper_;
    m.valid = usable && !m.low && !m.high;
    if (m.valid) m.voltage = voltage(s.code);
    return m;
  }

 private:
  /// The largest code at or below `code` (`strict`: below), within the converter's range.
  constexpr std::uint16_t code_at_or_below(double code, bool strict) const noexcept {
    const double largest = static_cast<double>(format_.largest_code());
    if (!(code < largest + 1.0)) return static_cast<std::uint16_t>(format_.largest_code());
    if (code < 0.0) return 0;
    auto c = static_cast<std::uint16_t>(code);  // toward zero: at or below
    if (strict && static_cast<double>(c) == code && c > 0) --c;
    return c;
  }

  adc_format format_{};
  gain<T> gain_{};
  double volts_per_code_ = 0.0;
  std::uint16_t zero_ = 0;
  std::uint16_t lower_ = 0;
  std::uint16_t upper_ = 0;
  bool valid_ = false;
};

/// Averages N codes taken at zero current into an offset, and refuses the run when the
/// codes spread more than allowed (a current was flowing, or noise is too high) or a
/// sample was missing or railed.
template <class T>
class offset_calibration {
 public:
  /// `samples` in [1, 65536]; `max_spread`: largest allowed max - min of the codes.
  constexpr offset_calibration(adc_format format, std::uint32_t samples, std::uint16_t max_spread) noexcept
      : format_{format},
        samples_{samples == 0 ? 1u : (samples > 65536u ? 65536u : samples)},
        max_spread_{max_spread} {
    if (!format.valid()) detail::adc_bits_outside_8_to_16();
  }

  /// Adds one sample; ignored once the run is complete.
  constexpr void add(adc_sample s) noexcept {
    if (complete()) return;
    const bool good = s.present && std::uint32_t{s.code} <= format_.largest_code() && !format_.railed(s.code);
    if (!good) {
      bad_ = true;
    } else {
      sum_ += s.code;
      lowest_ = s.code < lowest_ ? s.code : lowest_;
      highest_ = s.code > highest_ ? s.code : highest_;
    }
    ++count_;
  }
  constexpr bool complete() const noexcept { return count_ >= samples_; }
  /// The ADC format is outside 8..16 bits: every sample is bad, no run is accepted.
  constexpr bool parameter_fault() const noexcept { return !format_.valid(); }
  /// Complete, no missing or railed sample, and a spread within the limit.
  constexpr bool accepted() const noexcept { return complete() && !bad_ && spread() <= max_spread_; }
  /// max - min of the codes so far (0 before the first good sample).
  constexpr std::uint16_t spread() const noexcept {
    return highest_ >= lowest_ ? static_cast<std::uint16_t>(highest_ - lowest_) : std::uint16_t{0};
  }
  /// The mean code as a reading (see `current_channel::reading`), rounded to nearest;
  /// zero unless accepted.
  constexpr T offset() const noexcept {
    if (!accepted()) return T{};
    const std::int64_t n = samples_;
    // sum - n * mid: |.| <= 2^16 * 2^15, exact.
    const std::int64_t centred = static_cast<std::int64_t>(sum_) - n * (std::int64_t{1} << (format_.bits - 1));
    if constexpr (is_fixed_v<T>) {
      // centred / n / 2^bits at 2^-fraction_bits; the numerator is below 2^(31+31).
      const std::int64_t num = centred * (std::int64_t{1} << T::fraction_bits);
      const std::int64_t den = n * (std::int64_t{1} << format_.bits);
      std::int64_t q = num / den;  // toward zero; then to nearest, ties away from zero
      const std::int64_t r = num % den;
      if (2 * (r < 0 ? -r : r) >= den) q += num < 0 ? -1 : 1;
      return T::saturated(q);
    } else {
      T x = static_cast<T>(static_cast<double>(centred) / static_cast<double>(n));
      for (unsigned i = 0; i < format_.bits; ++i) x *= T{0.5};
      return x;
    }
  }
  constexpr void restart() noexcept { *this = offset_calibration{format_, samples_, max_spread_}; }

 private:
  adc_format format_{};
  std::uint32_t samples_ = 1;
  std::uint16_t max_spread_ = 0;
  std::uint32_t count_ = 0;
  std::uint32_t sum_ = 0;
  std::uint16_t lowest_ = 0xFFFF;
  std::uint16_t highest_ = 0;
  bool bad_ = false;
};

/// Three phase currents and how they were obtained.
template <class T> struct phase_current_measurement {
  phases<T> current{};
  /// At least two usable samples were available; otherwise the currents are zero.
  bool valid = false;
  /// The phase computed from a + b + c = 0 (0 = a, 1 = b, 2 = c).
  std::uint8_t derived_phase = 0;
  /// Bit p set: phase p's sample was at a rail.
  std::uint8_t railed = 0;
  /// Bit p set: phase p's sample was missing, or its low-side window was too short.
  std::uint8_t missing = 0;
};

/// Three low-side shunts: each phase's current can only be read while its low-side
/// switch conducts, i.e. for 1 - duty of the period. The two phases with the longest
/// low-side on-time (smallest duties) are used and the third follows from the sum being
/// zero; a phase whose sample is missing, railed or whose window is below
/// `minimum_low_side` (a fraction of the period) is skipped in favour of the next.
template <class T>
class three_shunt {
 public:
  constexpr three_shunt() noexcept = default;
  constexpr three_shunt(phases<current_channel<T>> channels, T minimum_low_side) noexcept
      : channels_{channels}, minimum_low_side_{minimum_low_side} {}

  /// `duty`: the duties that were applied in the period the samples were taken in.
  constexpr phase_current_measurement<T> reconstruct(phases<adc_sample> sample, phases<T> duty) const noexcept {
    const current_channel<T>* channel[3] = {&channels_.a, &channels_.b, &channels_.c};
    const adc_sample s[3] = {sample.a, sample.b, sample.c};
    const T d[3] = {duty.a, duty.b, duty.c};
    phase_current_measurement<T> out{};
    bool usable[3]{};
    for (int p = 0; p < 3; ++p) {
      const bool window = full_duty<T>() - d[p] >= minimum_low_side_;  // false for NaN duty
      const bool present = s[p].present && window;
      const bool at_rail = present && !channel[p]->usable(s[p]);
      usable[p] = present && !at_rail;
      out.missing = static_cast<std::uint8_t>(out.missing | (present ? 0 : 1 << p));
      out.railed = static_cast<std::uint8_t>(out.railed | (at_rail ? 1 << p : 0));
    }
    // Phases by ascending duty (longest low-side window first); ties keep a, b, c order.
    int order[3] = {0, 1, 2};
    auto before = [&](int x, int y) { return d[y] < d[x]; };
    if (before(order[0], order[1])) { const int t = order[0]; order[0] = order[1]; order[1] = t; }
    if (before(order[1], order[2])) { const int t = order[1]; order[1] = order[2]; order[2] = t; }
    if (before(order[0], order[1])) { const int t = order[0]; order[0] = order[1]; order[1] = t; }
    int used[2] = {-1, -1};
    int n = 0;
    for (int k = 0; k < 3 && n < 2; ++k)
      if (usable[order[k]]) used[n++] = order[k];
    if (n < 2) return out;
    const int derived = 3 - used[0] - used[1];
    T i[3]{};
    i[used[0]] = channel[used[0]]->current(s[used[0]].code);
    i[used[1]] = channel[used[1]]->current(s[used[1]].code);
    i[derived] = -(i[used[0]] + i[used[1]]);
    out.current = {i[0], i[1], i[2]};
    out.valid = true;
    out.derived_phase = static_cast<std::uint8_t>(derived);
    return out;
  }

 private:
  phases<current_channel<T>> channels_{};
  T minimum_low_side_{};
};

/// Two phase sensors (on phases a and b, e.g. in-line or Hall-effect): c = -(a + b).
template <class T>
class two_sensor {
 public:
  constexpr two_sensor() noexcept = default;
  constexpr two_sensor(current_channel<T> a, current_channel<T> b) noexcept : a_{a}, b_{b} {}

  constexpr phase_current_measurement<T> reconstruct(adc_sample a, adc_sample b) const noexcept {
    phase_current_measurement<T> out{};
    out.derived_phase = 2;
    out.missing = static_cast<std::uint8_t>((a.present ? 0 : 1) | (b.present ? 0 : 2));
    out.railed = static_cast<std::uint8_t>((a.present && !a_.usable(a) ? 1 : 0) |
                                           (b.present && !b_.usable(b) ? 2 : 0));
    if (out.missing != 0 || out.railed != 0) return out;
    const T ia = a_.current(a.code), ib = b_.current(b.code);
    out.current = {ia, ib, -(ia + ib)};
    out.valid = true;
    return out;
  }

 private:
  current_channel<T> a_{}, b_{};
};

}  // namespace dqfx
