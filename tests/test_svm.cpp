// SPDX-License-Identifier: MIT
// Space-vector modulation against an independent classic modulator (sector from atan2,
// dwell times of the adjacent active vectors, switching states; see
// tests/reference/transforms_reference.hpp), against plain hexagon geometry for
// over-modulation, and against published facts about the schemes. Duties of q15/q31
// are compared in LSB, float/double in absolute terms.

#include <doctest/doctest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <string>
#include <type_traits>
#include <vector>

#include "dqfx/svm.hpp"
#include "reference/transforms_reference.hpp"

using dqfx::q15;
using dqfx::q31;
namespace ref = dqfx_reference;
namespace mod = dqfx::modulation;
namespace over = dqfx::overmodulation;
using ref::real;

namespace {

const real pi = std::acos(-1.0L);

template <class T> real unit() { return static_cast<real>(dqfx::number_traits<T>::lsb); }
template <class T> real value_of(T x) { return static_cast<real>(dqfx::to_double(x)); }
template <class T> std::string name() { return dqfx::number_traits<T>::name; }

/// Documented error of one duty against the exact duty of the given command, in T's
/// units (LSB for q15/q31, absolute for float/double).
template <class T> real duty_bound() {
  if constexpr (std::is_same_v<T, q15>) return 0.5L + 1.0L / 2048;
  if constexpr (std::is_same_v<T, q31>) return 0.75L;
  if constexpr (std::is_same_v<T, float>) return 2.4e-7L;
  return 5e-16L;
}
/// The same with a separate bus voltage b (one division more; q15's 13 guard bits are
/// magnified by 1/b).
template <class T> real bus_duty_bound([[maybe_unused]] real b) {
  if constexpr (std::is_same_v<T, q15>) return 0.5L + 1.0L / 1024 / b;
  if constexpr (std::is_same_v<T, q31>) return 1.25L;
  if constexpr (std::is_same_v<T, float>) return 4.8e-7L;
  return 1e-15L;
}

template <class S> ref::scheme reference_scheme() {
  if constexpr (std::is_same_v<S, mod::sinusoidal>) return ref::scheme::sinusoidal;
  if constexpr (std::is_same_v<S, mod::centred>) return ref::scheme::centred;
  if constexpr (std::is_same_v<S, mod::clamp_low>) return ref::scheme::clamp_low;
  if constexpr (std::is_same_v<S, mod::clamp_high>) return ref::scheme::clamp_high;
  return ref::scheme::clamp_peak;
}

template <class F> void for_each_scheme(F f) {
  f(mod::sinusoidal{});
  f(mod::centred{});
  f(mod::clamp_low{});
  f(mod::clamp_high{});
  f(mod::clamp_peak{});
}

/// Largest command magnitude of a scheme's linear range (relative to the bus).
template <class S> real linear_limit() { return std::is_same_v<S, mod::sinusoidal> ? 0.5L : 1.0L / ref::sqrt3; }

/// The reference duties with the upper rail at full_duty<T>() (1 - LSB for q15/q31)
/// where the scheme ties a phase to it: a common shift, invisible line to line.
template <class T, class S> ref::abc expected_duties(real alpha, real beta) {
  ref::abc d = ref::duties(alpha, beta, reference_scheme<S>());
  const real top = std::fmax(d.a, std::fmax(d.b, d.c));
  const bool clamps_high = (std::is_same_v<S, mod::clamp_high> || std::is_same_v<S, mod::clamp_peak>) &&
                           std::fabs(top - 1) < 1e-12L;
  if (clamps_high) {
    const real shift = value_of(dqfx::full_duty<T>()) - 1;
    d = {d.a + shift, d.b + shift, d.c + shift};
  }
  return d;
}

/// Near the instant clamp_peak moves its clamp from one rail to the other (|v_max| =
/// |v_min|) either choice is right; comparisons skip a small band there.
bool near_peak_switch(real alpha, real beta) {
  const ref::abc v = ref::inverse_clarke_amplitude(alpha, beta);
  const real hi = std::fmax(v.a, std::fmax(v.b, v.c)), lo = std::fmin(v.a, std::fmin(v.b, v.c));
  return std::fabs(hi + lo) < 1e-5L;
}

template <class T> dqfx::stationary<T> polar(real magnitude, real angle) {
  return {dqfx::from_double<T>(static_cast<double>(magnitude * std::cos(angle))),
          dqfx::from_double<T>(static_cast<double>(magnitude * std::sin(angle)))};
}

/// The size of one unit of the bounds: an LSB for q15/q31, 1 for float/double.
template <class T> real bound_unit() { return dqfx::is_fixed_v<T> ? unit<T>() : 1.0L; }

template <class T> real duty_error(T got, real exact) { return std::fabs(value_of(got) - exact) / bound_unit<T>(); }

struct worst_case {
  real error = 0;
  void add(real e) { error = (e > error || e != e) ? e : error; }
};

template <class T> bool is_full(T d) { return d == dqfx::full_duty<T>(); }
template <class T> bool is_zero(T d) { return d == T{}; }

}  // namespace

// ---- Linear range: the independent classic modulator and the line-to-line voltages ----

TEST_CASE_TEMPLATE("Duties equal the classic sector and dwell-time modulator in the linear range", T, q15, q31, float, double) {
  std::mt19937_64 rng{3};
  std::uniform_real_distribution<double> turn{0.0, 2 * 3.14159265358979323846}, fraction{0.0, 0.995};
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    worst_case worst;
    for (int i = 0; i < 200000; ++i) {
      const dqfx::stationary<T> v = polar<T>(linear_limit<S>() * fraction(rng), turn(rng));
      const real alpha = value_of(v.alpha), beta = value_of(v.beta);
      if (std::is_same_v<S, mod::clamp_peak> && near_peak_switch(alpha, beta)) continue;
      const auto m = dqfx::svm<S>(v);
      REQUIRE_FALSE(m.fault);
      REQUIRE_FALSE(m.limited);
      const ref::abc e = expected_duties<T, S>(alpha, beta);
      worst.add(duty_error(m.duty.a, e.a));
      worst.add(duty_error(m.duty.b, e.b));
      worst.add(duty_error(m.duty.c, e.c));
    }
    CAPTURE(static_cast<int>(reference_scheme<S>()));
    CHECK(worst.error <= duty_bound<T>());
    MESSAGE(name<T>() << " scheme " << static_cast<int>(reference_scheme<S>()) << ": max duty error "
                      << static_cast<double>(worst.error));
  });
}

// A motor with an isolated star point sees only line-to-line voltages: for every scheme
// they must equal v_ab = 3/2 alpha - sqrt3/2 beta, v_bc = sqrt3 beta, v_ca = -3/2 alpha -
// sqrt3/2 beta (relative to the bus), within two duty roundings.
TEST_CASE_TEMPLATE("Line-to-line voltages reproduce the command in the linear range", T, q15, q31, float, double) {
  std::mt19937_64 rng{5};
  std::uniform_real_distribution<double> turn{0.0, 2 * 3.14159265358979323846}, fraction{0.0, 0.999};
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    worst_case worst;
    for (int i = 0; i < 200000; ++i) {
      const dqfx::stationary<T> v = polar<T>(linear_limit<S>() * fraction(rng), turn(rng));
      const ref::abc ph = ref::inverse_clarke_amplitude(value_of(v.alpha), value_of(v.beta));
      const auto m = dqfx::svm<S>(v);
      const real da = value_of(m.duty.a), db = value_of(m.duty.b), dc = value_of(m.duty.c);
      worst.add(std::fabs((da - db) - (ph.a - ph.b)) / bound_unit<T>());
      worst.add(std::fabs((db - dc) - (ph.b - ph.c)) / bound_unit<T>());
      worst.add(std::fabs((dc - da) - (ph.c - ph.a)) / bound_unit<T>());
    }
    CHECK(worst.error <= 2 * duty_bound<T>());
  });
}

// J. Holtz, "Pulsewidth modulation for electronic power conversion", Proc. IEEE 82(8),
// 1994: the linear range of space-vector modulation reaches |v| = V_dc/sqrt3, 2/sqrt3
// times that of sinusoidal modulation (V_dc/2), i.e. a modulation index of
// pi/(2*sqrt3) = 0.9069 relative to six-step operation (fundamental 2/pi V_dc).
TEST_CASE_TEMPLATE("The linear range of centred SVM is 2/sqrt(3) times that of sinusoidal PWM", T, q15, q31, float, double) {
  auto largest_linear = [](auto tag) {
    using S = decltype(tag);
    real inside = 0.3L, outside = 0.8L;
    for (int step = 0; step < 40; ++step) {
      const real m = (inside + outside) / 2;
      bool limited = false;
      for (int k = 0; k < 3600 && !limited; ++k) limited = dqfx::svm<S>(polar<T>(m, k * pi / 1800)).limited;
      (limited ? outside : inside) = m;
    }
    return inside;
  };
  const real sinusoidal = largest_linear(mod::sinusoidal{});
  const real centred = largest_linear(mod::centred{});
  const real tolerance = dqfx::is_fixed_v<T> ? 4 * unit<T>() : 1e-6L;
  CHECK(std::fabs(sinusoidal - 0.5L) <= tolerance);
  CHECK(std::fabs(centred - 1 / ref::sqrt3) <= tolerance);
  CHECK(std::fabs(centred / sinusoidal - 2 / ref::sqrt3) <= 4 * tolerance);
  const real six_step_fundamental = 2 / pi;
  CHECK(std::fabs(centred / six_step_fundamental - 0.9069L) <= 1e-4L + 4 * tolerance);
  // The discontinuous schemes share the centred linear range.
  CHECK(std::fabs(largest_linear(mod::clamp_low{}) - centred) <= tolerance);
  CHECK(std::fabs(largest_linear(mod::clamp_peak{}) - centred) <= tolerance);
}

// A. M. Hava, R. J. Kerkman and T. A. Lipo, "Simple analytical and graphical methods for
// carrier-based PWM-VSI drives", IEEE Trans. Power Electronics 14(1), 1999 (details
// recalled from memory): the discontinuous schemes tie one phase at a time to a rail,
// over 60-degree segments, each phase for 120 degrees of the turn, and keep the
// line-to-line voltages of continuous modulation. DPWMMIN ties the lowest phase low,
// DPWMMAX the highest high, DPWM1 the phase of largest magnitude to its own rail, centred
// on its peaks.
TEST_CASE_TEMPLATE("Discontinuous schemes clamp exactly one phase at a time in 60-degree segments", T, q15, q31, float, double) {
  constexpr int steps = 3600;  // 0.1 degree, sampled mid-step to stay off segment boundaries
  auto check_scheme = [](auto tag) {
    using S = decltype(tag);
    int clamped_steps[3][2] = {};  // [phase][rail: 0 low, 1 high]
    std::vector<int> state(steps);
    real worst_line = 0;
    for (int k = 0; k < steps; ++k) {
      const real t = (k + 0.5L) * 2 * pi / steps;
      const dqfx::stationary<T> v = polar<T>(0.5L, t);
      const auto m = dqfx::svm<S>(v);
      const T d[3] = {m.duty.a, m.duty.b, m.duty.c};
      int count = 0, which = -1, rail = -1;
      for (int p = 0; p < 3; ++p) {
        if (is_zero(d[p])) { ++count; which = p; rail = 0; }
        if (is_full(d[p])) { ++count; which = p; rail = 1; }
      }
      REQUIRE(count == 1);
      ++clamped_steps[which][rail];
      // The expected phase and rail from the phase references cos(t - 120 deg * p).
      real ref_v[3];
      for (int p = 0; p < 3; ++p) ref_v[p] = std::cos(t - p * 2 * pi / 3);
      int lo = 0, hi = 0, big = 0;
      for (int p = 1; p < 3; ++p) {
        lo = ref_v[p] < ref_v[lo] ? p : lo;
        hi = ref_v[p] > ref_v[hi] ? p : hi;
        big = std::fabs(ref_v[p]) > std::fabs(ref_v[big]) ? p : big;
      }
      if constexpr (std::is_same_v<S, mod::clamp_low>) CHECK((which == lo && rail == 0));
      if constexpr (std::is_same_v<S, mod::clamp_high>) CHECK((which == hi && rail == 1));
      if constexpr (std::is_same_v<S, mod::clamp_peak>) CHECK((which == big && rail == (ref_v[big] > 0 ? 1 : 0)));
      state[static_cast<std::size_t>(k)] = which * 2 + rail;
      // Same line-to-line voltages as the centred scheme.
      const auto c = dqfx::svm<mod::centred>(v);
      worst_line = std::fmax(worst_line, std::fabs((value_of(m.duty.a) - value_of(m.duty.b)) -
                                                   (value_of(c.duty.a) - value_of(c.duty.b))) / bound_unit<T>());
      worst_line = std::fmax(worst_line, std::fabs((value_of(m.duty.b) - value_of(m.duty.c)) -
                                                   (value_of(c.duty.b) - value_of(c.duty.c))) / bound_unit<T>());
    }
    // Segments of constant clamping, counted around the circle.
    int changes = 0, run = 0, shortest_run = steps, first_change = -1;
    for (int k = 0; k < steps; ++k)
      if (state[static_cast<std::size_t>(k)] != state[static_cast<std::size_t>((k + steps - 1) % steps)]) {
        ++changes;
        if (first_change < 0) first_change = k;
      }
    for (int j = 1; j <= steps; ++j) {
      const int k = (first_change + j) % steps;
      ++run;
      if (state[static_cast<std::size_t>(k)] != state[static_cast<std::size_t>((k + steps - 1) % steps)]) {
        shortest_run = run < shortest_run ? run : shortest_run;
        run = 0;
      }
    }
    // Each phase clamped for 120 degrees in total.
    for (int p = 0; p < 3; ++p) CHECK(clamped_steps[p][0] + clamped_steps[p][1] == steps / 3);
    if constexpr (std::is_same_v<S, mod::clamp_peak>) {
      // Two 60-degree segments per phase, one per rail: six changes per turn.
      for (int p = 0; p < 3; ++p) CHECK((clamped_steps[p][0] == steps / 6 && clamped_steps[p][1] == steps / 6));
      CHECK(changes == 6);
      CHECK(shortest_run == steps / 6);
    } else {
      // One 120-degree segment (two 60-degree sectors) per phase: three changes per turn.
      CHECK(changes == 3);
      CHECK(shortest_run == steps / 3);
    }
    CHECK(worst_line <= 4 * duty_bound<T>());
  };
  check_scheme(mod::clamp_low{});
  check_scheme(mod::clamp_high{});
  check_scheme(mod::clamp_peak{});
}

// ---- Over-modulation ----

TEST_CASE_TEMPLATE("Over-modulation keeps the angle or takes the nearest point of the boundary", T, q15, q31, float, double) {
  std::mt19937_64 rng{11};
  std::uniform_real_distribution<double> turn{0.0, 2 * 3.14159265358979323846}, beyond{1.01, 1.7};
  const real tolerance = dqfx::is_fixed_v<T> ? 4 * unit<T>() : (std::is_same_v<T, float> ? 1e-6L : 1e-14L);
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    const ref::hexagon hex = std::is_same_v<S, mod::sinusoidal> ? ref::sinusoidal_hexagon() : ref::space_vector_hexagon();
    real worst_angle = 0, worst_reach = 0, worst_nearest = 0;
    for (int i = 0; i < 20000; ++i) {
      const real t = turn(rng);
      const dqfx::stationary<T> v = polar<T>(hex.reach(t) * beyond(rng), t);
      const real alpha = value_of(v.alpha), beta = value_of(v.beta);
      const auto kept = dqfx::svm<S, over::keep_angle>(v);
      REQUIRE(kept.limited);
      const ref::ab applied = ref::vector_of_duties(value_of(kept.duty.a), value_of(kept.duty.b), value_of(kept.duty.c));
      real angle_error = std::fabs(ref::angle_of(applied.alpha, applied.beta) - ref::angle_of(alpha, beta));
      angle_error = std::fmin(angle_error, 2 * pi - angle_error);
      worst_angle = std::fmax(worst_angle, angle_error);
      const real t_applied = ref::angle_of(applied.alpha, applied.beta);
      worst_reach = std::fmax(worst_reach, std::fabs(std::hypot(applied.alpha, applied.beta) - hex.reach(t_applied)));
      const auto nearest = dqfx::svm<S, over::minimum_distance>(v);
      REQUIRE(nearest.limited);
      const ref::ab near = ref::vector_of_duties(value_of(nearest.duty.a), value_of(nearest.duty.b), value_of(nearest.duty.c));
      const ref::ab expected = hex.nearest(alpha, beta);
      worst_nearest = std::fmax(worst_nearest, std::hypot(near.alpha - expected.alpha, near.beta - expected.beta));
    }
    CAPTURE(static_cast<int>(reference_scheme<S>()));
    CHECK(worst_angle <= 8 * tolerance);
    CHECK(worst_reach <= tolerance);
    CHECK(worst_nearest <= tolerance);
  });
}

TEST_CASE_TEMPLATE("Minimum-distance over-modulation is the centred duties clamped to [0, 1]", T, float, double) {
  // The hexagon face nearest a command lies where its highest and lowest phase are one
  // bus voltage apart: clamping the centred duties to the rails is the projection.
  std::mt19937_64 rng{13};
  std::uniform_real_distribution<double> any{-1.2, 1.2};
  for (int i = 0; i < 20000; ++i) {
    const dqfx::stationary<T> v{static_cast<T>(any(rng)), static_cast<T>(any(rng))};
    const ref::abc ph = ref::inverse_clarke_amplitude(v.alpha, v.beta);
    const real middle = (std::fmax(ph.a, std::fmax(ph.b, ph.c)) + std::fmin(ph.a, std::fmin(ph.b, ph.c))) / 2;
    auto clamp01 = [](real x) { return x < 0 ? 0 : (x > 1 ? 1 : x); };
    const auto m = dqfx::svm<mod::centred, over::minimum_distance>(v);
    CHECK(std::fabs(value_of(m.duty.a) - clamp01(0.5L + ph.a - middle)) <= 2 * duty_bound<T>());
    CHECK(std::fabs(value_of(m.duty.b) - clamp01(0.5L + ph.b - middle)) <= 2 * duty_bound<T>());
    CHECK(std::fabs(value_of(m.duty.c) - clamp01(0.5L + ph.c - middle)) <= 2 * duty_bound<T>());
  }
}

// ---- Bus voltage, sectors, ranges, bad input ----

TEST_CASE_TEMPLATE("With a separate bus voltage the duties are those of the command over the bus", T, q15, q31, float, double) {
  std::mt19937_64 rng{17};
  std::uniform_real_distribution<double> turn{0.0, 2 * 3.14159265358979323846}, fraction{0.0, 0.995}, bus{0.05, 0.999};
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    worst_case worst, excess;
    for (int i = 0; i < 100000; ++i) {
      const T vbus = dqfx::from_double<T>(bus(rng));
      const real b = value_of(vbus);
      const dqfx::stationary<T> v = polar<T>(b * linear_limit<S>() * fraction(rng), turn(rng));
      const real alpha = value_of(v.alpha) / b, beta = value_of(v.beta) / b;
      if (std::is_same_v<S, mod::clamp_peak> && near_peak_switch(alpha, beta)) continue;
      const auto m = dqfx::svm<S>(v, vbus);
      REQUIRE_FALSE(m.fault);
      REQUIRE_FALSE(m.limited);
      const ref::abc e = expected_duties<T, S>(alpha, beta);
      for (const real err : {duty_error(m.duty.a, e.a), duty_error(m.duty.b, e.b), duty_error(m.duty.c, e.c)}) {
        worst.add(err);
        excess.add(err - bus_duty_bound<T>(b) > 0 ? err - bus_duty_bound<T>(b) : 0);
      }
    }
    CHECK(excess.error == 0);
    MESSAGE(name<T>() << " scheme " << static_cast<int>(reference_scheme<S>()) << " with bus: max duty error "
                      << static_cast<double>(worst.error));
  });
}

TEST_CASE_TEMPLATE("Sectors are the six 60-degree sectors of the command angle", T, q15, q31, float, double) {
  for (int k = 0; k < 3600; ++k) {
    const real t = (k + 0.5L) * pi / 1800;
    const dqfx::stationary<T> v = polar<T>(0.4L, t);
    CHECK(dqfx::svm(v).sector == ref::sector_of(value_of(v.alpha), value_of(v.beta)));
  }
  // Exact boundaries at beta = 0 belong to the sector that starts there; zero is sector 1.
  const T half = dqfx::from_double<T>(0.5);
  CHECK(dqfx::svm(dqfx::stationary<T>{half, T{}}).sector == 1);
  CHECK(dqfx::svm(dqfx::stationary<T>{-half, T{}}).sector == 4);
  CHECK(dqfx::svm(dqfx::stationary<T>{}).sector == 1);
}

TEST_CASE_TEMPLATE("Duties stay in [0, 1] for every command, scheme, policy and bus", T, q15, q31, float, double) {
  std::mt19937_64 rng{19};
  std::uniform_real_distribution<double> any{-1.0, 1.0}, bus{1e-6, 1.0};
  auto in_range = [](const dqfx::modulation_result<T>& m) {
    const T full = dqfx::full_duty<T>();
    for (const T d : {m.duty.a, m.duty.b, m.duty.c})
      if (!(d >= T{} && d <= full)) return false;
    return m.sector >= 1 && m.sector <= 6 && !m.fault;
  };
  const T extremes[] = {dqfx::from_double<T>(-1.0), dqfx::full_duty<T>(), T{}, dqfx::from_double<T>(-0.5)};
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    for (int i = 0; i < 20000; ++i) {
      const dqfx::stationary<T> v{dqfx::from_double<T>(any(rng)), dqfx::from_double<T>(any(rng))};
      const T b = dqfx::from_double<T>(bus(rng));
      CHECK(in_range(dqfx::svm<S, over::keep_angle>(v)));
      CHECK(in_range(dqfx::svm<S, over::minimum_distance>(v)));
      if (b > T{}) {
        CHECK(in_range(dqfx::svm<S, over::keep_angle>(v, b)));
        CHECK(in_range(dqfx::svm<S, over::minimum_distance>(v, b)));
      }
    }
    for (const T a : extremes)
      for (const T b : extremes) {
        CHECK(in_range(dqfx::svm<S, over::keep_angle>(dqfx::stationary<T>{a, b})));
        CHECK(in_range(dqfx::svm<S, over::minimum_distance>(dqfx::stationary<T>{a, b})));
        const T tiny = dqfx::is_fixed_v<T> ? dqfx::from_double<T>(dqfx::number_traits<T>::lsb) : std::numeric_limits<T>::min();
        CHECK(in_range(dqfx::svm<S, over::keep_angle>(dqfx::stationary<T>{a, b}, tiny)));
        CHECK(in_range(dqfx::svm<S, over::minimum_distance>(dqfx::stationary<T>{a, b}, tiny)));
      }
  });
}

TEST_CASE_TEMPLATE("A zero or negative bus voltage gives 50 % duties and a fault", T, q15, q31, float, double) {
  const T half = dqfx::from_double<T>(0.5);
  const dqfx::stationary<T> v{dqfx::from_double<T>(0.3), dqfx::from_double<T>(-0.2)};
  for (const T bus : {T{}, dqfx::from_double<T>(-0.5), dqfx::number_traits<T>::lowest()}) {
    for_each_scheme([&](auto tag) {
      using S = decltype(tag);
      const auto m = dqfx::svm<S>(v, bus);
      CHECK(m.fault);
      CHECK(m.sector == 0);
      CHECK_FALSE(m.limited);
      CHECK((m.duty.a == half && m.duty.b == half && m.duty.c == half));
    });
  }
}

TEST_CASE_TEMPLATE("NaN or infinite float commands and bus voltages give 50 % duties and a fault", T, float, double) {
  const T nan = std::numeric_limits<T>::quiet_NaN(), inf = std::numeric_limits<T>::infinity();
  const T big = std::numeric_limits<T>::max();
  const T ok = static_cast<T>(0.25);
  const dqfx::stationary<T> bad_commands[] = {{nan, ok}, {ok, nan}, {inf, ok}, {ok, -inf}, {nan, nan}, {big, big}, {-big, big}};
  for_each_scheme([&](auto tag) {
    using S = decltype(tag);
    auto faulted = [](const dqfx::modulation_result<T>& m) {
      return m.fault && m.sector == 0 && m.duty.a == static_cast<T>(0.5) && m.duty.b == static_cast<T>(0.5) && m.duty.c == static_cast<T>(0.5);
    };
    for (const auto& v : bad_commands) {
      CHECK(faulted(dqfx::svm<S>(v)));
      CHECK(faulted(dqfx::svm<S, over::minimum_distance>(v)));
      CHECK(faulted(dqfx::svm<S>(v, static_cast<T>(0.8))));
    }
    for (const T bus : {nan, inf, -inf, T{0}, T{-0.0}}) CHECK(faulted(dqfx::svm<S>(dqfx::stationary<T>{ok, ok}, bus)));
  });
}

TEST_CASE("Modulation is a constant expression") {
  constexpr auto m = dqfx::svm(dqfx::stationary<q15>{});
  static_assert(m.duty.a.raw() == 16384 && m.duty.b.raw() == 16384 && !m.limited && !m.fault);
  constexpr auto h = dqfx::svm<mod::clamp_high>(dqfx::stationary<double>{0.25, 0.0});
  static_assert(h.duty.a == 1.0 && h.sector == 1);
  CHECK(m.sector == 1);
}

TEST_CASE("The high word of a 32x32 product is the same in both forms") {
  // What every core must produce: floor(a * b / 2^32) in 64 bits.
  const std::uint32_t corners[] = {0u, 1u, 0xFFFFu, 0x10000u, 0x7FFFFFFFu, 0x80000000u, 0xFFFF0000u, 0xFFFFFFFFu};
  for (std::uint32_t a : corners) {
    for (std::uint32_t b : corners) {
      const auto exact = static_cast<std::uint32_t>((std::uint64_t{a} * b) >> 32);
      CHECK(dqfx::detail::multiply_high_wide(a, b) == exact);
      CHECK(dqfx::detail::multiply_high_narrow(a, b) == exact);
    }
  }
  std::mt19937_64 rng{29};
  for (int k = 0; k < 1000000; ++k) {
    const auto a = static_cast<std::uint32_t>(rng()), b = static_cast<std::uint32_t>(rng());
    REQUIRE(dqfx::detail::multiply_high_narrow(a, b) == static_cast<std::uint32_t>((std::uint64_t{a} * b) >> 32));
  }
}
