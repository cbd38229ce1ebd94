// SPDX-License-Identifier: MIT
// The numeric core per type beside textbook float and double code: sine and cosine
// (std::sin + std::cos), atan2 (std::atan2), length (std::sqrt of the sum of squares),
// the number layer's products and the angle step. Counters x_float and x_double give the
// time relative to the textbook version in that type (below 1 is faster).
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <random>
#include <string>

#include "baseline_ratio.hpp"
#include "dqfx/angle.hpp"
#include "dqfx/polar.hpp"
#include "dqfx/sincos.hpp"

namespace {

constexpr std::size_t count = 1024;

struct sample {
  std::uint32_t angle;
  double x, y;
};

std::array<sample, count> samples() {
  std::array<sample, count> out{};
  std::mt19937 rng{3};
  std::uniform_real_distribution<double> any{-0.95, 0.95};
  for (auto& s : out) s = {static_cast<std::uint32_t>(rng()), any(rng), any(rng)};
  return out;
}

enum class kernel { sincos, angle_of, magnitude, multiply, gain, sum_of_products, advance };

const char* family(kernel k) {
  switch (k) {
    case kernel::sincos: return "sincos/";
    case kernel::angle_of: return "angle_of/";
    case kernel::magnitude: return "magnitude/";
    case kernel::multiply: return "multiply/";
    case kernel::gain: return "gain/";
    case kernel::sum_of_products: return "sum_of_products/";
    default: return "angle_advance/";
  }
}

constexpr double two_over_sqrt3 = 1.1547005383792515290;
constexpr double base_speed = 2 * 3.14159265358979323846 * 800;  // invented: 800 Hz electrical
constexpr double sample_time = 50e-6;

template <class F, kernel K> void bench_textbook(benchmark::State& state) {
  const auto s = samples();
  std::array<std::array<F, 3>, count> in{};
  for (std::size_t i = 0; i < count; ++i)
    in[i] = {F(s[i].angle * (2 * 3.14159265358979323846 / 4294967296.0)), F(s[i].x), F(s[i].y)};
  double phase = 0;  // textbook angle integration in double radians, wrapped by fmod
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & (count - 1)];
    if constexpr (K == kernel::sincos) {
      F o[2] = {std::sin(x[0]), std::cos(x[0])};
      benchmark::DoNotOptimize(o);
    }
    if constexpr (K == kernel::angle_of) benchmark::DoNotOptimize(std::atan2(x[2], x[1]));
    if constexpr (K == kernel::magnitude) benchmark::DoNotOptimize(std::sqrt(x[1] * x[1] + x[2] * x[2]));
    if constexpr (K == kernel::multiply) benchmark::DoNotOptimize(x[1] * x[2]);
    if constexpr (K == kernel::gain) benchmark::DoNotOptimize(x[1] * F(two_over_sqrt3));
    if constexpr (K == kernel::sum_of_products) benchmark::DoNotOptimize(x[1] * x[2] + x[0] * x[2]);
    if constexpr (K == kernel::advance) {
      phase = std::fmod(phase + static_cast<double>(x[1]) * base_speed * sample_time, 2 * 3.14159265358979323846);
      benchmark::DoNotOptimize(phase);
    }
  }
  dqfx_bench::record_baseline(std::string{family(K)} + (sizeof(F) == 4 ? "float" : "double"), timer.ns_per_call(state));
}

template <class T, kernel K> void bench_dqfx(benchmark::State& state) {
  const auto s = samples();
  struct prepared {
    dqfx::angle a;
    T x, y;
  };
  std::array<prepared, count> in{};
  for (std::size_t i = 0; i < count; ++i)
    in[i] = {dqfx::angle::from_raw(s[i].angle), dqfx::from_double<T>(s[i].x), dqfx::from_double<T>(s[i].y)};
  constexpr auto k = dqfx::gain<T>::from_double(two_over_sqrt3);
  constexpr auto rate = dqfx::angle_rate<T>::from_base(base_speed, sample_time);
  dqfx::angle phase{};
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & (count - 1)];
    benchmark::DoNotOptimize(x);
    if constexpr (K == kernel::sincos) benchmark::DoNotOptimize(dqfx::sincos_of<T>(x.a));
    if constexpr (K == kernel::angle_of) benchmark::DoNotOptimize(dqfx::angle_of(dqfx::stationary<T>{x.x, x.y}));
    if constexpr (K == kernel::magnitude) benchmark::DoNotOptimize(dqfx::magnitude(dqfx::stationary<T>{x.x, x.y}));
    if constexpr (K == kernel::multiply) benchmark::DoNotOptimize(x.x * x.y);
    if constexpr (K == kernel::gain) benchmark::DoNotOptimize(x.x * k);
    if constexpr (K == kernel::sum_of_products) benchmark::DoNotOptimize(dqfx::sum_of_products(x.x, x.y, x.x, x.y));
    if constexpr (K == kernel::advance) {
      phase = rate.advance(phase, x.x);
      benchmark::DoNotOptimize(phase);
    }
  }
  dqfx_bench::report_ratios(state, family(K), timer.ns_per_call(state));
}

template <kernel K> void register_kernel() {
  dqfx_bench::register_family(
      family(K), [](auto tag) { return &bench_textbook<decltype(tag), K>; },
      [](auto tag) { return &bench_dqfx<decltype(tag), K>; });
}

[[maybe_unused]] const bool registered = [] {
  register_kernel<kernel::sincos>();
  register_kernel<kernel::angle_of>();
  register_kernel<kernel::magnitude>();
  register_kernel<kernel::multiply>();
  register_kernel<kernel::gain>();
  register_kernel<kernel::sum_of_products>();
  register_kernel<kernel::advance>();
  return true;
}();

}  // namespace
