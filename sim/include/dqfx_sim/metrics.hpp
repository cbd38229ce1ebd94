// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Host-only simulator (dqfx::sim): the figures a control loop is judged by, computed
/// from a recording. Definitions (common practice, no single source):
///   - rise time: from 10% to 90% of the step, the first crossings after the step;
///   - overshoot: the largest excursion beyond the target, as a fraction of the step;
///   - settling time: from the step until the signal last leaves the band
///     target +/- band*|step|;
///   - steady-state error: mean(signal - target) over the last `tail` fraction of the
///     window;
///   - after a disturbance (a load step) at a constant target: the largest deviation,
///     the recovery time until the signal last leaves target +/- band*|target|, and the
///     steady-state error as above;
///   - ripple: the rms and the peak-to-peak of the signal about its mean in a window;
///   - angle error: rms and largest magnitude of `record::angle_error` in a window.

#include <cmath>
#include <vector>

#include "dqfx_sim/recording.hpp"

namespace dqfx::sim {

struct step_figures {
  double initial = NAN;             ///< the signal just before the step (or at it, if first)
  double target = NAN;
  double rise_time = NAN;           ///< s; NaN if it never reached 90%
  double overshoot = NAN;           ///< fraction of the step, >= 0
  double settling_time = NAN;       ///< s; NaN if still outside the band at the end
  double steady_state_error = NAN;  ///< signal units
};

struct disturbance_figures {
  double largest_deviation = NAN;   ///< signal units, signed (the dip of a load step is < 0)
  double recovery_time = NAN;       ///< s; NaN if still outside the band at the end
  double steady_state_error = NAN;  ///< signal units
};

struct spread_figures {
  double mean = NAN;
  double rms = NAN;            ///< of the deviation from the mean
  double peak_to_peak = NAN;
  double largest = NAN;        ///< largest |value|
};

/// The response of `signal` to a step to `target` at `step_time`, judged up to `end`.
inline step_figures step_response(const std::vector<record>& rows, signal s, double step_time, double end,
                                  double target, double band = 0.02, double tail = 0.2) {
  step_figures f;
  f.target = target;
  std::size_t first = rows.size();
  for (std::size_t k = 0; k < rows.size(); ++k) {
    if (rows[k].time < step_time) {
      f.initial = rows[k].*s;
    } else if (first == rows.size()) {
      first = k;
    }
  }
  if (first == rows.size()) return f;
  if (std::isnan(f.initial)) f.initial = rows[first].*s;  // the recording starts with the step
  const double size = target - f.initial, sign = size < 0 ? -1.0 : 1.0;
  if (size == 0) return f;
  double t10 = NAN, t90 = NAN, peak = 0, last_out = step_time, sum = 0;
  int n = 0;
  bool inside_at_end = false;
  const double tail_start = end - tail * (end - step_time);
  for (std::size_t k = first; k < rows.size() && rows[k].time <= end; ++k) {
    const double t = rows[k].time, v = rows[k].*s;
    const double progress = (v - f.initial) / size;
    if (std::isnan(t10) && progress >= 0.1) t10 = t;
    if (std::isnan(t90) && progress >= 0.9) t90 = t;
    peak = std::fmax(peak, sign * (v - target));
    const bool inside = std::fabs(v - target) <= band * std::fabs(size);
    if (!inside) last_out = t;
    inside_at_end = inside;
    if (t >= tail_start) {
      sum += v - target;
      ++n;
    }
  }
  f.rise_time = t90 - t10;
  f.overshoot = peak / std::fabs(size);
  f.settling_time = inside_at_end ? last_out - step_time : NAN;
  f.steady_state_error = n > 0 ? sum / n : NAN;
  return f;
}

/// The response of `signal`, held at `target`, to a disturbance at `time`, judged up to
/// `end`.
inline disturbance_figures disturbance_response(const std::vector<record>& rows, signal s, double time, double end,
                                                double target, double band = 0.02, double tail = 0.2) {
  disturbance_figures f;
  double deviation = 0, last_out = NAN, sum = 0;
  int n = 0;
  bool any = false, inside_at_end = false;
  const double tail_start = end - tail * (end - time);
  for (const record& r : rows) {
    if (r.time < time || r.time > end) continue;
    const double e = r.*s - target;
    any = true;
    if (std::fabs(e) > std::fabs(deviation)) deviation = e;
    inside_at_end = std::fabs(e) <= band * std::fabs(target);
    if (!inside_at_end) last_out = r.time;
    if (r.time >= tail_start) {
      sum += e;
      ++n;
    }
  }
  if (!any) return f;
  f.largest_deviation = deviation;
  f.recovery_time = !inside_at_end ? NAN : (std::isnan(last_out) ? 0.0 : last_out - time);
  f.steady_state_error = n > 0 ? sum / n : NAN;
  return f;
}

/// Mean, rms about the mean, peak-to-peak and largest magnitude of `signal` in
/// [begin, end]; NaN samples are skipped.
inline spread_figures spread(const std::vector<record>& rows, signal s, double begin, double end) {
  double sum = 0, lo = INFINITY, hi = -INFINITY, largest = 0;
  int n = 0;
  for (const record& r : rows) {
    const double v = r.*s;
    if (r.time < begin || r.time > end || std::isnan(v)) continue;
    sum += v;
    lo = std::fmin(lo, v);
    hi = std::fmax(hi, v);
    largest = std::fmax(largest, std::fabs(v));
    ++n;
  }
  spread_figures f;
  if (n == 0) return f;
  f.mean = sum / n;
  double square = 0;
  for (const record& r : rows) {
    const double v = r.*s;
    if (r.time < begin || r.time > end || std::isnan(v)) continue;
    square += (v - f.mean) * (v - f.mean);
  }
  f.rms = std::sqrt(square / n);
  f.peak_to_peak = hi - lo;
  f.largest = largest;
  return f;
}

/// Current ripple of a signal (e.g. `&record::iq`) in a window: its spread.
inline spread_figures ripple(const std::vector<record>& rows, signal s, double begin, double end) {
  return spread(rows, s, begin, end);
}

struct angle_figures {
  double rms_degrees = NAN;      ///< electrical degrees, rms of the error (not of its deviation)
  double largest_degrees = NAN;  ///< electrical degrees
};

/// The controller's angle error (electrical) in [begin, end].
inline angle_figures angle_error(const std::vector<record>& rows, double begin, double end) {
  double square = 0, largest = 0;
  int n = 0;
  for (const record& r : rows) {
    if (r.time < begin || r.time > end || std::isnan(r.angle_error)) continue;
    square += r.angle_error * r.angle_error;
    largest = std::fmax(largest, std::fabs(r.angle_error));
    ++n;
  }
  angle_figures f;
  if (n == 0) return f;
  f.rms_degrees = std::sqrt(square / n) * 180 / pi;
  f.largest_degrees = largest * 180 / pi;
  return f;
}

/// Largest |a - b| of a signal between two recordings of the same scenario, in [begin,
/// end] (rows matched by index; NaN if the recordings differ in length).
inline double largest_difference(const std::vector<record>& a, const std::vector<record>& b, signal s,
                                 double begin = 0, double end = INFINITY) {
  if (a.size() != b.size()) return NAN;
  double largest = 0;
  for (std::size_t k = 0; k < a.size(); ++k)
    if (a[k].time >= begin && a[k].time <= end) largest = std::fmax(largest, std::fabs(a[k].*s - b[k].*s));
  return largest;
}

}  // namespace dqfx::sim
