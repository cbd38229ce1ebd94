// SPDX-License-Identifier: MIT
#pragma once
// Torque and flux set-points in plain double, written apart from the library: brute-force
// searches the library's MTPA, field weakening and MTPV are checked against, and the
// textbook set-point computation the benches time it beside. Everything per unit, with
// the torque t = psi*iq + (ld - lq)*id*iq (amplitude-invariant d/q; the factor 1.5 * pole
// pairs belongs to the torque base).

#include <cmath>

namespace reference {

struct setpoint_motor {
  double ld = 0, lq = 0, flux = 0;  // per unit
  double imax = 0;                  // current limit, per unit
};

inline double torque(const setpoint_motor& m, double id, double iq) {
  return m.flux * iq + (m.ld - m.lq) * id * iq;
}

struct current_point {
  double id = 0, iq = 0;
  double magnitude() const { return std::hypot(id, iq); }
};

// MTPA by brute force over the current angle b (id = -i sin b, iq = i cos b, b in
// [0, pi/2)): for each angle the magnitude that gives torque t solves
//   (lq - ld) sin b cos b i^2 + psi cos b i - t = 0,
// and the angle with the smallest magnitude wins. A grid of 4000 angles, then a
// golden-section search in the best cell and its neighbours.
inline current_point mtpa_brute_force(const setpoint_motor& m, double t) {
  const double half_pi = 1.57079632679489661923;
  auto magnitude_at = [&](double b) {
    const double s = std::sin(b), c = std::cos(b);
    const double a = (m.lq - m.ld) * s * c, bq = m.flux * c;
    // a i^2 + bq i - t = 0, the positive root in its cancellation-free form.
    return 2 * t / (bq + std::sqrt(bq * bq + 4 * a * t));
  };
  const int n = 4000;
  int best = 0;
  for (int k = 1; k < n; ++k) {
    if (magnitude_at(half_pi * k / n) < magnitude_at(half_pi * best / n)) best = k;
  }
  double lo = half_pi * (best > 0 ? best - 1 : 0) / n, hi = half_pi * (best + 1) / n;
  const double g = 0.61803398874989484820;
  for (int i = 0; i < 100; ++i) {
    const double x1 = hi - g * (hi - lo), x2 = lo + g * (hi - lo);
    if (magnitude_at(x1) < magnitude_at(x2)) {
      hi = x2;
    } else {
      lo = x1;
    }
  }
  const double b = 0.5 * (lo + hi), i = magnitude_at(b);
  return {-i * std::sin(b), i * std::cos(b)};
}

// The largest torque over the region inside the current circle and the voltage ellipse
// (w (psi + ld id))^2 + (w lq iq)^2 <= v^2, by brute force over id: at each id the
// largest iq both allow. A grid of 20000, then a golden-section search around the best.
inline current_point max_torque_brute_force(const setpoint_motor& m, double w, double v) {
  auto best_q = [&](double id) {
    const double circle = m.imax * m.imax - id * id;
    const double ellipse = (v / w) * (v / w) - (m.flux + m.ld * id) * (m.flux + m.ld * id);
    if (circle < 0 || ellipse < 0) return -1.0;
    return std::fmin(std::sqrt(circle), std::sqrt(ellipse) / m.lq);
  };
  auto torque_at = [&](double id) {
    const double iq = best_q(id);
    return iq < 0 ? -1.0 : torque(m, id, iq);
  };
  const int n = 20000;
  int best = 0;
  for (int k = 1; k <= n; ++k) {
    if (torque_at(-m.imax * k / n) > torque_at(-m.imax * best / n)) best = k;
  }
  double lo = -m.imax * (best < n ? best + 1 : n) / n, hi = -m.imax * (best > 0 ? best - 1 : 0) / n;
  const double g = 0.61803398874989484820;
  for (int i = 0; i < 100; ++i) {
    const double x1 = hi - g * (hi - lo), x2 = lo + g * (hi - lo);
    if (torque_at(x1) > torque_at(x2)) {
      hi = x2;
    } else {
      lo = x1;
    }
  }
  const double id = 0.5 * (lo + hi);
  return {id, best_q(id)};
}

// The textbook set-point computation: MTPA d current as a function of iq by the closed
// form (Morimoto, Takeda, Hirasa and Taniguchi, IEEE Trans. Industry Applications, 1990),
// iq for the torque by Newton's method on t = iq (psi - (lq - ld) id(iq)), then iq cut
// back to the current circle and the voltage ellipse with std::sqrt. What a desktop
// prototype would do; the benches time the library beside it.
struct textbook_setpoint {
  setpoint_motor m;
  double voltage_use = 0.95;  // fraction of vdc/sqrt(3)

  double mtpa_d(double iq) const {
    const double dl = m.lq - m.ld;
    if (dl == 0) return 0;
    return m.flux / (2 * dl) - std::sqrt(m.flux * m.flux / (4 * dl * dl) + iq * iq);
  }

  current_point operator()(double t, double w, double vdc) const {
    const double a = std::fabs(t), dl = m.lq - m.ld;
    double iq = a / m.flux;
    for (int k = 0; k < 6; ++k) {
      const double id = mtpa_d(iq);
      const double f = iq * (m.flux - dl * id) - a;
      // d(id)/d(iq) = -iq / sqrt(psi^2/(4 dl^2) + iq^2) = iq / (id - psi/(2 dl)).
      const double did = dl == 0 ? 0 : iq / (id - m.flux / (2 * dl));
      const double df = m.flux - dl * id - dl * iq * did;
      iq -= f / df;
    }
    const double id = mtpa_d(iq);
    iq = std::fmin(iq, std::sqrt(std::fmax(m.imax * m.imax - id * id, 0.0)));
    const double v = voltage_use * vdc / std::sqrt(3.0);
    const double emf = std::fabs(w * (m.flux + m.ld * id));
    if (emf >= v) {
      iq = 0;
    } else if (w != 0) {
      iq = std::fmin(iq, std::sqrt(v * v - emf * emf) / (std::fabs(w) * m.lq));
    }
    return {id, t < 0 ? -iq : iq};
  }
};

// Base speed: the electrical speed at which the MTPA point at the current limit meets
// the voltage vdc/sqrt(3) (resistance neglected). Brute-force MTPA, per unit.
inline double base_speed(const setpoint_motor& m, double vdc) {
  // The MTPA point at the current limit: the largest torque on the circle.
  const double half_pi = 1.57079632679489661923;
  double best_b = 0, best_t = 0;
  for (int k = 0; k <= 200000; ++k) {
    const double b = half_pi * k / 200000;
    const double t = torque(m, -m.imax * std::sin(b), m.imax * std::cos(b));
    if (t > best_t) {
      best_t = t;
      best_b = b;
    }
  }
  const double id = -m.imax * std::sin(best_b), iq = m.imax * std::cos(best_b);
  return vdc / std::sqrt(3.0) / std::hypot(m.flux + m.ld * id, m.lq * iq);
}

}  // namespace reference
