// SPDX-License-Identifier: MIT
// The angle sources share one shape: electrical_angle(), speed(), valid(), fault(),
// clear_faults(), parameter_fault(), reset(). One generic routine drives the encoder, the
// Hall sensors, the tracking PLL and the flux observer on the same rotor; only the
// reading each one takes from the rotor differs.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <type_traits>

#include "dqfx/encoder.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/hall.hpp"
#include "dqfx/tracking_pll.hpp"
#include "test_support.hpp"

namespace {

using dqfx::q15;
using dqfx::q31;
using dqfx_test::base_speed;  // 1000 Hz electrical
using dqfx_test::name;
using dqfx_test::ts;          // 20 kHz
using dqfx_test::two_pi;

/// The rotor: electrical angle (rad) at sample k, turning at `speed` per unit.
struct rotor {
  double speed = 0.2;
  double start = 0.7;
  double theta(int k) const { return start + speed * base_speed * ts * k; }
};

/// Any angle source, through its shared interface only: `read(source, k)` gives it the
/// sample-k reading of the rotor. Returns the largest angle error (degrees) and speed
/// error (per unit) after `settle` samples.
template <class Source, class Read>
void track(Source& source, Read read, const rotor& r, double angle_bound, double speed_bound) {
  static_assert(std::is_same_v<decltype(source.electrical_angle()), dqfx::angle>);
  static_assert(std::is_same_v<decltype(source.speed()), typename Source::value_type>);
  static_assert(std::is_same_v<decltype(source.valid()), bool>);
  static_assert(std::is_same_v<decltype(source.fault()), bool>);
  static_assert(std::is_same_v<decltype(source.parameter_fault()), bool>);
  REQUIRE_FALSE(source.parameter_fault());
  double worst_angle = 0, worst_speed = 0;
  for (int k = 0; k < 8000; ++k) {
    read(source, k);
    if (k < 4000) continue;
    CHECK(source.valid());
    const double error = std::remainder(source.electrical_angle().radians() - r.theta(k), two_pi);
    worst_angle = std::fmax(worst_angle, std::fabs(error) * 360 / two_pi);
    worst_speed = std::fmax(worst_speed, std::fabs(dqfx::to_double(source.speed()) - r.speed));
  }
  MESSAGE(name<typename Source::value_type>(), ": angle within ", worst_angle, " deg, speed within ", worst_speed,
          " pu");
  CHECK(worst_angle <= angle_bound);
  CHECK(worst_speed <= speed_bound);
  CHECK_FALSE(source.fault());
  source.clear_faults();
  source.reset();
}

}  // namespace

TEST_CASE_TEMPLATE("estimators: encoder, Hall, PLL and flux observer through one generic routine", T, q15, q31,
                   float, double) {
  const rotor r{};
  SUBCASE("encoder") {
    constexpr std::uint32_t cpt = 4000, pole_pairs = 4;
    dqfx::encoder_parameters p{};
    p.counts_per_turn = cpt;
    p.pole_pairs = pole_pairs;
    p.base_speed = base_speed;
    p.sample_time = ts;
    dqfx::encoder<T> e{p};
    CHECK_FALSE(e.valid());  // no reading yet
    // Count 0 at electrical angle 0 (the offset is 0).
    track(e, [&](auto& s, int k) {
      s.update(static_cast<std::uint32_t>(static_cast<std::int64_t>(std::floor(r.theta(k) / two_pi / pole_pairs * cpt)) & 0xFFFF));
    }, r, 360.0 * pole_pairs / cpt, 2e-3);
    CHECK_FALSE(e.valid());  // reset
  }
  SUBCASE("Hall sensors") {
    dqfx::hall_parameters p{};
    p.table = dqfx::hall_table::evenly({1, 3, 2, 6, 4, 5}, dqfx::angle::from_degrees(-30));
    p.base_speed = base_speed;
    p.sample_time = ts;
    dqfx::hall_sensor<T> h{p};
    CHECK_FALSE(h.valid());
    track(h, [&](auto& s, int k) {
      // Sector n covers [-30 + 60 n, 30 + 60 n) degrees; the states in order 1 3 2 6 4 5.
      constexpr std::uint8_t order[6] = {1, 3, 2, 6, 4, 5};
      const double degrees = std::fmod(r.theta(k) * 360 / two_pi + 30.0, 360.0);
      s.update(order[static_cast<int>(std::floor(degrees / 60.0)) % 6]);
    }, r, 2 * 0.2 * 18, 0.02);  // two samples of travel (18 degrees per sample at 1 pu)
    CHECK_FALSE(h.valid());
  }
  SUBCASE("tracking PLL") {
    dqfx::tracking_pll<T> pll{dqfx::tracking_pll_parameters{two_pi * 100, 1.0, base_speed, ts}};
    track(pll, [&](auto& s, int k) { s.update(dqfx::angle::from_radians(r.theta(k))); }, r, 0.01, 2e-4);
  }
  SUBCASE("flux observer") {
    // Surface magnets, no current: the voltage is the back-EMF d(psi)/dt, per unit.
    dqfx::flux_observer_parameters p{};
    p.resistance = 0.05;
    p.ld = p.lq = 0.2;
    p.flux = 0.8;
    p.convergence_rate = 300;
    p.base_speed = base_speed;
    p.sample_time = ts;
    p.pll_frequency = two_pi * 80;
    p.minimum_speed = 0.05;
    dqfx::flux_observer<T> o{p};
    CHECK_FALSE(o.valid());  // no speed yet
    track(o, [&](auto& s, int k) {
      // The voltage over the past period: the flux's change over it, per unit time.
      const double a = r.theta(k), b = r.theta(k - 1), span = base_speed * ts;
      const dqfx::stationary<T> v{dqfx::from_double<T>(p.flux * (std::cos(a) - std::cos(b)) / span),
                                  dqfx::from_double<T>(p.flux * (std::sin(a) - std::sin(b)) / span)};
      s.update(dqfx::stationary<T>{}, v);
    }, r, 0.5, 2e-3);
    CHECK_FALSE(o.valid());
  }
}
