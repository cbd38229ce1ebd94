// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <string>

#include "dqfx/encoder.hpp"
#include "dqfx_sim/sensors.hpp"
#include "test_support.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

using dqfx_test::name;
using dqfx_test::lsb;

// Invented drive: 20 kHz, speed 1.0 = 1000 Hz electrical, 4 pole pairs, 1000-line encoder
// (4000 counts per turn: not a divisor of the 16-bit counter's 65536), 100 MHz capture timer.
using dqfx_test::base_speed;  // 1000 Hz electrical
using dqfx_test::ts;          // 20 kHz
using dqfx_test::two_pi;
constexpr double tick_hz = 100e6;
constexpr std::uint32_t cpt = 4000;
constexpr std::uint32_t pole_pairs = 4;

dqfx::encoder_parameters parameters(std::uint32_t period = 65536, double tick_frequency = tick_hz) {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = cpt;
  p.pole_pairs = pole_pairs;
  p.counter_period = period;
  p.offset = dqfx::angle::from_degrees(37);
  p.base_speed = base_speed;
  p.sample_time = ts;
  p.tick_frequency = tick_frequency;
  p.switch_speed = 0.05;
  p.max_speed = 1.0;
  return p;
}

// A shaft turning at a constant electrical per-unit speed from `start` counts: the count
// and the capture timer's value at the latest count change, exactly.
struct shaft {
  double start = 0.3;   // counts at t = 0 (a fraction: between edges)
  double speed = 0.0;   // electrical per unit
  double counts_per_second() const { return speed * base_speed / (two_pi * pole_pairs) * cpt; }
  std::int64_t count(double t) const { return static_cast<std::int64_t>(std::floor(start + counts_per_second() * t)); }
  // Time of the latest change of count at or before t.
  double edge_time(double t) const {
    const double rate = counts_per_second();
    if (rate == 0) return 0;
    const std::int64_t c = count(t);
    const double crossing = rate > 0 ? static_cast<double>(c) : static_cast<double>(c + 1);
    return (crossing - start) / rate;
  }
};

std::uint32_t counter_of(std::int64_t count, std::uint32_t period) {
  const std::int64_t m = period == 0 ? (std::int64_t{1} << 32) : period;
  return static_cast<std::uint32_t>(((count % m) + m) % m);
}
std::uint32_t ticks_of(double t) {
  return static_cast<std::uint32_t>(static_cast<std::uint64_t>(std::llround(t * tick_hz)) & 0xFFFFFFFFu);
}

template <class T, std::size_t W = 16>
void feed(dqfx::encoder<T, W>& e, const shaft& s, int k, std::uint32_t period = 65536) {
  const double t = k * ts;
  e.update(counter_of(s.count(t), period), ticks_of(s.edge_time(t)), ticks_of(t));
}

}  // namespace

TEST_CASE("encoder: mechanical and electrical angle are exact counts, wrap-safe for every counter") {
  // Reference: angle = position / counts_per_turn turns, exactly, in long double.
  for (std::uint32_t period : {65536u, 0u, cpt}) {
    dqfx::encoder<float> e{parameters(period)};
    REQUIRE_FALSE(e.parameter_fault());
    std::int64_t count = 70000;  // the 16-bit counter wraps at once
    std::uint32_t worst_mech = 0, worst_elec = 0;
    unsigned noise = 1;
    for (int k = 0; k < 200000; ++k) {
      noise = noise * 1664525u + 1013904223u;
      const int step = static_cast<int>((noise >> 16) % 61) - (k < 100000 ? 20 : 40);  // both ways
      count += step;
      e.update(counter_of(count, period));
      REQUIRE_FALSE(e.jump());
      const std::int64_t first = counter_of(70000, period) % cpt;
      const std::int64_t position = (((count - 70000 + first) % cpt) + cpt) % cpt;
      REQUIRE(e.position() == position);
      const long double turns = static_cast<long double>(position) / cpt;
      const auto exact = static_cast<std::uint32_t>(std::floor(turns * 4294967296.0L));
      worst_mech = std::max(worst_mech, static_cast<std::uint32_t>(std::abs(dqfx::difference(e.mechanical(), dqfx::angle::from_raw(exact)))));
      const auto exact_elec = static_cast<std::uint32_t>(
          static_cast<std::uint64_t>(std::floor(std::fmod(turns * pole_pairs, 1.0L) * 4294967296.0L)) -
          dqfx::angle::from_degrees(37).raw());
      worst_elec = std::max(worst_elec, static_cast<std::uint32_t>(std::abs(dqfx::difference(e.electrical_angle(), dqfx::angle::from_raw(exact_elec)))));
    }
    MESSAGE("period ", period, ": max angle error ", worst_mech, " units mechanical, ", worst_elec,
            " units electrical (1 unit = 2^-32 turn)");
    CHECK(worst_mech <= 1);
    CHECK(worst_elec <= pole_pairs);
  }
}

TEST_CASE_TEMPLATE("encoder: speed by counting and by timing, with the switch at low speed", T, q15, q31, float,
                   double) {
  for (double speed : {0.003, 0.02, 0.049, 0.2, 0.7, -0.3, -0.01}) {
    dqfx::encoder<T> e{parameters()};
    const shaft s{0.3, speed};
    double worst = 0;
    for (int k = 0; k < 4000; ++k) {
      feed(e, s, k);
      if (k > 2000) worst = std::fmax(worst, std::fabs(to_double(e.raw_speed()) - speed));
    }
    const bool low = std::fabs(speed) < 0.05;
    CHECK(e.method() == (low ? dqfx::encoder_speed_method::timing : dqfx::encoder_speed_method::counting));
    // Counting: one count in the window is 2*pi*p / (cpt * 16 * Ts * base) = 1.25e-3 pu;
    // timing with a 100 MHz capture: each edge time is rounded to 10 ns, so the interval
    // between two edges is within 1 tick.
    const double interval_ticks = tick_hz / std::fabs(s.counts_per_second());
    const double resolution =
        low ? std::fabs(speed) * 1.0 / (interval_ticks - 1) : two_pi * pole_pairs / (cpt * 16 * ts * base_speed);
    const double bound = resolution + 2 * lsb<T>() + (std::is_same_v<T, float> ? 1e-6 : 0.0);
    MESSAGE(name<T>(), " at ", speed, " pu (", low ? "timing" : "counting", "): max raw speed error ", worst,
            " pu, bound ", bound);
    CHECK(worst <= bound);
  }
}

TEST_CASE_TEMPLATE("encoder: timing by the sample clock alone is accurate to one sample", T, q15, q31, float,
                   double) {
  dqfx::encoder<T> e{parameters(65536, 0.0)};
  const double speed = 0.0047;  // 0.235 counts per sample: edges 4 or 5 samples apart
  const shaft s{0.3, speed};
  double worst = 0;
  for (int k = 0; k < 20000; ++k) {
    e.update(counter_of(s.count(k * ts), 65536));
    if (k > 2000) worst = std::fmax(worst, std::fabs(to_double(e.raw_speed()) / speed - 1));
  }
  MESSAGE(name<T>(), ": relative error ", worst, " at ", speed, " pu with edges timed by the sample clock");
  // One count per 4.26 samples, measured to +/-1 sample: within 1/3.26 of the speed
  // (a filter would average it).
  CHECK(worst < 0.31);
  CHECK(e.method() == dqfx::encoder_speed_method::timing);
}

TEST_CASE_TEMPLATE("encoder: the speed decays when the edges stop, and switching has hysteresis", T, q15, q31,
                   float, double) {
  dqfx::encoder<T> e{parameters()};
  shaft s{0.3, 0.01};
  int k = 0;
  for (; k < 4000; ++k) feed(e, s, k);
  CHECK(to_double(e.speed()) == doctest::Approx(0.01).epsilon(1e-3));
  // The shaft stops: the count freezes; after the last interval has passed, the speed is
  // at most one count over the time since the last edge.
  const std::int64_t frozen = s.count(k * ts);
  const double last_edge = s.edge_time(k * ts);
  for (int n = 0; n < 20000; ++n, ++k) {
    const double t = k * ts;
    e.update(counter_of(frozen, 65536), ticks_of(last_edge), ticks_of(t));
    const double bound = two_pi * pole_pairs / (cpt * base_speed * (t - last_edge));
    CHECK(to_double(e.speed()) <= std::fmax(0.01, bound) * (1 + 1e-3) + 2 * lsb<T>());
  }
  CHECK(to_double(e.speed()) < 0.0005);
  // Hysteresis: counting from 1.25 * switch_speed up, timing again below switch_speed.
  dqfx::encoder<T> h{parameters()};
  for (int n = 0; n < 4000; ++n) feed(h, shaft{0.3, 0.055}, n);
  CHECK(h.method() == dqfx::encoder_speed_method::timing);  // between 0.05 and 0.0625
  // The same shaft speeding up, its count continuous at the change.
  const shaft slow{0.3, 0.055};
  shaft fast{0.3, 0.07};
  fast.start = slow.start + (slow.counts_per_second() - fast.counts_per_second()) * 4000 * ts;
  for (int n = 4000; n < 8000; ++n) feed(h, fast, n);
  CHECK(h.method() == dqfx::encoder_speed_method::counting);
}

TEST_CASE_TEMPLATE("encoder: the first-order filter has the designed time constant", T, q15, q31, float, double) {
  dqfx::encoder_parameters p = parameters();
  p.filter_bandwidth = 500;  // rad/s: time constant 2 ms = 40 samples
  dqfx::encoder<T> e{p};
  const shaft s{0.3, 0.5};
  // From zero speed (the filter starts at 0) to 0.5 pu: after the window fills, the output
  // follows 1 - exp(-t / tau) of the raw speed.
  double worst = 0;
  for (int k = 0; k < 1000; ++k) {
    feed(e, s, k);
    if (k > 400) worst = std::fmax(worst, std::fabs(to_double(e.speed()) - 0.5));
  }
  CHECK(worst < 2e-3);
  // Reference: the textbook recursion y += a (x - y), a = 1 - exp(-500 Ts), on the raw speed.
  dqfx::encoder<T> f{p};
  const double a = 1 - std::exp(-500 * ts);
  double y = 0;
  double track = 0;
  for (int k = 0; k < 400; ++k) {
    feed(f, s, k);
    y += a * (to_double(f.raw_speed()) - y);
    track = std::fmax(track, std::fabs(to_double(f.speed()) - y));
  }
  MESSAGE(name<T>(), ": filter against the textbook recursion ", track, " pu");
  CHECK(track < 4 * lsb<T>() + 1e-6);
}

TEST_CASE_TEMPLATE("encoder: a counter jump is flagged and the estimate holds", T, q15, q31, float, double) {
  dqfx::encoder<T> e{parameters()};
  const shaft s{0.3, 0.3};
  int k = 0;
  for (; k < 2000; ++k) feed(e, s, k);
  const dqfx::angle mech = e.mechanical(), elec = e.electrical_angle();
  const T speed = e.speed();
  CHECK(e.max_step() < 100);
  // One corrupted reading: 1000 counts away (far beyond 1 pu in one sample).
  const std::uint32_t good = counter_of(s.count(k * ts), 65536);
  e.update(good + 1000u, ticks_of(k * ts), ticks_of(k * ts));
  CHECK(e.jump());
  CHECK(e.fault());
  CHECK(e.mechanical() == mech);
  CHECK(e.electrical_angle() == elec);
  CHECK(e.speed() == speed);
  // A reading beyond the counter's period (a 4000-count counter reading 4000 or more).
  dqfx::encoder<T> r{parameters(cpt)};
  r.update(10u);
  r.update(cpt + 5u);
  CHECK(r.jump());
  // The next good reading goes on from the last good one.
  ++k;
  feed(e, s, k);
  CHECK_FALSE(e.jump());
  CHECK(e.fault());  // sticky
  CHECK(std::fabs(to_double(e.speed()) - 0.3) < 0.01);
  e.clear_faults();
  CHECK_FALSE(e.fault());
  // A counter that really jumped keeps faulting until reset() (or until lost).
  for (int n = 0; n < 3; ++n) {
    e.update(counter_of(s.count(k * ts) + 30000, 65536), 0, 0);
    CHECK(e.jump());
  }
  e.reset();
  e.update(counter_of(s.count(k * ts) + 30000, 65536), 0, 0);
  CHECK_FALSE(e.jump());
}

TEST_CASE("encoder: parameters out of range are flagged") {
  dqfx::encoder_parameters p = parameters();
  p.counts_per_turn = 2;
  CHECK(dqfx::encoder<q15>{p}.parameter_fault());
  p = parameters();
  p.pole_pairs = 0;
  CHECK(dqfx::encoder<q15>{p}.parameter_fault());
  p = parameters();
  p.max_speed = 200;  // more than half a turn per sample
  CHECK(dqfx::encoder<q15>{p}.parameter_fault());
  constexpr dqfx::encoder_parameters good{4096, 4, 65536, {}, two_pi * 1000, 50e-6, 0.0, 0.05, 0.0, 1.0};
  constexpr dqfx::encoder<q31> e{good};
  static_assert(!e.parameter_fault());
  // 1.0 pu = 250 mechanical turns/s: 51.2 counts per sample, plus one.
  static_assert(e.max_step() == 52);
}

TEST_CASE_TEMPLATE("encoder: on the simulator's counter (dqfx::sim), 16-bit timer", T, q15, float) {
  // The simulator of issue 6 counts quadrature edges from position 0 with `count_at_zero`
  // where the d axis is on phase a; a 16-bit timer reads the low half.
  dqfx::sim::encoder_parameters sp{};
  sp.counts_per_turn = cpt;
  sp.count_at_zero = 1234;
  dqfx::encoder_parameters p = parameters(65536, 0.0);
  // Offset: the electrical reading at the d axis, i.e. of count 1234.
  p.offset = dqfx::electrical(dqfx::angle::from_turns(1234.0 / cpt), pole_pairs);
  dqfx::encoder<T> e{p};
  const double w = 0.2 * base_speed / pole_pairs;  // mechanical rad/s
  double worst = 0, worst_speed = 0;
  for (int k = 0; k < 8000; ++k) {
    const double position = 0.1 + w * k * ts;
    e.update(dqfx::sim::encoder_counter(sp, position) & 0xFFFFu);
    const double theta = std::fmod(position * pole_pairs, two_pi);
    worst = std::fmax(worst, std::fabs(std::remainder(e.electrical_angle().radians() - theta, two_pi)) * 180 / 3.14159265358979);
    if (k > 1000) worst_speed = std::fmax(worst_speed, std::fabs(to_double(e.raw_speed()) - 0.2));
  }
  MESSAGE(name<T>(), " on dqfx::sim::encoder_counter: max electrical angle error ", worst, " deg (one count is ",
          360.0 * pole_pairs / cpt, "), max speed error ", worst_speed, " pu");
  CHECK(worst <= 360.0 * pole_pairs / cpt + 1e-6);
  CHECK(worst_speed < 2e-3);
}

// ---------------------------------------------------------------------------------------
// Glitches, lost position, index pulse and stuck counter, on a second invented drive: a
// 10,000-count encoder, 7 pole pairs, sampled at 12 kHz, speed 1.0 = 500 Hz electrical, so
// max_speed 1.0 moves 59.5 counts per sample (largest accepted step 60).
namespace {

constexpr std::uint32_t fast_cpt = 10000;
constexpr double fast_ts = 1.0 / 12000;
constexpr double fast_counts_per_pu = 500.0 / 7 * fast_cpt * fast_ts;  // counts per sample at 1.0 pu

dqfx::encoder_parameters fast_drive(std::uint32_t period) {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = fast_cpt;
  p.pole_pairs = 7;
  p.counter_period = period;
  p.base_speed = two_pi * 500;
  p.sample_time = fast_ts;
  p.max_speed = 1.0;
  return p;
}

// A shaft at constant speed (counts per sample), exact in counts: count(k) = floor(start + v k).
struct steady {
  double start = 12345.25;
  double per_sample = 0.0;
  std::int64_t count(std::int64_t k) const {
    return static_cast<std::int64_t>(std::floor(start + per_sample * static_cast<double>(k)));
  }
};

}  // namespace

TEST_CASE_TEMPLATE("encoder: a glitch of n samples costs exactly n samples at any speed up to max_speed", T, q15, q31,
                   float, double) {
  for (std::uint32_t period : {65536u, 0u}) {
    for (double fraction : {0.1, 0.5, 0.9, 1.0, -0.1, -0.5, -0.9, -1.0}) {
      for (int length : {1, 2, 10}) {
        for (std::int64_t size : {100, 3000, -3000, 20000, -20000}) {
          const steady s{12345.25, fraction * fast_counts_per_pu};
          // Each glitched reading must lie outside max_speed's reach, or it is motion.
          bool detectable = true;
          for (int i = 1; i <= length; ++i) {
            const double travel = s.per_sample * i + static_cast<double>(size);
            detectable = detectable && std::fabs(travel) > 60.0 * i + 1;
          }
          if (!detectable) continue;
          dqfx::encoder<T> e{fast_drive(period)};
          REQUIRE(e.max_step() == 60);
          const std::uint32_t first = counter_of(s.count(0), period) % fast_cpt;
          int rejected = 0;
          double worst_speed = 0;
          for (int k = 0; k < 3000; ++k) {
            const bool glitched = k >= 1000 && k < 1000 + length;
            const std::int64_t count = s.count(k) + (glitched ? size : 0);
            const dqfx::angle held = e.electrical_angle();
            e.update(counter_of(count, period));
            REQUIRE_FALSE(e.lost());
            if (glitched) {
              ++rejected;
              REQUIRE(e.jump());
              REQUIRE(e.state() == dqfx::encoder_state::holding);
              REQUIRE(e.electrical_angle() == held);
              continue;
            }
            REQUIRE_FALSE(e.jump());
            const std::int64_t travelled = s.count(k) - s.count(0);
            REQUIRE(e.position() == ((first + travelled) % fast_cpt + fast_cpt) % fast_cpt);
            // Counting speed: within one count per window of the truth, glitch or not.
            if (k > 20) worst_speed = std::fmax(worst_speed, std::fabs(to_double(e.raw_speed()) - fraction));
          }
          CHECK(rejected == length);
          CHECK(e.fault());
          const double count_resolution = 1.0 / (16 * fast_counts_per_pu) + 2 * lsb<T>() + 1e-6;
          INFO(name<T>(), " period ", period, " speed ", fraction, " glitch ", size, " x ", length);
          CHECK(worst_speed <= count_resolution);
        }
      }
    }
  }
}

TEST_CASE_TEMPLATE("encoder: after max_rejected readings in a row the position is lost and never resumes by itself",
                   T, q15, q31, float, double) {
  for (std::uint32_t period : {65536u, 0u}) {
    dqfx::encoder_parameters p = fast_drive(period);
    p.max_rejected = 20;
    p.index_position = 2500;
    dqfx::encoder<T> e{p};
    CHECK(e.max_missed() == 20);
    const steady s{777.5, 0.7 * fast_counts_per_pu};
    int k = 0;
    for (; k < 500; ++k) e.update(counter_of(s.count(k), period));
    const dqfx::angle held = e.electrical_angle();
    const T speed = e.speed();
    // The counter goes wrong by 20000 counts for good (say, a real jump).
    for (int n = 0; n < 20; ++n, ++k) {
      REQUIRE_FALSE(e.lost());
      e.update(counter_of(s.count(k) + 20000, period));
      CHECK(e.jump());
    }
    CHECK(e.lost());
    CHECK(e.state() == dqfx::encoder_state::lost);
    CHECK(e.fault());
    // Lost: no reading is taken, not the right ones, not across any number of counter wraps.
    for (int n = 0; n < 40000; ++n, ++k) {
      e.update(counter_of(s.count(k) + (n % 2 ? 20000 : 0), period));
      REQUIRE(e.lost());
      REQUIRE(e.electrical_angle() == held);
      REQUIRE(e.speed() == speed);
    }
    e.clear_faults();
    CHECK(e.lost());  // only a reference ends it
    // The index pulse: the counter latched at the true position 2500 (mod turn) of the shaft.
    const std::int64_t at = s.count(k);
    const std::int64_t to_index = (((2500 - at) % fast_cpt) + fast_cpt) % fast_cpt;
    e.index(counter_of(at + to_index - static_cast<std::int64_t>(fast_cpt), period));
    CHECK_FALSE(e.lost());
    CHECK(e.referenced());
    CHECK(e.position() == 2500);
    // Tracking again from the index (the latch was less than a turn behind: take the next
    // sample within reach of it instead).
    e.reset();
    CHECK(e.state() == dqfx::encoder_state::waiting);
    e.update(counter_of(s.count(k), period));
    CHECK(e.state() == dqfx::encoder_state::tracking);
    CHECK(e.position() == counter_of(s.count(k), period) % fast_cpt);
  }
  // Where half a turn is near, fewer rejections are allowed: 1000 counts per turn at 59.5
  // counts per sample reach half a turn (500) after 8 samples of window.
  dqfx::encoder_parameters p = fast_drive(65536);
  p.counts_per_turn = 1000;
  dqfx::encoder<T> small{p};
  CHECK(small.max_step() == 6);
  CHECK(small.max_missed() == 32);
  p.max_speed = 10.0;  // 59.5 counts per sample: a window of 60 reaches 499 in 8 samples
  dqfx::encoder<T> fast{p};
  CHECK(fast.max_step() == 60);
  CHECK(fast.max_missed() == 8);
}

TEST_CASE_TEMPLATE("encoder: the index pulse re-references the position and finds lost counts", T, q15, q31, float,
                   double) {
  for (double fraction : {0.3, -0.8}) {
    dqfx::encoder_parameters p = fast_drive(65536);
    p.index_position = 1234;
    dqfx::encoder<T> e{p};
    const steady s{50.5, fraction * fast_counts_per_pu};
    const auto turn = static_cast<std::int64_t>(fast_cpt);
    std::int64_t missed = 0;  // counts the counter missed (an electrical disturbance)
    int pulses = 0, errors = 0;
    bool error_due = false;
    for (int k = 0; k < 20000; ++k) {
      if (k == 9000) missed = -7, error_due = true;  // small enough to look like motion
      e.update(counter_of(s.count(k) + missed, 65536));
      REQUIRE_FALSE(e.jump());
      // The index at true counts 1234 (mod turn), crossed between samples k-1 and k.
      const std::int64_t a = s.count(k - 1), b = s.count(k);
      const std::int64_t lo = std::min(a, b);
      const std::int64_t mark = lo + (((1234 - lo) % turn) + turn) % turn;
      const bool crossed = a < b ? (mark > a && mark <= b) : (mark >= b && mark < a);
      if (k > 0 && crossed) {
        ++pulses;
        e.index(counter_of(mark + missed, 65536));
        CHECK(e.count_error() == error_due);
        if (e.count_error()) ++errors;
        error_due = false;
        e.clear_faults();
      }
      // From the first pulse on, the position is the shaft's, index-referenced, except for
      // the missed counts until the next pulse finds them.
      if (pulses > 0) {
        const std::int64_t off = error_due ? missed : 0;
        REQUIRE(e.position() == (((s.count(k) + off) % turn) + turn) % turn);
      }
    }
    CHECK(pulses > 20);
    CHECK(errors == 1);
  }
}

TEST_CASE_TEMPLATE("encoder: a counter stuck at speed is flagged within four counts of travel", T, q15, q31, float,
                   double) {
  dqfx::encoder_parameters p = fast_drive(65536);
  p.max_acceleration = 20.0;  // per unit per second: 1.0 pu to standstill in 50 ms at the most
  const double d = 20.0 * fast_ts * fast_counts_per_pu;  // counts per sample, per sample
  for (double fraction : {0.01, 0.05, 0.1, 0.5, 1.0, -0.3}) {
    dqfx::encoder<T> e{p};
    const steady s{99.5, fraction * fast_counts_per_pu};
    int k = 0;
    for (; k < 200; ++k) e.update(counter_of(s.count(k), 65536));
    REQUIRE_FALSE(e.stuck());
    const std::int64_t frozen = s.count(k - 1);
    int flagged_after = 0;
    for (int n = 1; n <= 200 && !e.lost(); ++n, ++k) {
      e.update(counter_of(frozen, 65536));
      flagged_after = n;
    }
    // The documented rule: r = (window counts - d W^2 / 2 - 2) / W counts per sample, at
    // least 2 sqrt(d); flagged once the quiet samples reach 4 / r.
    const double r = (std::fabs(s.per_sample) * 16 - d * 128 - 2) / 16;
    MESSAGE(name<T>(), " at ", fraction, " pu: stuck after ", flagged_after, " samples");
    if (r >= 2 * std::sqrt(d) + 1.0 / 16) {
      CHECK(e.stuck());
      CHECK(e.lost());
      CHECK(flagged_after <= static_cast<int>(std::ceil(4 / r)) + 1);
    } else {
      CHECK_FALSE(e.stuck());
    }
  }
  // Braking at max_acceleration from 1.0 pu to standstill and back: never stuck.
  for (double scale : {1.0, 0.999}) {
    dqfx::encoder<T> e{p};
    const double v0 = fast_counts_per_pu;
    const double brake = d * scale;
    // Full speed for 500 samples, then braking through standstill to full speed backwards.
    for (int k = 0; k < 500 + static_cast<int>(2 * v0 / brake); ++k) {
      const double t = k;
      const double x = t < 500 ? v0 * t : v0 * 500 + v0 * (t - 500) - brake * (t - 500) * (t - 500) / 2;
      e.update(counter_of(static_cast<std::int64_t>(std::floor(1000.5 + x)), 65536));
      REQUIRE_FALSE(e.stuck());
      REQUIRE_FALSE(e.jump());
    }
  }
}
