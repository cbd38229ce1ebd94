// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "dqfx/torque_setpoint.hpp"
#include "reference/setpoint_reference.hpp"
#include "test_support.hpp"

namespace {

using dqfx::from_double;
using dqfx::q15;
using dqfx::q31;
using dqfx::to_double;

using dqfx_test::demo_base;  // the simulator demo's invented motor, here with a 30 A limit
using dqfx_test::demo_bus;
using dqfx_test::demo_motor;
using dqfx_test::lsb;
using dqfx_test::name;
using dqfx_test::two_pi;

// Invented motors, per unit: the demo; an interior-magnet motor with strong saliency; a
// magnet-assisted reluctance motor (reluctance torque dominates, 2 (lq - ld) imax / psi = 19);
// a surface-magnet motor.
const std::vector<dqfx::torque_setpoint_parameters>& motors() {
  static const std::vector<dqfx::torque_setpoint_parameters> m{
      dqfx::design_torque_setpoint(demo_base, demo_motor, 30.0),
      {0.3, 0.9, 0.5, 0.8, 0.95},
      {0.2, 1.4, 0.1, 0.8, 0.95},
      {0.4, 0.4, 0.6, 0.8, 0.95},
  };
  return m;
}

reference::setpoint_motor reference_of(const dqfx::torque_setpoint_parameters& p) {
  return {p.ld, p.lq, p.flux, p.current_limit};
}

// Torques over (0, peak]: uniform, and geometric down to 1e-4 of the peak.
std::vector<double> torque_sweep(double peak) {
  std::vector<double> t;
  for (int k = 1; k <= 400; ++k) t.push_back(0.999 * peak * k / 400);
  for (int k = 0; k < 100; ++k) t.push_back(peak * std::pow(10.0, -4.0 + 4.0 * k / 100));
  return t;
}

template <class T> dqfx::current_setpoint<T> call(const dqfx::torque_setpoint<T>& sp, double t, double w, double vdc) {
  return sp(from_double<T>(t), from_double<T>(w), from_double<T>(vdc));
}

}  // namespace

TEST_CASE_TEMPLATE("torque_setpoint: MTPA current magnitude within 0.1% of a brute-force search over the current angle",
                   T, q15, q31, float, double) {
  // Slack for the rounding of id and iq themselves (fixed point: 1 LSB).
  const double slack = dqfx::number_traits<T>::is_fixed ? lsb<T>() : 0.0;
  int index = 0;
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<T> sp{p};
    const reference::setpoint_motor m = reference_of(p);
    double worst = 0, worst_excess = -1;
    for (double t : torque_sweep(to_double(sp.peak_torque()))) {
      const dqfx::current_setpoint<T> s = call(sp, t, 0.0, demo_bus);
      const double command = to_double(from_double<T>(t));
      const double brute = reference::mtpa_brute_force(m, command).magnitude();
      const double got = std::hypot(to_double(s.current.d), to_double(s.current.q));
      CHECK_FALSE(s.torque_limited);
      worst_excess = std::fmax(worst_excess, std::fabs(got - brute) - 1e-3 * brute);
      if (brute > 0.05) worst = std::fmax(worst, std::fabs(got - brute) / brute);
      REQUIRE(std::fabs(got - brute) <= 1e-3 * brute + slack);
    }
    MESSAGE(name<T>(), " motor ", index, ": max relative error of |i| against brute force ", worst,
            " (magnitudes above 0.05); largest excess over 0.1%: ", worst_excess / lsb<T>(), " LSB");
    ++index;
  }
}

TEST_CASE_TEMPLATE("torque_setpoint: the torque of the set-points equals the command below base speed", T, q15, q31,
                   float, double) {
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<T> sp{p};
    const reference::setpoint_motor m = reference_of(p);
    const double base = reference::base_speed(m, demo_bus);
    double worst = 0;
    for (double fraction : {0.0, 0.5, 0.85}) {
      for (double t : torque_sweep(to_double(sp.peak_torque()))) {
        for (double sign : {1.0, -1.0}) {
          const dqfx::current_setpoint<T> s = call(sp, sign * t, -fraction * base, demo_bus);
          REQUIRE_FALSE(s.torque_limited);
          const double command = to_double(from_double<T>(sign * t));
          const double delivered = reference::torque(m, to_double(s.current.d), to_double(s.current.q));
          worst = std::fmax(worst, std::fabs(delivered - command));
          // The torque the set-point reports is the same within its own rounding.
          CHECK(std::fabs(to_double(s.torque) - delivered) <= 4 * lsb<T>());
        }
      }
    }
    MESSAGE(name<T>(), ": max |t(id*, iq*) - t*| = ", worst / lsb<T>(), " LSB (", worst, ")");
    CHECK(worst <= 4 * lsb<T>());
  }
}

namespace {

// Bounds of the set-points of T against the double ones, in units of T's LSB: the
// currents where no limit cuts iq back; on the circle, the current magnitude; on the
// ellipse, the voltage the set-point needs. Near the ends of the circle and the tip of
// the ellipse iq is ill-conditioned (a rounding of the limit moves it far), so there the
// set-points agree on the limit, not on iq.
template <class T> constexpr double current_bound_lsb() { return 2; }
template <class T> constexpr double voltage_bound_lsb() { return 4; }

}  // namespace

TEST_CASE_TEMPLATE("torque_setpoint: q15, q31 and float set-points track the double ones", T, q15, q31, float) {
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<T> sp{p};
    const dqfx::torque_setpoint<double> ref{p};
    const reference::setpoint_motor m = reference_of(p);
    const double base = reference::base_speed(m, demo_bus);
    const double peak = ref.peak_torque();
    double mtpa = 0, current = 0, circle = 0, voltage = 0;
    int limited = 0, cases = 0;
    for (int i = -24; i <= 24; ++i) {
      const double t = to_double(from_double<T>(1.2 * peak * i / 24));
      mtpa = std::fmax(mtpa, std::fabs(to_double(sp.mtpa_d_current(from_double<T>(t))) - ref.mtpa_d_current(t)));
      for (int j = 0; j <= 12; ++j) {
        const double w = to_double(from_double<T>(std::fmin(0.99, base * j / 4)));
        for (double vdc : {0.3, 0.6, 0.9}) {
          for (double shift : {0.0, -0.1, -0.4, -1.0}) {
            // Same inputs for both: the d current as T holds it.
            const T d = from_double<T>(ref.mtpa_d_current(t) + shift);
            const dqfx::current_setpoint<T> s =
                sp.at_d_current(from_double<T>(t), d, from_double<T>(w), from_double<T>(vdc));
            const dqfx::current_setpoint<double> r = ref.at_d_current(t, to_double(d), w, to_double(from_double<T>(vdc)));
            const double id = to_double(s.current.d), iq = to_double(s.current.q);
            if (s.voltage_limited || r.voltage_limited) {
              const double v = std::hypot(w * (m.flux + m.ld * id), w * m.lq * iq);
              const double vr = std::hypot(w * (m.flux + m.ld * r.current.d), w * m.lq * r.current.q);
              voltage = std::fmax(voltage, std::fabs(v - vr));
              ++limited;
            } else if (s.current_limited || r.current_limited) {
              // Likewise on the circle: the magnitude.
              circle = std::fmax(circle, std::fabs(std::hypot(id, iq) - std::hypot(r.current.d, r.current.q)));
            } else {
              current = std::fmax(current, std::fmax(std::fabs(id - r.current.d), std::fabs(iq - r.current.q)));
            }
            ++cases;
          }
        }
      }
    }
    MESSAGE(name<T>(), ": ", cases, " cases: max |i*(T) - i*(double)| = ", current / lsb<T>(),
            " LSB; on the circle, magnitude ", circle / lsb<T>(), " LSB; voltage-limited (", limited,
            "): max difference of the voltage needed ", voltage / lsb<T>(), " LSB; MTPA d current ",
            mtpa / lsb<T>(), " LSB");
    CHECK(limited > cases / 10);
    CHECK(current <= current_bound_lsb<T>() * lsb<T>());
    CHECK(circle <= current_bound_lsb<T>() * lsb<T>());
    CHECK(voltage <= voltage_bound_lsb<T>() * lsb<T>());
    CHECK(mtpa <= current_bound_lsb<T>() * lsb<T>());
  }
}

TEST_CASE("torque_setpoint: double set-points match the textbook Newton solution") {
  // The table-and-division route against the textbook route (closed form plus Newton's
  // method on iq, tests/reference), over torque, speed and bus voltage.
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<double> sp{p};
    const reference::textbook_setpoint book{reference_of(p), p.voltage_use};
    const double base = reference::base_speed(reference_of(p), demo_bus);
    double worst = 0;
    for (int i = -20; i <= 20; ++i) {
      for (int j = 0; j <= 8; ++j) {
        const double t = sp.peak_torque() * i / 20, w = std::fmin(0.99, base * j / 4);
        const dqfx::current_setpoint<double> s = sp(t, w, demo_bus);
        const reference::current_point r = book(t, w, demo_bus);
        worst = std::fmax(worst, std::fmax(std::fabs(s.current.d - r.id), std::fabs(s.current.q - r.iq)));
      }
    }
    MESSAGE("double against textbook: max difference ", worst);
    // The table's interpolation of id (below 1e-3 of the current for every motor here).
    CHECK(worst < 1e-3 * p.current_limit);
  }
}

TEST_CASE_TEMPLATE("torque_setpoint: set-points stay inside the current circle and the voltage ellipse", T, q15, q31,
                   float, double) {
  std::mt19937 random{20240611};
  std::uniform_real_distribution<double> unit{-1.0, 1.0};
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<T> sp{p};
    const reference::setpoint_motor m = reference_of(p);
    for (int n = 0; n < 20000; ++n) {
      const T t = from_double<T>(unit(random)), w = from_double<T>(unit(random));
      const T vdc = from_double<T>(0.5 * (unit(random) + 1.0) + 0.001);
      const T d = from_double<T>(0.6 * unit(random) - 0.5);
      const dqfx::current_setpoint<T> s = n % 2 ? sp(t, w, vdc) : sp.at_d_current(t, d, w, vdc);
      REQUIRE_FALSE(s.fault);
      const double id = to_double(s.current.d), iq = to_double(s.current.q);
      if constexpr (dqfx::number_traits<T>::is_fixed) {
        // Exact: integer squares.
        const std::int64_t a = s.current.d.raw(), b = s.current.q.raw(), r = sp.current_limit().raw();
        REQUIRE(a * a + b * b <= r * r);
      } else {
        REQUIRE(std::hypot(id, iq) <= to_double(sp.current_limit()) * (1 + 4 * lsb<T>()));
      }
      // The ellipse, in double from the double parameters (the constants in T are rounded).
      const double ww = to_double(w), vmax = p.voltage_use * to_double(vdc) / std::sqrt(3.0);
      const double v = std::hypot(ww * (m.flux + m.ld * id), ww * m.lq * iq);
      if (iq != 0) REQUIRE(v <= vmax + 16 * lsb<T>());
      // Never more torque than asked, and in its direction.
      const double asked = to_double(t), got = reference::torque(m, id, iq);
      REQUIRE(std::fabs(got) <= std::fabs(asked) + 4 * lsb<T>());
      REQUIRE(got * asked >= 0);
      REQUIRE(id <= 0);
    }
  }
}

TEST_CASE_TEMPLATE("torque_setpoint: torque beyond the limits is met as far as they allow, and flagged", T, q15, q31,
                   float, double) {
  for (const auto& p : motors()) {
    const dqfx::torque_setpoint<T> sp{p};
    const reference::setpoint_motor m = reference_of(p);
    // Current limit at standstill: the MTPA point on the circle, the largest torque there is.
    const reference::current_point best = reference::max_torque_brute_force(m, 1e-9, 1.0);
    const double most = reference::torque(m, best.id, best.iq);
    for (double command : {1.0, -1.0, 0.99}) {
      const dqfx::current_setpoint<T> s = call(sp, command, 0.0, demo_bus);
      CHECK(s.torque_limited);
      CHECK_FALSE(s.fault);
      const double got = reference::torque(m, to_double(s.current.d), to_double(s.current.q));
      CHECK(std::fabs(std::fabs(got) - most) <= 1e-6 * most + 8 * lsb<T>());
      CHECK(std::hypot(to_double(s.current.d), to_double(s.current.q)) ==
            doctest::Approx(p.current_limit).epsilon(1e-6 + 4 * lsb<T>()));
    }
    // Voltage limit at twice base speed: the set-point lands on the ellipse.
    const double w = std::fmin(0.95, 2 * reference::base_speed(m, demo_bus));
    const dqfx::current_setpoint<T> s = call(sp, to_double(sp.peak_torque()), w, demo_bus);
    const double id = to_double(s.current.d), iq = to_double(s.current.q);
    const double vmax = p.voltage_use * to_double(from_double<T>(demo_bus)) / std::sqrt(3.0);
    CHECK(s.torque_limited);
    CHECK(s.voltage_limited);
    if (iq > 0) CHECK(std::hypot(w * (m.flux + m.ld * id), w * m.lq * iq) == doctest::Approx(vmax).epsilon(64 * lsb<T>()));
  }
}

TEST_CASE_TEMPLATE("torque_setpoint: NaN or infinite inputs give zero set-points and a fault", T, float, double) {
  const dqfx::torque_setpoint<T> sp{motors()[0]};
  const T good[4] = {T(0.3), T(-0.1), T(0.2), T(0.6)};  // torque, d current, speed, bus
  for (int field = 0; field < 4; ++field) {
    for (T bad : {std::numeric_limits<T>::quiet_NaN(), std::numeric_limits<T>::infinity(),
                  -std::numeric_limits<T>::infinity()}) {
      T in[4] = {good[0], good[1], good[2], good[3]};
      in[field] = bad;
      const dqfx::current_setpoint<T> s = sp.at_d_current(in[0], in[1], in[2], in[3]);
      CHECK(s.fault);
      CHECK(s.current.d == T{});
      CHECK(s.current.q == T{});
      CHECK(s.torque == T{});
      if (field != 1) {
        const dqfx::current_setpoint<T> full = sp(in[0], in[2], in[3]);
        CHECK(full.fault);
        CHECK(full.current.d == T{});
        CHECK(full.current.q == T{});
      }
    }
  }
  CHECK(sp.mtpa_d_current(std::numeric_limits<T>::quiet_NaN()) == T{});
  CHECK_FALSE(sp(good[0], good[2], good[3]).fault);
}

TEST_CASE_TEMPLATE("torque_setpoint: bus voltage <= 0, invalid parameters and converted NaN", T, q15, q31, float,
                   double) {
  const dqfx::torque_setpoint<T> sp{motors()[1]};
  for (double vdc : {0.0, -0.5}) {
    const dqfx::current_setpoint<T> s = call(sp, 0.3, 0.1, vdc);
    CHECK(s.fault);
    CHECK(s.current.d == T{});
    CHECK(s.current.q == T{});
  }
  // In fixed point a NaN cannot arrive: from_double maps it to zero torque.
  const dqfx::current_setpoint<T> zero = sp(from_double<T>(std::nan("")), from_double<T>(0.1), from_double<T>(0.6));
  CHECK(zero.current.q == T{});
  CHECK(zero.current.d == T{});

  const double nan = std::numeric_limits<double>::quiet_NaN();
  const dqfx::torque_setpoint_parameters bad[] = {
      {0.3, 0.9, 0.0, 0.8, 0.95},  {0.3, 0.9, -0.5, 0.8, 0.95}, {0.0, 0.9, 0.5, 0.8, 0.95},
      {0.9, 0.3, 0.5, 0.8, 0.95},  {0.3, 0.9, 0.5, 0.0, 0.95},  {0.3, 0.9, 0.5, 0.8, 0.0},
      {0.3, 0.9, 0.5, 0.8, 1.5},   {nan, 0.9, 0.5, 0.8, 0.95},  {0.3, nan, 0.5, 0.8, 0.95},
      {0.3, 0.9, nan, 0.8, 0.95},  {0.3, 0.9, 0.5, nan, 0.95},  {0.3, 0.9, 0.5, 0.8, nan},
  };
  for (const auto& p : bad) {
    const dqfx::torque_setpoint<T> broken{p};
    CHECK_FALSE(broken.valid());
    const dqfx::current_setpoint<T> s = call(broken, 0.3, 0.1, 0.6);
    CHECK(s.fault);
    CHECK(s.current.d == T{});
    CHECK(s.current.q == T{});
  }
}

TEST_CASE_TEMPLATE("torque_setpoint: published facts (surface magnets, reluctance limit, back-EMF, torque base)", T,
                   q15, q31, float, double) {
  // Surface magnets (ld = lq): MTPA is the whole current on the q axis, iq = t / psi
  // (Jahns, Kliman and Neumann, IEEE Trans. Industry Applications, 1986).
  const dqfx::torque_setpoint<T> surface{motors()[3]};
  for (double t : {0.05, 0.2, 0.45}) {
    const dqfx::current_setpoint<T> s = call(surface, t, 0.0, 0.6);
    CHECK(s.current.d == T{});
    CHECK(to_double(s.current.q) == doctest::Approx(to_double(from_double<T>(t)) / 0.6).epsilon(4 * lsb<T>()));
  }
  // Nearly pure reluctance (psi -> 0): the MTPA current angle tends to 45 degrees, id = -iq,
  // where sin(2 beta) is largest (common practice for synchronous reluctance motors).
  const dqfx::torque_setpoint<T> reluctance{dqfx::torque_setpoint_parameters{0.2, 1.0, 0.002, 0.8, 0.95}};
  const dqfx::current_setpoint<T> r = reluctance(reluctance.peak_torque(), T{}, from_double<T>(0.6));
  CHECK(-to_double(r.current.d) / to_double(r.current.q) == doctest::Approx(1.0).epsilon(0.01));
  // No-load back-EMF = electrical speed times flux linkage (Krause, Wasynczuk and Sudhoff,
  // "Analysis of Electric Machinery and Drive Systems"): at zero d current the ellipse
  // leaves room for q current just below w = vmax / psi and none just above.
  const auto& p = motors()[1];
  const dqfx::torque_setpoint<T> ipm{p};
  const double vdc = 0.6, w0 = p.voltage_use * vdc / std::sqrt(3.0) / p.flux;
  CHECK(ipm.at_d_current(from_double<T>(0.2), T{}, from_double<T>(w0 * 0.98), from_double<T>(vdc)).current.q > T{});
  const dqfx::current_setpoint<T> above = ipm.at_d_current(from_double<T>(0.2), T{}, from_double<T>(w0 * 1.02), from_double<T>(vdc));
  CHECK(above.current.q == T{});
  CHECK(above.voltage_limited);
  // Per-unit torque times the torque base is 1.5 p (psi iq + (ld - lq) id iq) in N*m
  // (Krause, Wasynczuk and Sudhoff) for the demo motor in amperes.
  const dqfx::torque_setpoint<T> demo{motors()[0]};
  const dqfx::current_setpoint<T> s = call(demo, 0.4, 0.0, demo_bus);
  const double id = to_double(s.current.d) * demo_base.base_current, iq = to_double(s.current.q) * demo_base.base_current;
  const double newton_metres = 1.5 * 4 * (demo_motor.flux * iq + (demo_motor.ld - demo_motor.lq) * id * iq);
  CHECK(to_double(s.torque) * demo_base.torque() == doctest::Approx(newton_metres).epsilon(16 * lsb<T>()));
}

TEST_CASE("torque_setpoint: built at compile time") {
  constexpr dqfx::torque_setpoint<q15> sp{dqfx::torque_setpoint_parameters{0.3, 0.9, 0.5, 0.8, 0.95}};
  static_assert(sp.valid(), "valid parameters");
  static_assert(sp.current_limit() == from_double<q15>(0.8), "the current limit in q15");
  constexpr dqfx::torque_setpoint<q31> demo{dqfx::design_torque_setpoint(demo_base, demo_motor, 30.0)};
  static_assert(demo.valid(), "the demo motor");
  CHECK(to_double(demo.peak_torque()) > 0.6);
}
