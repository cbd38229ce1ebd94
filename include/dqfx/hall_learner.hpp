// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Learning the Hall sensors' state-to-angle table (hall.hpp) from a slow forced rotation.

#include <array>
#include <cstdint>

#include "dqfx/angle.hpp"
#include "dqfx/hall.hpp"

namespace dqfx {

/// Learns a `hall_table` while the drive forces the field slowly round (open loop, the
/// rotor following with some lag): `observe` every sample with the forced electrical
/// angle and the Hall state. Each change of state is placed at the middle of the two
/// forced angles around it; a boundary's angle is averaged separately over forward and
/// backward crossings and the two means are averaged, which cancels a lag that is the
/// same both ways (friction, sensor hysteresis). Turn at least one electrical turn each
/// way; a single direction leaves the lag in the table.
class hall_learner {
 public:
  struct result_type {
    hall_table table{};
    bool ok = false;          ///< all six boundaries seen, sectors of 20..100 degrees, order consistent
    unsigned invalid = 0;     ///< samples with state 000 or 111
    unsigned jumps = 0;       ///< changes between non-adjacent states (one-way order conflicts)
  };

  constexpr void observe(angle forced, std::uint8_t state) noexcept {
    if (state == 0 || state >= 7) {
      ++invalid_;
      return;
    }
    if (last_state_ != 0 && state != last_state_) {
      const std::int32_t moved = difference(forced, last_forced_);
      const angle at = last_forced_ + angle::from_raw(static_cast<std::uint32_t>(moved / 2));
      if (moved > 0) {
        add(forward_[state], at);  // the new state begins here
        ahead_[last_state_] = state;
      } else if (moved < 0) {
        add(backward_[last_state_], at);  // the old state began here
        ahead_[state] = last_state_;
      }
    }
    last_state_ = state;
    last_forced_ = forced;
  }

  constexpr result_type result() const noexcept {
    result_type r{};
    r.invalid = invalid_;
    bool seen_all = true;
    for (std::uint8_t s = 1; s <= 6; ++s) {
      const boundary& f = forward_[s];
      const boundary& b = backward_[s];
      if (f.count == 0 && b.count == 0) {
        seen_all = false;
        continue;
      }
      if (f.count > 0 && b.count > 0) {
        const angle mf = f.mean(), mb = b.mean();
        r.table.start[s] = mb + angle::from_raw(static_cast<std::uint32_t>(difference(mf, mb) / 2));
      } else {
        r.table.start[s] = f.count > 0 ? f.mean() : b.mean();
      }
    }
    const detail::hall_order order = detail::hall_order::of(r.table);
    bool consistent = true;
    for (std::uint8_t s = 1; s <= 6; ++s) {
      if (ahead_[s] != 0 && ahead_[s] != order.next[s]) {
        consistent = false;
        ++r.jumps;
      }
    }
    r.ok = seen_all && order.valid && consistent;
    return r;
  }

 private:
  struct boundary {
    angle reference{};
    std::int64_t sum = 0;  // offsets from the reference, binary-angle units
    std::uint32_t count = 0;
    constexpr angle mean() const noexcept {
      const std::int64_t m = count > 0 ? sum / static_cast<std::int64_t>(count) : 0;
      return reference + angle::from_raw(static_cast<std::uint32_t>(static_cast<std::uint64_t>(m) & 0xFFFFFFFFu));
    }
  };
  static constexpr void add(boundary& b, angle at) noexcept {
    if (b.count == 0) b.reference = at;
    b.sum += difference(at, b.reference);
    ++b.count;
  }

  std::array<boundary, 8> forward_{};
  std::array<boundary, 8> backward_{};
  std::array<std::uint8_t, 8> ahead_{};
  std::uint8_t last_state_ = 0;
  angle last_forced_{};
  unsigned invalid_ = 0;
};

}  // namespace dqfx
