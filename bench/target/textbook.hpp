// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The comparison figure: one current-loop step written the textbook way in float, as a
/// first implementation on a microcontroller would be. Clarke, Park with the C library's
/// sinf/cosf, two PI regulators with a clamped integrator, a circular voltage limit with
/// sqrtf, inverse Park, and sector-based space-vector modulation. Everything in per unit
/// with the DC bus as 1, amplitude-invariant transforms. Gains are invented.

#include <cmath>

namespace dqfx_target {

/// The loop's state: the two integrators, updated by each step.
struct textbook_loop {
  float id_integral, iq_integral;
};

/// What the loop reads each period.
struct textbook_measurement {
  float ia, ib;           // phase currents (c = -a - b)
  float theta;            // electrical angle in radians, [0, 2*pi)
  float id_ref, iq_ref;   // current set-points
};

/// PWM duties in [0, 1].
struct textbook_duties {
  float a, b, c;
};

namespace textbook {

constexpr float kp = 0.8f;               // invented proportional gain
constexpr float ki = 0.05f;              // invented integral gain per sample
constexpr float v_max = 0.57735027f;     // 1/sqrt(3): the largest linear SVM amplitude
constexpr float inv_sqrt3 = 0.57735027f;
constexpr float sqrt3 = 1.7320508f;

inline float clamp(float x, float lo, float hi) noexcept { return x < lo ? lo : (x > hi ? hi : x); }

/// One PI regulator: integrator clamped to the output range (anti-windup by clamping).
inline float pi_step(float error, float& integral) noexcept {
  integral = clamp(integral + ki * error, -v_max, v_max);
  return clamp(kp * error + integral, -v_max, v_max);
}

}  // namespace textbook

inline textbook_duties textbook_step(textbook_loop& loop, const textbook_measurement& in) noexcept {
  using namespace textbook;
  // Clarke (balanced phases): alpha = a, beta = (a + 2b)/sqrt(3).
  const float i_alpha = in.ia;
  const float i_beta = (in.ia + 2.0f * in.ib) * inv_sqrt3;
  // Park.
  const float s = std::sin(in.theta);
  const float c = std::cos(in.theta);
  const float id = i_alpha * c + i_beta * s;
  const float iq = -i_alpha * s + i_beta * c;
  // Two PI regulators.
  float vd = pi_step(in.id_ref - id, loop.id_integral);
  float vq = pi_step(in.iq_ref - iq, loop.iq_integral);
  // Circular limit of the voltage vector.
  const float m = std::sqrt(vd * vd + vq * vq);
  if (m > v_max) {
    const float k = v_max / m;
    vd *= k;
    vq *= k;
  }
  // Inverse Park.
  const float v_alpha = vd * c - vq * s;
  const float v_beta = vd * s + vq * c;
  // Sector from the signs of three projections of the voltage vector.
  const int code = (v_beta > 0.0f ? 1 : 0) + (sqrt3 * v_alpha - v_beta > 0.0f ? 2 : 0) +
                   (-sqrt3 * v_alpha - v_beta > 0.0f ? 4 : 0);
  static constexpr int sector_of_code[8] = {0, 1, 5, 0, 3, 2, 4, 0};
  const int k = sector_of_code[code];
  // Active vectors at k*60 degrees; their switch states (1 = upper switch on).
  static constexpr float cos_k[7] = {1.0f, 0.5f, -0.5f, -1.0f, -0.5f, 0.5f, 1.0f};
  static constexpr float sin_k[7] = {0.0f, 0.8660254f, 0.8660254f, 0.0f, -0.8660254f, -0.8660254f, 0.0f};
  static constexpr float on[7][3] = {{1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0, 1, 1},
                                     {0, 0, 1}, {1, 0, 1}, {1, 0, 0}};
  // Dwell times of the two adjacent vectors (each 2/3 long) as fractions of the period.
  const float t1 = sqrt3 * (v_alpha * sin_k[k + 1] - v_beta * cos_k[k + 1]);
  const float t2 = sqrt3 * (cos_k[k] * v_beta - sin_k[k] * v_alpha);
  const float half_t0 = 0.5f * (1.0f - t1 - t2);
  return {half_t0 + t1 * on[k][0] + t2 * on[k + 1][0], half_t0 + t1 * on[k][1] + t2 * on[k + 1][1],
          half_t0 + t1 * on[k][2] + t2 * on[k + 1][2]};
}

}  // namespace dqfx_target
