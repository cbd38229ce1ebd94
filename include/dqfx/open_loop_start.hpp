// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Open-loop current-frequency (I-f) start-up of a sensorless drive, for q15, q31, float
/// and double: a current vector of fixed amplitude turned at a ramped speed, then a smooth
/// hand-over of angle and current set-point to the flux observer (flux_observer.hpp).

#include <cstdint>
#include <limits>

#include "dqfx/angle.hpp"
#include "dqfx/detail/estimation.hpp"
#include "dqfx/extended.hpp"
#include "dqfx/frames.hpp"
#include "dqfx/number.hpp"
#include "dqfx/sincos.hpp"

namespace dqfx {

/// Open-loop start-up settings (per unit, seconds).
struct open_loop_start_parameters {
  double current = 0.0;          ///< amplitude of the imposed current vector
  double acceleration = 0.0;     ///< per-unit speed gained per second
  double handover_speed = 0.0;   ///< per unit: the ramp ends here and the hand-over begins
  double handover_time = 0.0;    ///< s over which the angle moves from open loop to observer
  double base_speed = 1.0;       ///< electrical rad/s that speed 1.0 stands for
  double sample_time = 0.0;      ///< s
  double agreement = 0.2;        ///< observer and ramp speeds must agree within this fraction
  double timeout = 1.0;          ///< s at the hand-over speed before giving up
};

/// Where the start-up is.
enum class start_phase : std::uint8_t { ramp, blend, done, failed };

/// Current-frequency (I-f) start-up: the current vector of fixed amplitude turns at a
/// speed ramped up to `handover_speed`; the rotor, pulled by the field, follows with a
/// load angle. Once there and the observer is trusted and agrees on the speed, the angle
/// given to the current loop moves linearly from the open-loop angle to the observer's
/// over `handover_time`, while the current set-point is turned by the same amount, so the
/// current vector in the machine (and the torque) does not jump. At `done` the caller
/// hands the speed regulator the present q set-point (e.g. `pi_regulator::preload`) and
/// runs on the observer. `failed` if the observer has not agreed within `timeout`.
template <class T>
class open_loop_start {
  static_assert(is_number_v<T>, "dqfx::open_loop_start supports q15, q31, float and double");

 public:
  constexpr open_loop_start() noexcept = default;
  constexpr explicit open_loop_start(const open_loop_start_parameters& p) noexcept
      : current_{detail::bounded<T>(p.current)},
        target_{detail::bounded<T>(p.handover_speed)},
        low_{detail::bounded<T>(p.handover_speed * (1.0 - p.agreement))},
        high_{detail::bounded<T>(p.handover_speed * (1.0 + p.agreement))},
        increment_{extended_of(p.acceleration * p.sample_time)},
        rate_{angle_rate<T>::from_base(p.base_speed, p.sample_time)},
        blend_samples_{samples_of(p.handover_time, p.sample_time)},
        timeout_samples_{samples_of(p.timeout, p.sample_time)} {}

  /// One sample: the observer's latest angle, speed and trust.
  constexpr void update(angle observer_angle, T observer_speed, bool observer_trusted) noexcept {
    if (phase_ == start_phase::done || phase_ == start_phase::failed) {
      angle_ = observer_angle;
      speed_ = observer_speed;
      return;
    }
    open_angle_ = rate_.advance(open_angle_, open_speed_);
    if (phase_ == start_phase::ramp) {
      if (ramp_ < extended<T>{target_}) ramp_ = ramp_ + increment_;
      const bool reached = !(ramp_ < extended<T>{target_});
      open_speed_ = reached ? target_ : ramp_.rounded();
      if (reached) {
        if (observer_trusted && observer_speed > low_ && observer_speed < high_) {
          phase_ = start_phase::blend;
          count_ = 0;
        } else if (++count_ > timeout_samples_) {
          phase_ = start_phase::failed;
        }
      }
    }
    std::int64_t shift = 0;
    if (phase_ == start_phase::blend) {
      ++count_;
      shift = std::int64_t{difference(observer_angle, open_angle_)} * count_ / blend_samples_;
      if (count_ >= blend_samples_) phase_ = start_phase::done;
    }
    const angle turned = angle::from_raw(static_cast<std::uint32_t>(static_cast<std::uint64_t>(shift) & 0xFFFFFFFFu));
    angle_ = open_angle_ + turned;
    speed_ = phase_ == start_phase::ramp ? open_speed_ : observer_speed;
    // The imposed vector stays put in the machine: (0, I) in the open-loop frame seen
    // from a frame turned ahead by `turned`.
    const sincos<T> sc = sincos_of<T>(-turned);
    setpoint_ = {-(current_ * sc.sin), current_ * sc.cos};
  }

  /// The electrical angle for the current loop.
  constexpr angle electrical_angle() const noexcept { return angle_; }
  /// The speed for the current loop's feed-forward (ramp speed, then the observer's).
  constexpr T speed() const noexcept { return speed_; }
  /// The d/q current set-point in the frame of `electrical_angle()`.
  constexpr rotating<T> current_setpoint() const noexcept { return setpoint_; }
  constexpr start_phase phase() const noexcept { return phase_; }

 private:
  /// A small per-sample increment without rounding it to T (q15/q31: extended bits).
  static constexpr extended<T> extended_of(double v) noexcept {
    if constexpr (is_fixed_v<T>) {
      using raw = decltype(extended<T>{}.raw());
      constexpr double scale = static_cast<double>(std::int64_t{1} << extended<T>::fraction_bits);
      const double x = v * scale;
      const double most = static_cast<double>(std::numeric_limits<raw>::max()) / 2;
      return extended<T>::from_raw(static_cast<raw>(x > 0.0 ? detail::round_half_away(x < most ? x : most) : 0));
    } else {
      return extended<T>{static_cast<T>(v > 0.0 ? v : 0.0)};
    }
  }
  static constexpr std::int64_t samples_of(double seconds, double sample_time) noexcept {
    const double n = sample_time > 0.0 ? seconds / sample_time : 1.0;
    return n >= 1.0 && n < 1e12 ? detail::round_half_away(n) : 1;
  }

  T current_{};
  T target_{};
  T low_{};
  T high_{};
  extended<T> increment_{};
  angle_rate<T> rate_ = angle_rate<T>::from_base(0.0, 0.0);
  std::int64_t blend_samples_ = 1;
  std::int64_t timeout_samples_ = 1;

  start_phase phase_ = start_phase::ramp;
  extended<T> ramp_{};
  std::int64_t count_ = 0;
  angle open_angle_{};
  T open_speed_{};
  angle angle_{};
  T speed_{};
  rotating<T> setpoint_{};
};

}  // namespace dqfx
