// SPDX-License-Identifier: MIT
#pragma once
// Independent long double reference for the frame transforms and the modulator, written
// the textbook way and without any dqfx code:
//   - Clarke as the 2x3 matrix (2/3)[1 -1/2 -1/2; 0 sqrt3/2 -sqrt3/2] (amplitude-invariant)
//     or sqrt(2/3) times the same rows (power-invariant); Park as a rotation matrix;
//   - space-vector modulation the classic way: the sector from atan2, dwell times of the
//     two adjacent active vectors T1 = sqrt3*m*sin(60deg - theta), T2 = sqrt3*m*sin(theta),
//     zero-vector time T0 = 1 - T1 - T2 shared out per scheme, duties from the switching
//     states of the six active vectors;
//   - the hexagon boundary and its nearest point by plain geometry on its six edges.

#include <cmath>

namespace dqfx_reference {

using real = long double;

inline const real sqrt3 = std::sqrt(3.0L);
inline const real two_pi = 2.0L * std::acos(-1.0L);

struct abc { real a, b, c; };
struct ab { real alpha, beta; };

// ---- Transforms ----

inline ab clarke_amplitude(real a, real b, real c) {
  return {2.0L / 3.0L * (a - 0.5L * b - 0.5L * c), 2.0L / 3.0L * (sqrt3 / 2.0L * b - sqrt3 / 2.0L * c)};
}
inline ab clarke_power(real a, real b, real c) {
  const real k = std::sqrt(2.0L / 3.0L);
  return {k * (a - 0.5L * b - 0.5L * c), k * (sqrt3 / 2.0L * b - sqrt3 / 2.0L * c)};
}
/// Transposed matrices (the inverse on balanced sets).
inline abc inverse_clarke_amplitude(real alpha, real beta) {
  return {alpha, -0.5L * alpha + sqrt3 / 2.0L * beta, -0.5L * alpha - sqrt3 / 2.0L * beta};
}
inline abc inverse_clarke_power(real alpha, real beta) {
  const real k = std::sqrt(2.0L / 3.0L);
  return {k * alpha, k * (-0.5L * alpha + sqrt3 / 2.0L * beta), k * (-0.5L * alpha - sqrt3 / 2.0L * beta)};
}
/// Park: [cos sin; -sin cos] applied to (alpha, beta).
inline ab park(real alpha, real beta, real s, real c) { return {c * alpha + s * beta, -s * alpha + c * beta}; }
inline ab inverse_park(real d, real q, real s, real c) { return {c * d - s * q, s * d + c * q}; }

// ---- Modulation ----

enum class scheme { sinusoidal, centred, clamp_low, clamp_high, clamp_peak };

/// Upper-switch states of the active vectors V1..V6 (V1 along phase a, 60 degrees apart).
inline constexpr int switching_state[6][3] = {{1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0, 1, 1}, {0, 0, 1}, {1, 0, 1}};

inline real angle_of(real alpha, real beta) {
  real t = std::atan2(beta, alpha);
  return t < 0 ? t + two_pi : t;
}

/// Sector 1..6 of a non-zero vector: sector k covers [60(k-1), 60k) degrees.
inline int sector_of(real alpha, real beta) {
  int k = static_cast<int>(std::floor(angle_of(alpha, beta) / (two_pi / 6.0L)));
  return (k % 6) + 1;
}

/// Duties of the classic sector and dwell-time modulator for a command inside the
/// hexagon (relative to the bus). The zero-vector time goes half to 000 and half to 111
/// (centred), all to 000 (clamp_low), all to 111 (clamp_high), or to the rail of the phase
/// with the largest |reference| (clamp_peak).
inline abc dwell_time_duties(real alpha, real beta, scheme s) {
  const real m = std::hypot(alpha, beta);
  const int k = m == 0 ? 1 : sector_of(alpha, beta);
  const real theta = m == 0 ? 0 : angle_of(alpha, beta) - (k - 1) * (two_pi / 6.0L);
  const real t1 = sqrt3 * m * std::sin(two_pi / 6.0L - theta);
  const real t2 = sqrt3 * m * std::sin(theta);
  const real t0 = 1.0L - t1 - t2;
  const int* first = switching_state[k - 1];
  const int* second = switching_state[k % 6];
  real share_111 = 0.5L;
  if (s == scheme::clamp_low) share_111 = 0;
  if (s == scheme::clamp_high) share_111 = 1;
  if (s == scheme::clamp_peak) {
    const abc v = inverse_clarke_amplitude(alpha, beta);
    const real hi = std::fmax(v.a, std::fmax(v.b, v.c)), lo = std::fmin(v.a, std::fmin(v.b, v.c));
    share_111 = hi >= -lo ? 1 : 0;
  }
  real d[3];
  for (int p = 0; p < 3; ++p) d[p] = share_111 * t0 + t1 * first[p] + t2 * second[p];
  return {d[0], d[1], d[2]};
}

/// Sinusoidal PWM: each duty follows its phase reference around 1/2.
inline abc sinusoidal_duties(real alpha, real beta) {
  const abc v = inverse_clarke_amplitude(alpha, beta);
  return {0.5L + v.a, 0.5L + v.b, 0.5L + v.c};
}

inline abc duties(real alpha, real beta, scheme s) {
  return s == scheme::sinusoidal ? sinusoidal_duties(alpha, beta) : dwell_time_duties(alpha, beta, s);
}

/// The boundary of the linear range as a regular hexagon: `circumradius` to its
/// vertices, the first vertex at `first_vertex` radians. Space-vector hexagon: 2/3 at 0;
/// sinusoidal: 1/sqrt3 at 30 degrees (its faces at |v_phase| = 1/2).
struct hexagon {
  real circumradius, first_vertex;
  real vertex_x(int i) const { return circumradius * std::cos(first_vertex + i * two_pi / 6.0L); }
  real vertex_y(int i) const { return circumradius * std::sin(first_vertex + i * two_pi / 6.0L); }
  /// Distance from the centre to the boundary along angle t.
  real reach(real t) const {
    const real apothem = circumradius * sqrt3 / 2.0L;
    real u = std::fmod(t - first_vertex, two_pi / 6.0L);
    if (u < 0) u += two_pi / 6.0L;
    return apothem / std::cos(u - two_pi / 12.0L);
  }
  bool contains(real x, real y) const { return std::hypot(x, y) <= reach(angle_of(x, y)); }
  /// Nearest boundary point to a point outside. The regions outside a convex polygon
  /// that are nearest to each edge (the strips beyond it, between the normals at its
  /// ends) do not overlap: the point projects onto the one edge whose strip holds it, or
  /// else onto the nearest vertex. (Choosing the closest of all clamped edge projections
  /// instead is ill-conditioned where a vertex is about as far as the true foot.)
  ab nearest(real x, real y) const {
    ab best{0, 0};
    real best_d = INFINITY;
    for (int i = 0; i < 6; ++i) {
      const real ax = vertex_x(i), ay = vertex_y(i), bx = vertex_x(i + 1), by = vertex_y(i + 1);
      const real ex = bx - ax, ey = by - ay;
      const real t = ((x - ax) * ex + (y - ay) * ey) / (ex * ex + ey * ey);
      const bool beyond = (x - ax) * ey - (y - ay) * ex > 0;  // right of a counter-clockwise edge
      if (beyond && t > 0 && t < 1) return {ax + t * ex, ay + t * ey};
      const real d = std::hypot(x - ax, y - ay);
      if (d < best_d) {
        best_d = d;
        best = {ax, ay};
      }
    }
    return best;
  }
};

inline hexagon space_vector_hexagon() { return {2.0L / 3.0L, 0}; }
inline hexagon sinusoidal_hexagon() { return {1.0L / sqrt3, two_pi / 12.0L}; }

/// The stationary vector a set of duties applies (zero sequence dropped).
inline ab vector_of_duties(real da, real db, real dc) { return clarke_amplitude(da, db, dc); }

}  // namespace dqfx_reference
