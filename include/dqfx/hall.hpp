// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Three Hall sensors: the three-bit state to an electrical angle, direction and speed,
/// with interpolation between edges, for q15, q31, float and double (hall_learner.hpp
/// learns the state-to-angle table from a forced slow rotation).
///
/// State bits: sensor a is bit 0, b bit 1, c bit 2. States 1..6 are valid; 0 (all low)
/// and 7 (all high) cannot occur with working sensors.
///
/// The table gives, for each valid state, the electrical angle at which that state begins
/// when the rotor turns forward (positive speed); the sectors between the six starts may
/// be unequal (misplaced sensors), each 20..100 degrees wide. On an edge the angle is
/// known exactly (the boundary between the two states) and the direction from the order.
/// The speed is the width of the sector just crossed over the time between its two edges,
/// timed by an edge-capture timer (`update(state, edge_ticks, now_ticks)`) or by the
/// sample clock (`update(state)`, accurate to one sample). Between edges the angle moves
/// on from the last edge at that speed and stops at the next expected edge, never beyond.
/// With no edge for longer than the last interval the speed can be no more than the
/// present sector's width over the time since the edge, and is reported so. Below
/// `minimum_speed` (no edge for the time a sector takes at that speed) the rotor counts as
/// standing: speed 0, angle the middle of the sector (within +/-30 degrees); so also after
/// power-up and after a reversal until two edges in one direction have been seen.
///
/// Bad input: an invalid state (000 or 111) or a jump to a non-adjacent state raises
/// `bad_state()` for that sample and the sticky `fault()`; angle and speed hold their last
/// good values. A non-adjacent state seen twice in a row is taken as real: the estimate
/// restarts in it as from standstill. A design outside the rules of `parameter_fault()`
/// (among them the estimators' shared speed-scale rule: the base speed moves 2^-32 turn to
/// half a turn per sample) raises it, is a compile-time error for a constexpr sensor, and
/// gives a sensor that ignores every reading (angle 0, speed 0).

#include <array>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/detail/estimation.hpp"
#include "dqfx/extended.hpp"
#include "dqfx/number.hpp"

namespace dqfx {

/// For each three-bit state, the electrical angle at which it begins when turning forward.
/// Entries 0 and 7 are unused.
struct hall_table {
  std::array<angle, 8> start{};

  /// Six equal sectors: `forward` lists the states in the order they appear turning
  /// forward, the first beginning at `first_start`.
  static constexpr hall_table evenly(const std::array<std::uint8_t, 6>& forward, angle first_start) noexcept {
    hall_table t{};
    for (std::size_t k = 0; k < 6; ++k) {
      const std::uint32_t sixth = static_cast<std::uint32_t>((std::uint64_t{1} << 32) * k / 6);
      t.start[forward[k] & 7u] = first_start + angle::from_raw(sixth);
    }
    return t;
  }
};

namespace detail {

// Deliberately not constexpr: reaching it for a constexpr sensor stops compilation.
inline void hall_parameters_out_of_range() noexcept {}

/// The forward order of a table and each sector's width; `valid` when the six starts are
/// distinct and every sector is 20..100 degrees wide.
struct hall_order {
  std::array<std::uint8_t, 8> next{};
  std::array<std::uint8_t, 8> previous{};
  std::array<std::uint32_t, 8> width{};  // binary-angle units
  bool valid = false;

  static constexpr hall_order of(const hall_table& t) noexcept {
    hall_order o{};
    constexpr std::uint32_t narrowest = 0x0E38E38Eu;  // 20 degrees
    constexpr std::uint32_t widest = 0x471C71C7u;     // 100 degrees
    bool good = true;
    for (std::uint8_t s = 1; s <= 6; ++s) {
      std::uint32_t best = 0;
      std::uint8_t ahead = 0;
      for (std::uint8_t x = 1; x <= 6; ++x) {
        const std::uint32_t d = (t.start[x] - t.start[s]).raw();
        if (x != s && (ahead == 0 || d < best)) {
          best = d;
          ahead = x;
        }
      }
      o.next[s] = ahead;
      o.width[s] = best;
      good = good && best >= narrowest && best <= widest;
    }
    for (std::uint8_t s = 1; s <= 6; ++s) o.previous[o.next[s]] = s;
    for (std::uint8_t s = 1; s <= 6; ++s) good = good && o.previous[s] != 0;
    o.valid = good;
    return o;
  }
};

}  // namespace detail

struct hall_parameters {
  hall_table table{};
  double base_speed = 1.0;      ///< electrical rad/s that speed 1.0 stands for
  double sample_time = 0.0;     ///< s
  double tick_frequency = 0.0;  ///< Hz of the edge-capture timer (0: sample clock only)
  double minimum_speed = 0.005;     ///< per unit: slower counts as standing still
};

template <class T>
class hall_sensor {
  static_assert(is_number_v<T>, "dqfx::hall_sensor supports q15, q31, float and double");

 public:
  using value_type = T;

  constexpr hall_sensor() noexcept = default;
  constexpr explicit hall_sensor(const hall_parameters& p) noexcept
      : table_{p.table},
        order_{detail::hall_order::of(p.table)},
        ticks_per_sample_{ticks_per_sample(p)},
        speed_of_{speed_per_unit_angle(p)},
        standstill_ticks_{standstill_ticks(p)} {
    if (!order_.valid || !(p.sample_time > 0.0) || !(p.base_speed > 0.0) ||
        !detail::speed_scale_valid(p.base_speed, p.sample_time) ||
        !detail::tick_frequency_valid(p.tick_frequency, p.sample_time)) {
      detail::hall_parameters_out_of_range();
      parameter_fault_ = true;
    }
  }

  /// One sample, edges timed by the sample clock (each change taken at the sample instant).
  constexpr void update(std::uint8_t state) noexcept {
    clock_ += ticks_per_sample_;
    const bool moved = state != state_;
    update(state, moved ? clock_ : edge_ticks_, clock_);
  }

  /// One sample with an edge-capture timer: `edge_ticks` captured at the latest state
  /// change, `now_ticks` the timer now (both wrap at 2^32).
  constexpr void update(std::uint8_t state, std::uint32_t edge_ticks, std::uint32_t now_ticks) noexcept {
    bad_state_ = false;
    if (parameter_fault_) return;
    if (state == 0 || state >= 7) return reject(0);
    if (state_ == 0) return resynchronise(state);
    if (state != state_) {
      if (state == order_.next[state_]) {
        edge(state, 1, table_.start[state], edge_ticks);
      } else if (state == order_.previous[state_]) {
        edge(state, -1, table_.start[state_], edge_ticks);
      } else {
        if (state != suspect_) return reject(state);
        return resynchronise(state);  // seen twice: real
      }
    }
    suspect_ = 0;
    interpolate(now_ticks);
  }

  /// The electrical angle.
  constexpr angle electrical_angle() const noexcept { return angle_; }
  /// Electrical speed, per unit (signed; 0 at standstill).
  constexpr T speed() const noexcept { return speed_; }
  /// +1 forward, -1 backward, 0 not known (standstill, power-up).
  constexpr int direction() const noexcept { return moving_ ? direction_ : 0; }
  /// The latest valid state (0 before the first).
  constexpr std::uint8_t state() const noexcept { return state_; }
  /// The latest reading was an invalid state or a jump to a non-adjacent state.
  constexpr bool bad_state() const noexcept { return bad_state_; }
  /// Sticky: a bad state was seen since the last `clear_faults()`.
  constexpr bool fault() const noexcept { return fault_; }
  constexpr void clear_faults() noexcept { fault_ = false; }
  /// Angle and speed can be used: a valid state has been seen since the start or `reset()`.
  constexpr bool valid() const noexcept { return state_ != 0; }
  /// Forgets the state: the next valid one starts again as on power-up (faults are kept).
  constexpr void reset() noexcept {
    state_ = 0;
    suspect_ = 0;
    moving_ = false;
    edges_ = 0;
    rate_ = 0;
    speed_ = T{};
  }
  /// The table is not six sectors of 20..100 degrees, the times are not positive, the base
  /// speed moves less than 2^-32 turn or at least half a turn per sample, or the tick
  /// frequency is negative, not a number or 2^32 ticks per sample or more.
  constexpr bool parameter_fault() const noexcept { return parameter_fault_; }
  constexpr const hall_table& table() const noexcept { return table_; }

 private:
  static constexpr std::uint32_t ticks_per_sample(const hall_parameters& p) noexcept {
    const double t = p.tick_frequency * p.sample_time;
    return t >= 1.0 && t < 4294967295.0 ? static_cast<std::uint32_t>(detail::round_half_away(t)) : 1u;
  }
  /// Per-unit speed of one binary-angle unit per tick.
  static constexpr double speed_per_unit_angle(const hall_parameters& p) noexcept {
    const double ticks_per_second =
        p.tick_frequency > 0.0 ? p.tick_frequency : (p.sample_time > 0.0 ? 1.0 / p.sample_time : 0.0);
    return p.base_speed > 0.0 ? 6.283185307179586477 / 4294967296.0 * ticks_per_second / p.base_speed : 0.0;
  }
  /// Ticks a 60-degree sector takes at minimum_speed (capped below 2^31).
  static constexpr std::uint32_t standstill_ticks(const hall_parameters& p) noexcept {
    const double ticks_per_second =
        p.tick_frequency > 0.0 ? p.tick_frequency : (p.sample_time > 0.0 ? 1.0 / p.sample_time : 0.0);
    const double w = p.minimum_speed * p.base_speed;  // rad/s
    const double t = w > 0.0 ? 1.0471975511965976 / w * ticks_per_second : 2147483647.0;
    return t < 2147483647.0 ? static_cast<std::uint32_t>(t) : 2147483647u;
  }

  constexpr void reject(std::uint8_t state) noexcept {
    bad_state_ = true;
    fault_ = true;
    suspect_ = state;
  }

  /// Starts in `state` as from standstill: middle of the sector, speed unknown.
  constexpr void resynchronise(std::uint8_t state) noexcept {
    state_ = state;
    suspect_ = 0;
    standstill();
  }

  constexpr void standstill() noexcept {
    moving_ = false;
    edges_ = 0;
    rate_ = 0;
    speed_ = T{};
    angle_ = table_.start[state_] + angle::from_raw(order_.width[state_] / 2);
  }

  /// An edge into `state` at `at` (boundary angle), turning `direction`.
  constexpr void edge(std::uint8_t state, int direction, angle at, std::uint32_t ticks) noexcept {
    const std::uint8_t left = state_;
    const std::int64_t dt = detail::ticks_between(ticks, edge_ticks_);
    // The sector just crossed, edge to edge in one direction: its width over the time.
    if (edges_ > 0 && direction == direction_ && dt > 0 && dt < 0x80000000) {
      const std::uint32_t crossed = order_.width[left];
      interval_ = static_cast<std::uint32_t>(dt);
      rate_ = (std::uint64_t{crossed} << 32) / interval_;
      measured_ = speed_of_.over(direction > 0 ? std::int64_t{crossed} : -std::int64_t{crossed}, interval_);
      moving_ = true;
    } else {
      rate_ = 0;
      moving_ = false;
      measured_ = T{};
    }
    edges_ = direction == direction_ ? 2 : 1;
    direction_ = direction;
    state_ = state;
    edge_angle_ = at;
    edge_ticks_ = ticks;
  }

  constexpr void interpolate(std::uint32_t now) noexcept {
    if (edges_ == 0) return;  // no edge yet: the sector middle stands
    const std::int64_t elapsed = detail::ticks_between(now, edge_ticks_);
    if (elapsed < 0 || elapsed >= std::int64_t{standstill_ticks_}) return standstill();
    const std::uint32_t room = order_.width[state_];  // to the next expected edge
    std::uint64_t travelled = 0;
    speed_ = T{};
    if (moving_) {
      travelled = detail::multiply_shift(rate_, static_cast<std::uint32_t>(elapsed), 32);
      if (travelled > room) travelled = room;
      speed_ = measured_;
      // Late edge: the rotor has slowed to at most the sector's width over the time since.
      if (elapsed > std::int64_t{interval_}) {
        speed_ = speed_of_.over(direction_ > 0 ? std::int64_t{room} : -std::int64_t{room},
                                static_cast<std::uint32_t>(elapsed));
      }
    }
    const angle offset = angle::from_raw(static_cast<std::uint32_t>(travelled));
    angle_ = direction_ > 0 ? edge_angle_ + offset : edge_angle_ - offset;
  }

  hall_table table_{};
  detail::hall_order order_{};
  std::uint32_t ticks_per_sample_ = 1;
  detail::count_scale<T> speed_of_{};
  std::uint32_t standstill_ticks_ = 0;

  std::uint32_t clock_ = 0;
  std::uint8_t state_ = 0;
  std::uint8_t suspect_ = 0;
  int direction_ = 1;
  int edges_ = 0;
  bool moving_ = false;
  angle edge_angle_{};
  std::uint32_t edge_ticks_ = 0;
  std::uint32_t interval_ = 0;
  std::uint64_t rate_ = 0;  // binary-angle units per tick, 32 fraction bits
  T measured_{};
  T speed_{};
  angle angle_{};
  bool bad_state_ = false;
  bool fault_ = false;
  bool parameter_fault_ = false;
};

}  // namespace dqfx
