// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Incremental (quadrature) encoder: the value of a wrapping hardware position counter to
/// mechanical and electrical angle, and speed, for q15, q31, float and double.
///
/// Angle: the counter is read once per sample; the step since the last reading is taken
/// modulo the counter's period (a 16-bit counter wrapping at 65536, a 32-bit one at 2^32,
/// or one reloaded at any count), so wrap-around costs nothing and the position within the
/// turn is kept exactly in counts. Mechanical angle = position * 2^32 / counts_per_turn
/// (within 1 binary-angle unit); electrical = pole_pairs * mechanical - offset, where
/// `offset` is the electrical reading when the rotor's d axis lies on phase a (found by
/// alignment). The position starts at counter mod counts_per_turn.
///
/// Speed (electrical, per unit), two methods with a switch at low speed:
///   counting: counts over the last `Window` samples (moving window), resolution
///             2*pi*pole_pairs / (counts_per_turn * Window * Ts * base_speed) per count;
///   timing:   counts between the two latest edges over the time between them, read from
///             an edge-capture timer (`update(count, edge_ticks, now_ticks)`) or, without
///             one, from the sample clock (`update(count)`). With no edge for longer than
///             the last interval, the speed can be no more than one count over the time
///             since the last edge, and the estimate decays as that bound.
/// Timing is used below `switch_speed`, counting above 1.25 * `switch_speed` (hysteresis),
/// then a first-order low-pass filter (`filter_bandwidth`, rad/s; 0 for none).
///
/// Bad input: a reading beyond the counter's period, or one farther from the last good
/// reading than `max_speed` can travel in the samples since it (plus one count), is
/// rejected: `jump()` for that sample, the sticky `fault()`, angle and speed hold. The
/// window grows with each rejected sample, so a glitch of n samples costs exactly n samples
/// at any speed up to `max_speed` (a glitch small enough to lie inside the window looks
/// like motion and is taken; the index check below finds what it leaves behind). After
/// `max_rejected` rejections in a row, or sooner when the window would reach half a turn or
/// half the counter's period (where the turn count becomes ambiguous), the encoder is
/// `lost()`: it ignores readings until a reference comes back, by an index pulse (`index()`)
/// or an explicit re-alignment (`reset()`), and never resumes by itself. With
/// `max_acceleration` set, a counter that stops while the shaft turns (no count for 4 counts
/// of travel at the last speed) is `stuck()` and lost too. A drive whose encoder is lost has
/// no angle: stop producing torque (or hand over to a sensorless estimator) until it is
/// referenced again. An index pulse re-references the position to `index_position` and
/// checks the count every turn (`count_error()` beyond `index_tolerance`). A design outside
/// the rules of `parameter_fault()` (among them the estimators' shared speed-scale rule:
/// the base speed moves 2^-32 turn to half a turn per sample) raises it, is a compile-time
/// error for a constexpr encoder, and gives an encoder that ignores every reading
/// (angle 0, speed 0).

#include <array>
#include <cstddef>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/detail/estimation.hpp"
#include "dqfx/extended.hpp"
#include "dqfx/number.hpp"

namespace dqfx {

struct encoder_parameters {
  std::uint32_t counts_per_turn = 0;  ///< counter steps per mechanical turn (4x lines), 4..2^30
  std::uint32_t pole_pairs = 1;
  /// Steps after which the counter wraps to 0: 65536 (16-bit), 0 for 2^32 (32-bit), or the
  /// reload value + 1 of a counter reloaded elsewhere (e.g. counts_per_turn).
  std::uint32_t counter_period = 65536;
  angle offset{};                 ///< electrical reading with the d axis on phase a
  double base_speed = 1.0;        ///< electrical rad/s that speed 1.0 stands for
  double sample_time = 0.0;       ///< s, between readings
  double tick_frequency = 0.0;    ///< Hz of the edge-capture timer (0: sample clock only)
  double switch_speed = 0.05;     ///< per unit: timing between edges below, counting above
  double filter_bandwidth = 0.0;  ///< rad/s of the first-order speed filter; 0: none
  double max_speed = 1.0;         ///< per unit: faster steps are jumps
  /// Rejected readings in a row after which the position is lost (1..65535).
  std::uint32_t max_rejected = 32;
  /// Per unit speed per second: the fastest the shaft's speed can change (peak torque over
  /// inertia, with margin). 0: no stuck-counter check.
  double max_acceleration = 0.0;
  std::uint32_t index_position = 0;  ///< position (counts) the index pulse stands for
  std::uint32_t index_tolerance = 2;  ///< counts the index may land off before `count_error()`
};

/// Which speed method produced the latest raw speed.
enum class encoder_speed_method : std::uint8_t { timing, counting };

/// waiting: no reading yet (or after `reset()`); tracking: the latest reading was taken;
/// holding: readings rejected, estimate held, still able to resume; lost: the position is
/// unknown until `index()` or `reset()`.
enum class encoder_state : std::uint8_t { waiting, tracking, holding, lost };

namespace detail {
// Deliberately not constexpr: reaching it in a constexpr encoder stops compilation.
inline void encoder_parameters_out_of_range() noexcept {}
}  // namespace detail

template <class T, std::size_t Window = 16>
class encoder {
  static_assert(is_number_v<T>, "dqfx::encoder supports q15, q31, float and double");
  static_assert(Window >= 1 && Window <= 4096, "dqfx::encoder: window of 1..4096 samples");

 public:
  using value_type = T;
  static constexpr std::size_t window = Window;

  constexpr encoder() noexcept = default;
  constexpr explicit encoder(const encoder_parameters& p) noexcept
      : cpt_{p.counts_per_turn},
        period_{p.counter_period},
        pole_pairs_{p.pole_pairs},
        offset_{p.offset},
        units_per_count_{p.counts_per_turn >= 4 ? 0xFFFFFFFFFFFFFFFFu / p.counts_per_turn : 0u},
        ticks_per_sample_{ticks_per_sample(p)},
        counting_{speed_per_count(p) / (p.sample_time * static_cast<double>(Window))},
        timing_{speed_per_count(p) * (p.tick_frequency > 0.0 ? p.tick_frequency
                                                            : (p.sample_time > 0 ? 1.0 / p.sample_time : 0.0))},
        switch_low_{detail::bounded<T>(p.switch_speed)},
        switch_high_{detail::bounded<T>(1.25 * p.switch_speed)},
        filter_{p.filter_bandwidth, p.sample_time} {
    // Largest credible step: max_speed in mechanical turns per sample, in counts, plus one.
    const double turns = p.max_speed * p.base_speed * p.sample_time /
                         (6.283185307179586477 * static_cast<double>(p.pole_pairs > 0 ? p.pole_pairs : 1));
    const double steps = turns * static_cast<double>(p.counts_per_turn) + 1.0;
    const double half_period = p.counter_period == 0 ? 2147483648.0 : 0.5 * p.counter_period;
    const double half_turn = 0.5 * static_cast<double>(p.counts_per_turn);
    const bool valid = p.counts_per_turn >= 4 && p.counts_per_turn <= (1u << 30) && p.pole_pairs >= 1 &&
                       p.counter_period != 1 && p.sample_time > 0.0 && p.base_speed > 0.0 &&
                       detail::speed_scale_valid(p.base_speed, p.sample_time) &&
                       detail::tick_frequency_valid(p.tick_frequency, p.sample_time) && p.max_speed > 0.0 &&
                       steps < half_period && steps < half_turn && !(p.filter_bandwidth < 0.0) &&
                       p.max_rejected >= 1 && p.max_rejected <= 65535 && p.max_acceleration >= 0.0 &&
                       p.max_acceleration < 1e30 && p.index_position < p.counts_per_turn &&
                       p.index_tolerance < p.counts_per_turn / 2;
    if (!valid) {
      detail::encoder_parameters_out_of_range();
      parameter_fault_ = true;
      max_step_ = 0;
      return;
    }
    max_step_ = static_cast<std::uint32_t>(steps);
    index_position_ = p.index_position;
    index_tolerance_ = p.index_tolerance;
    // The window after n rejections, (n + 1) * max_step, must stay below half a turn and
    // half the counter's period, or a reading could be taken a turn or a wrap away.
    const double limit = half_period < half_turn ? half_period : half_turn;
    const double reachable = (limit - 1.0) / static_cast<double>(max_step_);  // samples
    max_missed_ = reachable < static_cast<double>(p.max_rejected) ? static_cast<std::uint32_t>(reachable)
                                                                   : p.max_rejected;
    // Stuck counter: per sample, the speed changes by at most `d` counts per sample.
    const double d = p.max_acceleration * p.sample_time * (steps - 1.0) / p.max_speed;
    const double w = static_cast<double>(Window);
    if (p.max_acceleration > 0.0 && d * w * w < 1e9) {
      stuck_slack_ = static_cast<std::uint32_t>(d * w * w / 2.0) + 2u;
      stuck_min_ = stuck_slack_ + static_cast<std::uint32_t>(2.0 * root(d) * w) + 1u;
    }
  }

  /// One sample, edges timed by the sample clock (each counter change is taken to happen
  /// at the sample instant).
  constexpr void update(std::uint32_t count) noexcept {
    sample_clock_ += ticks_per_sample_;
    const bool moved = state_ != encoder_state::waiting && count != last_count_;
    update(count, moved ? sample_clock_ : last_edge_ticks_, sample_clock_);
  }

  /// One sample with an edge-capture timer: `edge_ticks` is the timer value captured at the
  /// latest counter change, `now_ticks` the timer value now (both wrap at 2^32).
  constexpr void update(std::uint32_t count, std::uint32_t edge_ticks, std::uint32_t now_ticks) noexcept {
    jump_ = false;
    if (parameter_fault_ || state_ == encoder_state::lost) return;
    if (period_ != 0 && count >= period_) return reject();
    if (state_ == encoder_state::waiting) return start(count, edge_ticks, count % cpt_);
    const std::int64_t step = wrapped_step(count);
    if (detail::magnitude_u64(step) > reach_) return reject();
    last_count_ = count;
    move(step);
    if (missed_ > 0) spread_over_missed(step);
    measure_counting();
    measure_timing(step, edge_ticks, now_ticks);
    select();
    speed_ = filter_.step(raw_speed_);
    if (stuck_min_ != 0) watch_for_stuck(step);
    if (missed_ == 0) return;
    missed_ = 0;
    reach_ = max_step_;
    state_ = encoder_state::tracking;
  }

  /// The index (Z) pulse: `latched` is the counter's value captured at the pulse. While
  /// tracking, the position there must be `index_position` within `index_tolerance` from
  /// the second pulse on (else `count_error()`); either way the position is re-referenced
  /// to it. Holding, lost or waiting, the pulse becomes the reference and tracking starts
  /// from it. Call it once per pulse, within a sample of the latch.
  constexpr void index(std::uint32_t latched) noexcept {
    if (parameter_fault_ || (period_ != 0 && latched >= period_)) return;
    const std::int64_t step = wrapped_step(latched);
    if (state_ != encoder_state::tracking || detail::magnitude_u64(step) > max_step_) {
      start(latched, last_edge_ticks_, index_position_);
      referenced_ = true;
      return;
    }
    const std::int64_t seen = wrap_turn(std::int64_t{position_} + step);
    std::int64_t off = seen - std::int64_t{index_position_};  // in (-cpt, cpt)
    if (2 * off >= std::int64_t{cpt_}) off -= cpt_;
    if (2 * off < -std::int64_t{cpt_}) off += cpt_;
    if (referenced_ && detail::magnitude_u64(off) > index_tolerance_) count_error_ = fault_ = true;
    referenced_ = true;
    position_ = static_cast<std::uint32_t>(wrap_turn(std::int64_t{position_} - off));
    move(0);
  }

  /// Forgets the counter reference (after a jump that was real, a lost position, or a
  /// re-homing): the next reading starts again as on power-up, so the offset must be found
  /// again (re-alignment). Faults are kept until `clear_faults()`.
  constexpr void reset() noexcept {
    state_ = encoder_state::waiting;
    referenced_ = false;
  }

  constexpr angle mechanical() const noexcept { return mechanical_; }
  constexpr angle electrical_angle() const noexcept { return electrical_; }
  /// Filtered electrical speed, per unit.
  constexpr T speed() const noexcept { return speed_; }
  /// The latest unfiltered speed, from `method()`.
  constexpr T raw_speed() const noexcept { return raw_speed_; }
  constexpr encoder_speed_method method() const noexcept { return method_; }
  /// Position within the turn, in counts.
  constexpr std::uint32_t position() const noexcept { return position_; }
  /// The latest reading was rejected (impossible step or out of the counter's range).
  constexpr bool jump() const noexcept { return jump_; }
  /// Sticky: a reading was rejected, the index found a count error, or the position was
  /// lost, since the last `clear_faults()`.
  constexpr bool fault() const noexcept { return fault_; }
  constexpr encoder_state state() const noexcept { return state_; }
  /// Angle and speed can be used: tracking, or holding through a few rejected readings.
  constexpr bool valid() const noexcept {
    return state_ == encoder_state::tracking || state_ == encoder_state::holding;
  }
  /// The position is unknown (too many rejected readings, or a stuck counter): readings are
  /// ignored until `index()` or `reset()`.
  constexpr bool lost() const noexcept { return state_ == encoder_state::lost; }
  /// Sticky: the counter stood still while the shaft, by `max_acceleration`, had to turn.
  constexpr bool stuck() const noexcept { return stuck_; }
  /// Sticky: an index pulse found the position off by more than `index_tolerance`.
  constexpr bool count_error() const noexcept { return count_error_; }
  /// An index pulse has set the position since the start or the last `reset()`.
  constexpr bool referenced() const noexcept { return referenced_; }
  constexpr void clear_faults() noexcept { fault_ = stuck_ = count_error_ = false; }
  /// Counts per turn outside 4..2^30, zero pole pairs, non-positive times or speeds, a base
  /// speed that moves less than 2^-32 turn or at least half a turn per sample, a tick
  /// frequency that is negative, not a number or 2^32 ticks per sample or more, or a
  /// max_speed step of half a turn or half the counter period or more.
  constexpr bool parameter_fault() const noexcept { return parameter_fault_; }
  /// The largest step per sample accepted, in counts.
  constexpr std::uint32_t max_step() const noexcept { return max_step_; }
  /// Rejected readings in a row after which the position is lost: `max_rejected`, or fewer
  /// where the window would reach half a turn or half the counter's period.
  constexpr std::uint32_t max_missed() const noexcept { return max_missed_; }

 private:
  /// Timer ticks per sample for `update(count)`: 1 without a capture timer.
  static constexpr std::uint32_t ticks_per_sample(const encoder_parameters& p) noexcept {
    const double t = p.tick_frequency * p.sample_time;
    return t >= 1.0 && t < 4294967295.0 ? static_cast<std::uint32_t>(detail::round_half_away(t)) : 1u;
  }
  /// sqrt(x) for 0 <= x < 1e9 by Newton's method from above (constexpr; design time only).
  static constexpr double root(double x) noexcept {
    double r = x > 1.0 ? x : 1.0;
    for (int i = 0; i < 64; ++i) r = 0.5 * (r + x / r);
    return r;
  }
  static constexpr double speed_per_count(const encoder_parameters& p) noexcept {
    // Electrical per-unit speed of one count per second.
    const double d = static_cast<double>(p.counts_per_turn) * p.base_speed;
    return d > 0.0 ? 6.283185307179586477 * static_cast<double>(p.pole_pairs) / d : 0.0;
  }

  constexpr void reject() noexcept {
    jump_ = true;
    fault_ = true;
    if (state_ == encoder_state::waiting) return;
    if (++missed_ >= max_missed_) {
      state_ = encoder_state::lost;
      return;
    }
    state_ = encoder_state::holding;
    reach_ += max_step_;
    // Keep the window's time base: this sample moved nothing we believe; the next good
    // reading brings the counts (`spread_over_missed`).
    const T held = counting_speed_;
    measure_counting();
    counting_speed_ = held;
  }

  /// The good reading after `missed_` rejected ones moved `step` in missed_ + 1 samples:
  /// the window entries of the rejected samples get their share, so the counting speed
  /// does not read one sample's travel high when they leave the window.
  constexpr void spread_over_missed(std::int64_t step) noexcept {
    const std::uint32_t before = total_ - static_cast<std::uint32_t>(static_cast<std::uint64_t>(step) & 0xFFFFFFFFu);
    const std::uint32_t n = missed_ < Window ? missed_ : static_cast<std::uint32_t>(Window - 1);
    for (std::uint32_t j = 1; j <= n; ++j) {
      const std::int64_t share = step * std::int64_t{missed_ + 1u - j} / std::int64_t{missed_ + 1u};
      const std::size_t at = (head_ + Window - j) % Window;
      history_[at] = before + static_cast<std::uint32_t>(static_cast<std::uint64_t>(share) & 0xFFFFFFFFu);
    }
  }

  /// With `max_acceleration` set: the counts of the window at the last edge, less what
  /// braking could have taken off since the window's middle, give the slowest the shaft
  /// can turn now (r counts per sample, with r^2 >= 4 * max change per sample, so it cannot
  /// stop within 2 counts); no count for 4 counts of travel at r means the counter is stuck.
  constexpr void watch_for_stuck(std::int64_t step) noexcept {
    if (step != 0) {
      quiet_ = 0;
      edge_counts_ = counted_ ? static_cast<std::uint32_t>(detail::magnitude_u64(window_counts_)) : 0;
      return;
    }
    if (quiet_ < 0xFFFF) ++quiet_;
    if (edge_counts_ < stuck_min_) return;
    if (std::uint64_t{quiet_} * (edge_counts_ - stuck_slack_) >= 4u * Window) {
      stuck_ = fault_ = true;
      state_ = encoder_state::lost;
    }
  }

  /// pos modulo counts_per_turn, in [0, counts_per_turn).
  constexpr std::int64_t wrap_turn(std::int64_t pos) const noexcept {
    const std::int64_t c = cpt_;
    return ((pos % c) + c) % c;
  }

  constexpr void start(std::uint32_t count, std::uint32_t edge_ticks, std::uint32_t position) noexcept {
    state_ = encoder_state::tracking;
    missed_ = 0;
    reach_ = max_step_;
    quiet_ = 0;
    edge_counts_ = 0;
    last_count_ = count;
    position_ = position;
    move(0);
    last_edge_ticks_ = edge_ticks;
    edges_ = 0;
    history_[0] = total_;
    head_ = 1 % Window;
    filled_ = 1;
  }

  /// count - last_count_ modulo the counter period, in [-period/2, period/2).
  constexpr std::int64_t wrapped_step(std::uint32_t count) const noexcept {
    if (period_ == 0) return signed_of(count - last_count_);
    std::int64_t d = std::int64_t{count} - std::int64_t{last_count_};
    const std::int64_t p = period_;
    if (2 * d >= p) d -= p;
    if (2 * d < -p) d += p;
    return d;
  }

  constexpr void move(std::int64_t step) noexcept {
    std::int64_t pos = std::int64_t{position_} + step;  // |step| < counts_per_turn / 2
    if (pos >= std::int64_t{cpt_}) pos -= cpt_;
    if (pos < 0) pos += cpt_;
    position_ = static_cast<std::uint32_t>(pos);
    total_ += static_cast<std::uint32_t>(static_cast<std::uint64_t>(step) & 0xFFFFFFFFu);
    mechanical_ = angle::from_raw(static_cast<std::uint32_t>(
        detail::multiply_shift(units_per_count_ & 0x7FFFFFFFFFFFFFFFu, position_, 31) >> 1));
    electrical_ = electrical(mechanical_, pole_pairs_) - offset_;
  }

  constexpr void measure_counting() noexcept {
    const std::uint32_t oldest = history_[head_];
    history_[head_] = total_;
    head_ = head_ + 1 == Window ? 0 : head_ + 1;
    if (filled_ < Window) {
      ++filled_;
      counted_ = false;
      return;
    }
    counted_ = true;
    window_counts_ = static_cast<std::int32_t>(signed_of(total_ - oldest));
    counting_speed_ = counting_.times(window_counts_);
  }

  constexpr void measure_timing(std::int64_t step, std::uint32_t edge_ticks, std::uint32_t now_ticks) noexcept {
    if (step != 0) {
      if (edges_ > 0) {
        const std::int64_t dt = detail::ticks_between(edge_ticks, last_edge_ticks_);
        const std::int64_t dc = signed_of(total_ - last_edge_total_);
        if (dt > 0 && dt < 0x80000000) {
          interval_ = static_cast<std::uint32_t>(dt);
          timing_speed_ = timing_.over(dc, interval_);
        }
      }
      edges_ = edges_ < 2 ? edges_ + 1 : 2;
      last_edge_ticks_ = edge_ticks;
      last_edge_total_ = total_;
      direction_ = step > 0 ? 1 : -1;
      return;
    }
    if (edges_ == 0) return;
    const std::int64_t elapsed = detail::ticks_between(now_ticks, last_edge_ticks_);
    if (elapsed >= 0x80000000) {
      timing_speed_ = T{};
      edges_ = 0;  // too long ago: the next edge starts a new interval
      return;
    }
    // No edge for longer than the last interval: at most one count over the time since.
    if (edges_ < 2 || elapsed > std::int64_t{interval_}) {
      const T bound = timing_.over(direction_, static_cast<std::uint32_t>(elapsed > 0 ? elapsed : 1));
      if (edges_ < 2 || abs(bound) < abs(timing_speed_)) timing_speed_ = bound;
    }
  }

  constexpr void select() noexcept {
    if (!counted_ || (method_ == encoder_speed_method::counting && abs(counting_speed_) < switch_low_)) {
      method_ = encoder_speed_method::timing;
    } else if (method_ == encoder_speed_method::timing && abs(timing_speed_) > switch_high_) {
      method_ = encoder_speed_method::counting;
    }
    raw_speed_ = method_ == encoder_speed_method::counting ? counting_speed_ : timing_speed_;
  }

  static constexpr std::int64_t signed_of(std::uint32_t v) noexcept {
    return v < 0x80000000u ? std::int64_t{v} : std::int64_t{v} - (std::int64_t{1} << 32);
  }

  std::uint32_t cpt_ = 4;
  std::uint32_t period_ = 0;
  std::uint32_t pole_pairs_ = 1;
  angle offset_{};
  std::uint64_t units_per_count_ = 0;  // floor(2^64 / counts_per_turn)
  std::uint32_t ticks_per_sample_ = 1;
  detail::count_scale<T> counting_{};
  detail::count_scale<T> timing_{};
  T switch_low_{};
  T switch_high_{};
  detail::low_pass<T> filter_{};
  std::uint32_t max_step_ = 0;
  std::uint32_t max_missed_ = 1;
  std::uint32_t stuck_min_ = 0;    // window counts at the last edge from which stuck is checked; 0: off
  std::uint32_t stuck_slack_ = 0;  // window counts braking can take off the speed at the edge
  std::uint32_t index_position_ = 0;
  std::uint32_t index_tolerance_ = 2;

  encoder_state state_ = encoder_state::waiting;
  std::uint32_t missed_ = 0;  // rejected readings since the last good one
  std::uint32_t reach_ = 0;   // the largest step accepted now: max_step * (missed + 1)
  std::uint32_t quiet_ = 0;   // good samples since the count last changed (to 0xFFFF)
  std::uint32_t edge_counts_ = 0;
  std::int32_t window_counts_ = 0;  // counts over the latest window
  bool referenced_ = false;
  bool stuck_ = false;
  bool count_error_ = false;
  std::uint32_t last_count_ = 0;
  std::uint32_t position_ = 0;
  std::uint32_t total_ = 0;  // counts travelled, wrapping
  angle mechanical_{};
  angle electrical_{};

  std::array<std::uint32_t, Window> history_{};
  std::size_t head_ = 0;
  std::size_t filled_ = 0;
  bool counted_ = false;
  T counting_speed_{};

  std::uint32_t sample_clock_ = 0;
  std::uint32_t last_edge_ticks_ = 0;
  std::uint32_t last_edge_total_ = 0;
  std::uint32_t interval_ = 0;
  int edges_ = 0;  // edges seen, 0..2
  int direction_ = 1;
  T timing_speed_{};

  encoder_speed_method method_ = encoder_speed_method::timing;
  T raw_speed_{};
  T speed_{};
  bool jump_ = false;
  bool fault_ = false;
  bool parameter_fault_ = false;
};

}  // namespace dqfx
