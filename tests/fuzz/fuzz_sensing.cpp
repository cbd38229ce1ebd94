// SPDX-License-Identifier: MIT
// Fuzz harness: current sensing. For every ADC format (8 to 16 bits, any rail margin),
// every code and every presence pattern: readings are exact (centred code / 2^bits,
// q15 rounded for 16-bit codes); a missing, railed or out-of-range sample is flagged and
// never used; a valid measurement uses exactly the channel conversion for the two phases
// it reads and derives the third from the sum; an invalid one is all zeros; offset
// calibration accepts only complete, clean runs with a small spread and then returns the
// mean code exactly rounded.
#include <cmath>
#include <initializer_list>

#include "dqfx/current_sensing.hpp"
#include "fuzz_input.hpp"
#include "reference/exact_integer.hpp"

namespace {

using namespace dqfx_fuzz;
using dqfx_ref::int128;

dqfx::adc_format any_format(byte_reader& in) {
  dqfx::adc_format f{};
  f.bits = 8 + in.choice(9);
  f.rail_margin = in.bits<std::uint16_t>() % 64u;
  return f;
}

dqfx::adc_sample any_sample(byte_reader& in, const dqfx::adc_format& f) {
  dqfx::adc_sample s{};
  const std::uint16_t raw = in.bits<std::uint16_t>();
  // Mostly codes the converter can produce; sometimes any 16-bit value.
  s.code = in.choice(8) == 0 ? raw : static_cast<std::uint16_t>(raw & f.largest_code());
  s.present = in.choice(8) != 0;
  return s;
}

template <class T>
dqfx::current_channel<T> any_channel(byte_reader& in, const dqfx::adc_format& f) {
  const double amps_per_code = std::ldexp(in.unit<double>(), -static_cast<int>(in.choice(8)));
  auto c = dqfx::current_channel<T>::from_amplifier(f, amps_per_code == 0 ? 1e-3 : amps_per_code, 1.0 + in.choice(40));
  return in.flag() ? c.with_offset(dqfx::from_double<T>(in.unit<double>() * 0.05)) : c;
}

template <class T>
bool usable(const dqfx::current_channel<T>& c, dqfx::adc_sample s) {
  const dqfx::adc_format& f = c.format();
  const std::uint32_t code = s.code;
  const bool railed = code <= f.rail_margin || code + f.rail_margin >= f.largest_code();
  return s.present && code <= f.largest_code() && !railed;
}

template <class T>
void readings(const dqfx::current_channel<T>& c, std::uint16_t code) {
  const unsigned bits = c.format().bits;
  const long double exact_reading =
      std::ldexp(static_cast<long double>(static_cast<int>(code) - (1 << (bits - 1))), -static_cast<int>(bits));
  const T x = c.reading(code);
  if (std::uint32_t{code} > c.format().largest_code()) return;  // saturates; not a reading
  if constexpr (dqfx::is_fixed_v<T>) {
    // Exact where T has the bits; a 16-bit code in q15 is rounded (half up) to 15 bits.
    DQFX_FUZZ_CHECK(std::fabs(exact(x) - exact_reading) <= (bits > 15 && T::fraction_bits == 15 ? lsb<T>() / 2 : 0));
  } else {
    DQFX_FUZZ_CHECK(exact(x) == exact_reading);
  }
}

template <class T>
void check_measurement(const dqfx::phase_current_measurement<T>& m, const dqfx::current_channel<T>* channel[3],
                       const dqfx::adc_sample s[3]) {
  const T i[3] = {m.current.a, m.current.b, m.current.c};
  for (int p = 0; p < 3; ++p) {
    // A railed bit needs a present sample; a railed sample is never read.
    if ((m.railed >> p) & 1) DQFX_FUZZ_CHECK(((m.missing >> p) & 1) == 0 && !usable(*channel[p], s[p]));
  }
  if (!m.valid) {
    DQFX_FUZZ_CHECK(i[0] == T{} && i[1] == T{} && i[2] == T{});
    return;
  }
  DQFX_FUZZ_CHECK(m.derived_phase <= 2);
  const int derived = m.derived_phase;
  const int u0 = (derived + 1) % 3, u1 = (derived + 2) % 3;
  for (int p : {u0, u1}) {
    DQFX_FUZZ_CHECK(usable(*channel[p], s[p]));
    DQFX_FUZZ_CHECK(((m.missing | m.railed) >> p & 1) == 0);
    DQFX_FUZZ_CHECK(i[p] == channel[p]->current(s[p].code));
  }
  DQFX_FUZZ_CHECK(i[derived] == -(i[u0] + i[u1]));
}

template <class T>
void sensing(byte_reader& in) {
  const dqfx::adc_format f = any_format(in);
  const dqfx::current_channel<T> a = any_channel<T>(in, f), b = any_channel<T>(in, f), c = any_channel<T>(in, f);
  const dqfx::adc_sample s[3] = {any_sample(in, f), any_sample(in, f), any_sample(in, f)};
  readings(a, s[0].code);
  DQFX_FUZZ_CHECK(a.usable(s[0]) == usable(a, s[0]));

  const dqfx::current_channel<T>* channel[3] = {&a, &b, &c};
  const dqfx::two_sensor<T> two{a, b};
  const auto m2 = two.reconstruct(s[0], s[1]);
  check_measurement(m2, channel, s);
  DQFX_FUZZ_CHECK(m2.valid == (usable(a, s[0]) && usable(b, s[1])));

  const T minimum = dqfx::from_double<T>(std::fabs(in.unit<double>()) * 0.3);
  const dqfx::three_shunt<T> three{{a, b, c}, minimum};
  const dqfx::phases<T> duty{in.mostly_unit<T>(), in.mostly_unit<T>(), in.mostly_unit<T>()};
  const auto m3 = three.reconstruct({s[0], s[1], s[2]}, duty);
  check_measurement(m3, channel, s);
  // A phase whose low-side window is too short (or whose duty is NaN) counts as missing.
  const T d[3] = {duty.a, duty.b, duty.c};
  for (int p = 0; p < 3; ++p) {
    const bool window = dqfx::full_duty<T>() - d[p] >= minimum;
    if (!window || !s[p].present) DQFX_FUZZ_CHECK((m3.missing >> p) & 1);
  }
}

template <class T>
void calibration(byte_reader& in) {
  const dqfx::adc_format f = any_format(in);
  const std::uint32_t samples = 1 + in.choice(32);
  const std::uint16_t max_spread = in.bits<std::uint16_t>() % 256u;
  dqfx::offset_calibration<T> cal{f, samples, max_spread};
  const std::uint16_t base = static_cast<std::uint16_t>(in.bits<std::uint16_t>() & f.largest_code());
  int128 sum = 0;
  bool bad = false;
  unsigned lowest = 0xFFFF, highest = 0, added = 0;
  const unsigned offered = in.choice(40);
  for (unsigned k = 0; k < offered; ++k) {
    dqfx::adc_sample s{};
    s.code = in.choice(16) == 0 ? in.bits<std::uint16_t>() : static_cast<std::uint16_t>((base + in.choice(16)) & f.largest_code());
    s.present = in.choice(32) != 0;
    cal.add(s);
    if (added == samples) continue;  // ignored once complete
    ++added;
    const std::uint32_t code = s.code;
    const bool good = s.present && code <= f.largest_code() && code > f.rail_margin && code + f.rail_margin < f.largest_code();
    if (!good) {
      bad = true;
      continue;
    }
    sum += code;
    lowest = code < lowest ? code : lowest;
    highest = code > highest ? code : highest;
  }
  const bool complete = added == samples;
  const unsigned spread = highest >= lowest ? highest - lowest : 0;
  DQFX_FUZZ_CHECK(cal.complete() == complete);
  DQFX_FUZZ_CHECK(cal.spread() == spread);
  const bool accepted = complete && !bad && spread <= max_spread;
  DQFX_FUZZ_CHECK(cal.accepted() == accepted);
  if (!accepted) {
    DQFX_FUZZ_CHECK(cal.offset() == T{});
    return;
  }
  // mean code as a reading: (sum / n - 2^(bits-1)) / 2^bits.
  const int128 centred = sum - int128{samples} * (int128{1} << (f.bits - 1));
  if constexpr (dqfx::is_fixed_v<T>) {
    const int128 num = centred * dqfx_ref::pow2(T::fraction_bits);
    const int128 den = int128{samples} * dqfx_ref::pow2(static_cast<int>(f.bits));
    // Rounded to nearest, ties away from zero.
    const int128 q = num < 0 ? -dqfx_ref::floor_div(-2 * num + den, 2 * den) : dqfx_ref::floor_div(2 * num + den, 2 * den);
    DQFX_FUZZ_CHECK(cal.offset().raw() == dqfx_ref::clamp_to<typename T::raw_type>(q));
  } else {
    const long double want = static_cast<long double>(centred) / samples / std::ldexp(1.0L, static_cast<int>(f.bits));
    DQFX_FUZZ_CHECK(std::fabs(exact(cal.offset()) - want) <= 2 * lsb<T>() * std::fabs(want));
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_reader in{data, size};
  const bool calibrate = in.choice(4) == 0;
  with_type(in.choice(4), [&](auto type) {
    using T = decltype(type);
    if (calibrate) {
      calibration<T>(in);
    } else {
      sensing<T>(in);
    }
  });
  return 0;
}
