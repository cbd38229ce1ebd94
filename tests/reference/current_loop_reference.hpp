// SPDX-License-Identifier: MIT
#pragma once
// Textbook field-oriented current loop in plain float or double, written apart from the
// library: the reference the library's loop is compared with in tests, and the baseline
// it is timed against in the benches. Amplitude-invariant Clarke and Park, two PI with
// back-calculation (Astrom and Hagglund, "Advanced PID Control", 2006), cross-coupling
// feed-forward, circular voltage limit with the d axis first, inverse Park, and
// space-vector modulation by sectors and dwell times (Holtz, "Pulsewidth modulation for
// electronic power conversion", Proc. IEEE, 1994), centred with equal zero-vector halves.
// Also a permanent-magnet motor in d/q for closed-loop tests.

#include <cmath>

namespace reference {

// Duties of centred space-vector modulation for a voltage normalised to the bus, by the
// sector and the dwell times of its two active vectors. Commands beyond the hexagon are
// scaled back onto it.
template <class F> void sector_svm(F alpha, F beta, F duty[3]) {
  const F sqrt3 = F(1.7320508075688772);
  // Sector 1..6 from the signs of three projections.
  const int n = (beta > 0 ? 1 : 0) + (sqrt3 * alpha - beta > 0 ? 2 : 0) + (-sqrt3 * alpha - beta > 0 ? 4 : 0);
  static const int sector_of[8] = {1, 2, 6, 1, 4, 3, 5, 1};
  const int k = sector_of[n];
  // Sines and cosines of the sector edges k*60 degrees.
  static const F c60[7] = {F(1), F(0.5), F(-0.5), F(-1), F(-0.5), F(0.5), F(1)};
  static const F s60[7] = {F(0), F(0.8660254037844386), F(0.8660254037844386), F(0),
                           F(-0.8660254037844386), F(-0.8660254037844386), F(0)};
  // v = t1*V_k + t2*V_k+1 with |V| = 2/3 of the bus: solved by cross products.
  F t1 = sqrt3 * (alpha * s60[k] - beta * c60[k]);
  F t2 = sqrt3 * (beta * c60[k - 1] - alpha * s60[k - 1]);
  if (t1 + t2 > F(1)) {
    const F scale = F(1) / (t1 + t2);
    t1 *= scale;
    t2 *= scale;
  }
  const F half_zero = (F(1) - t1 - t2) / 2;
  // Switch states (a, b, c) of the active vectors V1..V6: 100 110 010 011 001 101.
  static const int state[7][3] = {{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0, 1, 1}, {0, 0, 1}, {1, 0, 1}};
  const int next = k == 6 ? 1 : k + 1;
  for (int x = 0; x < 3; ++x) duty[x] = half_zero + t1 * F(state[k][x]) + t2 * F(state[next][x]);
}

template <class F> struct current_loop {
  // Per-unit settings.
  F kp_d = 0, ki_d = 0, kt_d = 0, kp_q = 0, ki_q = 0, kt_q = 0;
  F ld = 0, lq = 0, flux = 0;
  F modulation_limit = 1;
  // Integrators.
  F xd = 0, xq = 0;

  struct result {
    F duty[3] = {F(0.5), F(0.5), F(0.5)};
    F vd = 0, vq = 0, id = 0, iq = 0, limit = 0;
    bool limited = false, fault = false;
  };

  result step(F ia, F ib, F ic, F s, F c, F w, F id_ref, F iq_ref, F vdc) {
    result r;
    if (!std::isfinite(ia) || !std::isfinite(ib) || !std::isfinite(ic) || !std::isfinite(s) ||
        !std::isfinite(c) || !std::isfinite(w) || !std::isfinite(id_ref) || !std::isfinite(iq_ref) ||
        !std::isfinite(vdc) || !(vdc > 0)) {
      r.fault = true;
      return r;
    }
    const F i_alpha = (2 * ia - ib - ic) / 3;
    const F i_beta = (ib - ic) / F(1.7320508075688772);
    r.id = i_alpha * c + i_beta * s;
    r.iq = -i_alpha * s + i_beta * c;
    const F ed = id_ref - r.id, eq = iq_ref - r.iq;
    const F vd_want = kp_d * ed + xd - w * lq * r.iq;
    const F vq_want = kp_q * eq + xq + w * ld * r.id + w * flux;
    r.limit = modulation_limit * vdc / F(1.7320508075688772);
    r.vd = std::fmin(std::fmax(vd_want, -r.limit), r.limit);
    const F room = std::sqrt(std::fmax(r.limit * r.limit - r.vd * r.vd, F(0)));
    r.vq = std::fmin(std::fmax(vq_want, -room), room);
    r.limited = r.vd != vd_want || r.vq != vq_want;
    xd += ki_d * ed + kt_d * (r.vd - vd_want);
    xq += ki_q * eq + kt_q * (r.vq - vq_want);
    const F v_alpha = r.vd * c - r.vq * s;
    const F v_beta = r.vd * s + r.vq * c;
    sector_svm(v_alpha / vdc, v_beta / vdc, r.duty);
    return r;
  }

  // The textbook step as timed in the benches: sine and cosine from the C library.
  result step_at(F ia, F ib, F ic, F theta, F w, F id_ref, F iq_ref, F vdc) {
    return step(ia, ib, ic, std::sin(theta), std::cos(theta), w, id_ref, iq_ref, vdc);
  }
};

// Permanent-magnet synchronous motor in d/q (amplitude-invariant, per unit, time in
// per-unit time 1/base speed), driven by an ideal inverter from three duties, speed
// imposed. Integrated by classical fourth-order Runge-Kutta over substeps.
struct pm_motor {
  double r = 0, ld = 0, lq = 0, flux = 0;  // per unit
  double id = 0, iq = 0;                   // state, per unit
  double theta = 0;                        // electrical angle, rad

  // Advances by `dt` (per-unit time) at electrical speed w (per unit; rad per unit
  // time), with the duties held and bus voltage vdc.
  void advance(const double duty[3], double vdc, double w, double dt, int substeps = 8) {
    const double common = (duty[0] + duty[1] + duty[2]) / 3;
    const double va = (duty[0] - common) * vdc, vb = (duty[1] - common) * vdc, vc = (duty[2] - common) * vdc;
    const double v_alpha = (2 * va - vb - vc) / 3, v_beta = (vb - vc) / std::sqrt(3.0);
    const double h = dt / substeps;
    for (int k = 0; k < substeps; ++k) {
      auto derivative = [&](double t, double d, double q, double& dd, double& dq) {
        const double th = theta + w * t;
        const double vd = v_alpha * std::cos(th) + v_beta * std::sin(th);
        const double vq = -v_alpha * std::sin(th) + v_beta * std::cos(th);
        dd = (vd - r * d + w * lq * q) / ld;
        dq = (vq - r * q - w * ld * d - w * flux) / lq;
      };
      double k1d, k1q, k2d, k2q, k3d, k3q, k4d, k4q;
      derivative(0, id, iq, k1d, k1q);
      derivative(h / 2, id + h / 2 * k1d, iq + h / 2 * k1q, k2d, k2q);
      derivative(h / 2, id + h / 2 * k2d, iq + h / 2 * k2q, k3d, k3q);
      derivative(h, id + h * k3d, iq + h * k3q, k4d, k4q);
      id += h / 6 * (k1d + 2 * k2d + 2 * k3d + k4d);
      iq += h / 6 * (k1q + 2 * k2q + 2 * k3q + k4q);
      theta += w * h;
    }
    theta = std::remainder(theta, 2 * 3.14159265358979323846);
  }

  // Phase currents now.
  void phase_currents(double& a, double& b, double& c) const {
    const double i_alpha = id * std::cos(theta) - iq * std::sin(theta);
    const double i_beta = id * std::sin(theta) + iq * std::cos(theta);
    a = i_alpha;
    b = -i_alpha / 2 + std::sqrt(3.0) / 2 * i_beta;
    c = -i_alpha / 2 - std::sqrt(3.0) / 2 * i_beta;
  }
};

}  // namespace reference
