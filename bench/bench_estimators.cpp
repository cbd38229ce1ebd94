// SPDX-License-Identifier: MIT
// Angle and speed estimators per type beside textbook float/double baselines written here
// (atan2f/sinf/cosf from the C library, float division): the tracking PLL (angle input and
// sine/cosine input), the encoder, the Hall sensors and the flux observer with its PLL.
// Every call gets a different input from a 1024-entry table made beforehand.
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>
#include <cstdint>

#include "dqfx/encoder.hpp"
#include "dqfx/flux_observer.hpp"
#include "dqfx/hall.hpp"
#include "dqfx/tracking_pll.hpp"

namespace {

// Invented drive timing and motor, as in the tests: 20 kHz, speed 1.0 = 1000 Hz electrical.
constexpr double two_pi = 6.283185307179586477;
constexpr double base_speed = two_pi * 1000;
constexpr double ts = 50e-6;
constexpr dqfx::tracking_pll_parameters pll_parameters{two_pi * 80, 1.0, base_speed, ts};

constexpr dqfx::flux_observer_parameters observer_parameters() {
  dqfx::flux_observer_parameters p{};
  p.resistance = 0.0333;
  p.ld = 0.314;
  p.lq = 0.419;
  p.flux = 0.419;
  p.convergence_rate = 300;
  p.base_speed = base_speed;
  p.sample_time = ts;
  p.pll_frequency = two_pi * 80;
  p.pll_damping = 1.0;
  p.minimum_speed = 0.05;
  return p;
}

// A rotor at 0.3 pu with a little jitter: angle, sine/cosine, currents and voltages.
struct sample {
  double theta, i_alpha, i_beta, v_alpha, v_beta;
};
std::array<sample, 1024> samples() {
  std::array<sample, 1024> s{};
  double theta = 0;
  for (std::size_t k = 0; k < s.size(); ++k) {
    theta = std::remainder(theta + 0.3 * base_speed * ts + 1e-3 * std::sin(0.37 * static_cast<double>(k)), two_pi);
    const double i = 0.4, v = 0.3 * 0.419;
    s[k] = {theta, -i * std::sin(theta), i * std::cos(theta), -v * std::sin(theta) + 0.0133 * std::cos(theta),
            v * std::cos(theta) + 0.0133 * std::sin(theta)};
  }
  return s;
}

template <class T> void bench_pll_angle(benchmark::State& state) {
  std::array<dqfx::angle, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) in[k] = dqfx::angle::from_radians(s[k].theta);
  dqfx::tracking_pll<T> pll{pll_parameters};
  std::size_t k = 0;
  for (auto _ : state) {
    dqfx::angle a = in[k++ & 1023];
    benchmark::DoNotOptimize(a);
    pll.update(a);
    benchmark::DoNotOptimize(pll);
  }
}

template <class T> void bench_pll_pair(benchmark::State& state) {
  std::array<dqfx::sincos<T>, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) {
    in[k] = {dqfx::from_double<T>(std::sin(s[k].theta)), dqfx::from_double<T>(std::cos(s[k].theta))};
  }
  dqfx::tracking_pll<T> pll{pll_parameters};
  std::size_t k = 0;
  for (auto _ : state) {
    dqfx::sincos<T> p = in[k++ & 1023];
    benchmark::DoNotOptimize(p);
    pll.update(p);
    benchmark::DoNotOptimize(pll);
  }
}

// Textbook PLL in F: PI loop filter on the wrapped angle error (or on the cross product of
// a sine/cosine pair with sinf/cosf of the estimate), angle in radians wrapped by hand.
template <class F> struct textbook_pll {
  F kp = F(2 * two_pi * 80), ki = F(two_pi * 80 * two_pi * 80), dt = F(ts);
  F theta = 0, integral = 0;
  static F wrap(F a) {
    const F pi = F(3.14159265358979323846);
    if (a >= pi) a -= 2 * pi;
    if (a < -pi) a += 2 * pi;
    return a;
  }
  void update(F measured) { step(wrap(measured - theta)); }
  void update(F s, F c) { step(s * std::cos(theta) - c * std::sin(theta)); }
  void step(F e) {
    integral += ki * dt * e;
    theta = wrap(theta + dt * (integral + kp * e));
  }
};

template <class F> void bench_textbook_pll_angle(benchmark::State& state) {
  std::array<F, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) in[k] = F(s[k].theta);
  textbook_pll<F> pll;
  std::size_t k = 0;
  for (auto _ : state) {
    F a = in[k++ & 1023];
    benchmark::DoNotOptimize(a);
    pll.update(a);
    benchmark::DoNotOptimize(pll);
  }
}

template <class F> void bench_textbook_pll_pair(benchmark::State& state) {
  std::array<std::array<F, 2>, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) in[k] = {F(std::sin(s[k].theta)), F(std::cos(s[k].theta))};
  textbook_pll<F> pll;
  std::size_t k = 0;
  for (auto _ : state) {
    std::array<F, 2> p = in[k++ & 1023];
    benchmark::DoNotOptimize(p);
    pll.update(p[0], p[1]);
    benchmark::DoNotOptimize(pll);
  }
}

// Encoder readings: a 16-bit counter at about 15 counts per sample with capture times.
struct reading {
  std::uint32_t count, edge, now;
};
std::array<reading, 1024> readings() {
  std::array<reading, 1024> r{};
  double position = 123.4;
  for (std::size_t k = 0; k < r.size(); ++k) {
    position += 15.0 + 2.0 * std::sin(0.05 * static_cast<double>(k));
    const auto now = static_cast<std::uint32_t>(k * 5000);
    r[k] = {static_cast<std::uint32_t>(static_cast<std::uint64_t>(position) & 0xFFFFu), now - 37u, now};
  }
  return r;
}

dqfx::encoder_parameters encoder_parameters() {
  dqfx::encoder_parameters p{};
  p.counts_per_turn = 4000;
  p.pole_pairs = 4;
  p.base_speed = base_speed;
  p.sample_time = ts;
  p.tick_frequency = 100e6;
  p.filter_bandwidth = 2000;
  p.max_speed = 2.0;
  return p;
}

template <class T> void bench_encoder(benchmark::State& state) {
  const auto in = readings();
  dqfx::encoder<T> e{encoder_parameters()};
  std::size_t k = 0;
  for (auto _ : state) {
    reading r = in[k++ & 1023];
    benchmark::DoNotOptimize(r);
    e.update(r.count, r.edge, r.now);
    benchmark::DoNotOptimize(e);
  }
}

// Textbook encoder in F: angle from the count modulo counts per turn by fmod, speed from the
// count difference over a 16-sample window by float division, first-order filter.
template <class F> struct textbook_encoder {
  std::uint32_t last = 0;
  std::int64_t total = 0;
  std::array<std::int64_t, 16> history{};
  std::size_t head = 0;
  F angle = 0, speed = 0;
  void update(std::uint32_t count) {
    const auto step = static_cast<std::int16_t>(static_cast<std::uint16_t>(count - last));
    last = count;
    total += step;
    const F mechanical = F(std::fmod(F(total), F(4000))) * F(two_pi / 4000);
    angle = std::fmod(mechanical * F(4), F(two_pi));
    const std::int64_t old = history[head];
    history[head] = total;
    head = (head + 1) & 15;
    const F raw = F(total - old) * F(two_pi * 4) / (F(4000) * F(16 * ts) * F(base_speed));
    speed += F(0.0952) * (raw - speed);
  }
};

template <class F> void bench_textbook_encoder(benchmark::State& state) {
  const auto in = readings();
  textbook_encoder<F> e;
  std::size_t k = 0;
  for (auto _ : state) {
    reading r = in[k++ & 1023];
    benchmark::DoNotOptimize(r);
    e.update(r.count);
    benchmark::DoNotOptimize(e);
  }
}

// Hall states of a rotor at 0.3 pu (one edge every 11 samples), with capture times.
struct hall_reading {
  std::uint8_t state;
  std::uint32_t edge, now;
};
constexpr std::array<std::uint8_t, 6> sequence{1, 3, 2, 6, 4, 5};
std::array<hall_reading, 1024> hall_readings() {
  std::array<hall_reading, 1024> r{};
  std::uint32_t edge = 0;
  std::size_t last = 99;
  for (std::size_t k = 0; k < r.size(); ++k) {
    const std::size_t sector = (k / 11) % 6;
    const auto now = static_cast<std::uint32_t>(k * 500);
    if (sector != last) edge = now - 123u;
    last = sector;
    r[k] = {sequence[sector], edge, now};
  }
  return r;
}

template <class T> void bench_hall(benchmark::State& state) {
  const auto in = hall_readings();
  dqfx::hall_sensor<T> h{{dqfx::hall_table::evenly(sequence, dqfx::angle::from_degrees(-30)), base_speed, ts, 10e6, 0.005}};
  std::size_t k = 0;
  for (auto _ : state) {
    hall_reading r = in[k++ & 1023];
    benchmark::DoNotOptimize(r);
    h.update(r.state, r.edge, r.now);
    benchmark::DoNotOptimize(h);
  }
}

// Textbook Hall interpolation in F: sector angle from a table, speed as 60 degrees over the
// last edge interval (float division), angle = edge + speed * time since, clamped.
template <class F> struct textbook_hall {
  std::array<F, 8> start{0, F(-0.5236), F(1.5708), F(0.5236), F(3.6652), F(-2.618), F(2.618), 0};
  std::uint8_t last = 0;
  std::uint32_t edge = 0;
  F rate = 0, angle = 0;  // rad per tick
  void update(std::uint8_t state, std::uint32_t edge_ticks, std::uint32_t now) {
    if (state != last) {
      const std::uint32_t dt = edge_ticks - edge;
      rate = dt > 0 ? F(1.0471976) / F(dt) : F(0);
      edge = edge_ticks;
      last = state;
    }
    const F travelled = std::fmin(rate * F(now - edge), F(1.0471976));
    angle = start[state & 7] + travelled;
  }
};

template <class F> void bench_textbook_hall(benchmark::State& state) {
  const auto in = hall_readings();
  textbook_hall<F> h;
  std::size_t k = 0;
  for (auto _ : state) {
    hall_reading r = in[k++ & 1023];
    benchmark::DoNotOptimize(r);
    h.update(r.state, r.edge, r.now);
    benchmark::DoNotOptimize(h);
  }
}

template <class T> void bench_observer(benchmark::State& state) {
  struct input {
    dqfx::stationary<T> i, v;
  };
  std::array<input, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) {
    in[k] = {{dqfx::from_double<T>(s[k].i_alpha), dqfx::from_double<T>(s[k].i_beta)},
             {dqfx::from_double<T>(s[k].v_alpha), dqfx::from_double<T>(s[k].v_beta)}};
  }
  dqfx::flux_observer<T> o{observer_parameters()};
  std::size_t k = 0;
  for (auto _ : state) {
    input x = in[k++ & 1023];
    benchmark::DoNotOptimize(x);
    o.update(x.i, x.v);
    benchmark::DoNotOptimize(o);
  }
}

// Textbook flux observer in F (Ortega et al. 2011, Euler), angle by atan2, then the
// textbook PLL.
template <class F> struct textbook_observer {
  F r = F(0.0333), lq = F(0.419), psi2 = F(0.419 * 0.419), h = F(ts * base_speed);
  F gamma_half = F(300 / base_speed / (0.419 * 0.419) / 2);
  F x_alpha = F(0.419), x_beta = 0, i_alpha = 0, i_beta = 0;
  textbook_pll<F> pll;
  void update(F ia, F ib, F va, F vb) {
    const F ea = x_alpha - lq * i_alpha, eb = x_beta - lq * i_beta;
    const F radial = gamma_half * (psi2 - ea * ea - eb * eb);
    x_alpha += h * (va - r * F(0.5) * (ia + i_alpha) + radial * ea);
    x_beta += h * (vb - r * F(0.5) * (ib + i_beta) + radial * eb);
    i_alpha = ia;
    i_beta = ib;
    pll.update(std::atan2(x_beta - lq * ib, x_alpha - lq * ia));
  }
};

template <class F> void bench_textbook_observer(benchmark::State& state) {
  std::array<std::array<F, 4>, 1024> in{};
  const auto s = samples();
  for (std::size_t k = 0; k < in.size(); ++k) {
    in[k] = {F(s[k].i_alpha), F(s[k].i_beta), F(s[k].v_alpha), F(s[k].v_beta)};
  }
  textbook_observer<F> o;
  std::size_t k = 0;
  for (auto _ : state) {
    std::array<F, 4> x = in[k++ & 1023];
    benchmark::DoNotOptimize(x);
    o.update(x[0], x[1], x[2], x[3]);
    benchmark::DoNotOptimize(o);
  }
}

}  // namespace

BENCHMARK_TEMPLATE(bench_pll_angle, dqfx::q15)->Name("tracking_pll_angle/q15");
BENCHMARK_TEMPLATE(bench_pll_angle, dqfx::q31)->Name("tracking_pll_angle/q31");
BENCHMARK_TEMPLATE(bench_pll_angle, float)->Name("tracking_pll_angle/float");
BENCHMARK_TEMPLATE(bench_pll_angle, double)->Name("tracking_pll_angle/double");
BENCHMARK_TEMPLATE(bench_textbook_pll_angle, float)->Name("tracking_pll_angle/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_pll_angle, double)->Name("tracking_pll_angle/textbook_double");
BENCHMARK_TEMPLATE(bench_pll_pair, dqfx::q15)->Name("tracking_pll_sincos/q15");
BENCHMARK_TEMPLATE(bench_pll_pair, dqfx::q31)->Name("tracking_pll_sincos/q31");
BENCHMARK_TEMPLATE(bench_pll_pair, float)->Name("tracking_pll_sincos/float");
BENCHMARK_TEMPLATE(bench_pll_pair, double)->Name("tracking_pll_sincos/double");
BENCHMARK_TEMPLATE(bench_textbook_pll_pair, float)->Name("tracking_pll_sincos/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_pll_pair, double)->Name("tracking_pll_sincos/textbook_double");
BENCHMARK_TEMPLATE(bench_encoder, dqfx::q15)->Name("encoder/q15");
BENCHMARK_TEMPLATE(bench_encoder, dqfx::q31)->Name("encoder/q31");
BENCHMARK_TEMPLATE(bench_encoder, float)->Name("encoder/float");
BENCHMARK_TEMPLATE(bench_encoder, double)->Name("encoder/double");
BENCHMARK_TEMPLATE(bench_textbook_encoder, float)->Name("encoder/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_encoder, double)->Name("encoder/textbook_double");
BENCHMARK_TEMPLATE(bench_hall, dqfx::q15)->Name("hall/q15");
BENCHMARK_TEMPLATE(bench_hall, dqfx::q31)->Name("hall/q31");
BENCHMARK_TEMPLATE(bench_hall, float)->Name("hall/float");
BENCHMARK_TEMPLATE(bench_hall, double)->Name("hall/double");
BENCHMARK_TEMPLATE(bench_textbook_hall, float)->Name("hall/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_hall, double)->Name("hall/textbook_double");
BENCHMARK_TEMPLATE(bench_observer, dqfx::q15)->Name("flux_observer/q15");
BENCHMARK_TEMPLATE(bench_observer, dqfx::q31)->Name("flux_observer/q31");
BENCHMARK_TEMPLATE(bench_observer, float)->Name("flux_observer/float");
BENCHMARK_TEMPLATE(bench_observer, double)->Name("flux_observer/double");
BENCHMARK_TEMPLATE(bench_textbook_observer, float)->Name("flux_observer/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_observer, double)->Name("flux_observer/textbook_double");
