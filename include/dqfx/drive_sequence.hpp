// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The drive's sequence: which state it is in, what the bridge does there, and why it
/// stopped. One `advance` per PWM period; the whole machine is the table below.
///
///   state        bridge   output                      leaves for
///   stopped      safe     safe output                 calibrating on start()
///   calibrating  on       50 % (zero vector, no       aligning (or running) when the current
///                         current at standstill)      offsets are accepted
///   aligning     on       regulated, forced angle     running after `align_periods`
///   running      on       regulated                   stopping on stop()
///   stopping     on       regulated to zero speed     stopped when still, or after `stop_periods`
///   fault        safe     safe output                 stopped on clear(), if the cause is gone
///
/// Any state trips to `fault` on trip(cause); the first cause is latched and kept until
/// an explicit clear(), which the drive accepts only once the monitors report the
/// condition gone. start() is accepted only in `stopped`; stop() in any running state.
///
/// The safe output is the user's choice, and each means something else for a motor that
/// still turns:
///   - `all_off`: bridge disabled, every switch open. The motor coasts; its back-EMF is
///     rectified by the free-wheeling diodes and charges the bus once the line-to-line
///     peak exceeds the bus voltage (an over-speeding or light-weight motor can pump the
///     bus up: have a brake chopper or clamp). No braking torque below that speed.
///   - `low_side_on`: the three low-side switches closed: the windings are shorted. The
///     motor brakes; the phase current approaches the short-circuit current psi / Ld at
///     speed (check that the bridge and the magnets stand it: a low-inductance motor's
///     short-circuit current can exceed its rating and demagnetise the magnets), and the
///     braking torque peaks at a low speed. Nothing flows from the bus.
///   - `half`: every phase at 50 % duty with the bridge switching: the zero voltage on
///     average, so much like the short but through the switching pattern; it needs a
///     working PWM and keeps switching losses. It is also the state for offset
///     calibration at standstill.
/// With `all_off` the sequence reports `bridge_enabled()` false in stopped and fault; the
/// firmware must then disable the gate driver (the duties are 50 % only so that no
/// stale compare value remains).

#include <cstdint>

#include "dqfx/protection.hpp"

namespace dqfx {

enum class drive_state : std::uint8_t { stopped, calibrating, aligning, running, stopping, fault };

/// What the bridge does in stopped and fault.
enum class safe_output : std::uint8_t { all_off, low_side_on, half };

/// How the bridge is driven this period.
enum class bridge_output : std::uint8_t { off, low_side_on, half, regulated };

struct sequence_parameters {
  safe_output safe = safe_output::all_off;
  std::uint32_t align_periods = 0;  ///< 0: no alignment stage
  std::uint32_t stop_periods = 0;   ///< stopping gives up (stopped) after this many; 0: never
};

class drive_sequence {
 public:
  constexpr drive_sequence() noexcept = default;
  constexpr explicit drive_sequence(const sequence_parameters& p) noexcept : p_{p} {}

  /// Requests a start; false (and nothing changes) outside `stopped`.
  constexpr bool start() noexcept {
    if (state_ != drive_state::stopped) return false;
    enter(drive_state::calibrating);
    return true;
  }
  /// Requests a stop: running states go to stopping, calibration straight to stopped.
  constexpr void stop() noexcept {
    if (state_ == drive_state::calibrating) enter(drive_state::stopped);
    if (state_ == drive_state::aligning || state_ == drive_state::running) enter(drive_state::stopping);
  }
  /// Latches a fault (the first cause is kept). `none` does nothing.
  constexpr void trip(fault_cause cause) noexcept {
    if (cause == fault_cause::none) return;
    if (state_ != drive_state::fault) cause_ = cause;
    enter(drive_state::fault);
  }
  /// Leaves `fault` for `stopped` when `condition_gone`; false otherwise.
  constexpr bool clear(bool condition_gone) noexcept {
    if (state_ != drive_state::fault || !condition_gone) return false;
    cause_ = fault_cause::none;
    enter(drive_state::stopped);
    return true;
  }

  /// One period: `calibrated` once the current offsets are accepted, `still` once the
  /// motor has stopped turning. Returns the state for this period.
  constexpr drive_state advance(bool calibrated, bool still) noexcept {
    ++periods_;
    switch (state_) {
      case drive_state::calibrating:
        if (calibrated) enter(p_.align_periods > 0 ? drive_state::aligning : drive_state::running);
        break;
      case drive_state::aligning:
        if (periods_ >= p_.align_periods) enter(drive_state::running);
        break;
      case drive_state::stopping:
        if (still || (p_.stop_periods > 0 && periods_ >= p_.stop_periods)) enter(drive_state::stopped);
        break;
      default:
        break;
    }
    return state_;
  }

  constexpr drive_state state() const noexcept { return state_; }
  constexpr fault_cause cause() const noexcept { return cause_; }
  /// Periods spent in the present state.
  constexpr std::uint32_t periods() const noexcept { return periods_; }
  /// The bridge this period.
  constexpr bridge_output output() const noexcept {
    switch (state_) {
      case drive_state::stopped:
      case drive_state::fault:
        return p_.safe == safe_output::all_off ? bridge_output::off
                                               : (p_.safe == safe_output::low_side_on ? bridge_output::low_side_on
                                                                                      : bridge_output::half);
      case drive_state::calibrating:
        return bridge_output::half;
      default:
        return bridge_output::regulated;
    }
  }
  /// The gate driver's enable line.
  constexpr bool bridge_enabled() const noexcept { return output() != bridge_output::off; }
  /// The states that regulate current with the angle source's angle.
  constexpr bool needs_angle() const noexcept {
    return state_ == drive_state::running || state_ == drive_state::stopping;
  }

 private:
  constexpr void enter(drive_state s) noexcept {
    state_ = s;
    periods_ = 0;
  }

  sequence_parameters p_{};
  drive_state state_ = drive_state::stopped;
  fault_cause cause_ = fault_cause::none;
  std::uint32_t periods_ = 0;
};

}  // namespace dqfx
