// SPDX-License-Identifier: MIT
// Clarke, inverse Clarke, Park and inverse Park per type, each beside the textbook float
// and double formulas (Park at an angle with std::sin/std::cos). Every benchmark walks the
// same 1024 varied inputs; counters x_float and x_double give the time relative to the
// textbook version in that type (below 1 is faster).
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>
#include <random>
#include <string>

#include "baseline_ratio.hpp"
#include "dqfx/sincos.hpp"
#include "dqfx/transforms.hpp"

namespace {

struct sample {
  double a, b, c, s, k, theta;
};

std::array<sample, 1024> samples() {
  std::array<sample, 1024> out{};
  std::mt19937 rng{1};
  std::uniform_real_distribution<double> any{-0.9, 0.9}, turn{0.0, 6.283185307179586};
  for (auto& x : out) {
    x.theta = turn(rng);
    x = {any(rng), any(rng), any(rng), std::sin(x.theta), std::cos(x.theta), x.theta};
  }
  return out;
}

template <class T> struct prepared {
  dqfx::phases<T> abc;
  dqfx::sincos<T> sc;
  dqfx::angle theta;
};

template <class T> std::array<prepared<T>, 1024> prepare() {
  std::array<prepared<T>, 1024> out{};
  const auto s = samples();
  for (std::size_t i = 0; i < out.size(); ++i)
    out[i] = {{dqfx::from_double<T>(s[i].a), dqfx::from_double<T>(s[i].b), dqfx::from_double<T>(s[i].c)},
              {dqfx::from_double<T>(s[i].s), dqfx::from_double<T>(s[i].k)},
              dqfx::angle::from_radians(s[i].theta)};
  return out;
}

// ---- Textbook formulas (float or double) ----

template <class F> struct textbook {
  static constexpr F inv_sqrt3 = F(0.57735026918962576451);
  static constexpr F half_sqrt3 = F(0.86602540378443864676);
  static void clarke(F a, F b, F c, F& alpha, F& beta) {
    alpha = F(2) / F(3) * (a - F(0.5) * (b + c));
    beta = (b - c) * inv_sqrt3;
  }
  static void clarke2(F a, F b, F& alpha, F& beta) {
    alpha = a;
    beta = (a + F(2) * b) * inv_sqrt3;
  }
  static void inverse_clarke(F alpha, F beta, F& a, F& b, F& c) {
    a = alpha;
    b = F(-0.5) * alpha + half_sqrt3 * beta;
    c = F(-0.5) * alpha - half_sqrt3 * beta;
  }
  static void park(F alpha, F beta, F s, F k, F& d, F& q) {
    d = alpha * k + beta * s;
    q = beta * k - alpha * s;
  }
  static void inverse_park(F d, F q, F s, F k, F& alpha, F& beta) {
    alpha = d * k - q * s;
    beta = d * s + q * k;
  }
};

enum class kernel { clarke, clarke2, inverse_clarke, park, inverse_park, park_at_angle };

const char* family(kernel k) {
  switch (k) {
    case kernel::clarke: return "clarke/";
    case kernel::clarke2: return "clarke_two_phase/";
    case kernel::inverse_clarke: return "inverse_clarke/";
    case kernel::park: return "park/";
    case kernel::inverse_park: return "inverse_park/";
    default: return "park_at_angle/";
  }
}

template <class F, kernel K> void bench_textbook(benchmark::State& state) {
  const auto s = samples();
  std::array<std::array<F, 6>, 1024> in{};
  for (std::size_t i = 0; i < in.size(); ++i)
    in[i] = {F(s[i].a), F(s[i].b), F(s[i].c), F(s[i].s), F(s[i].k), F(s[i].theta)};
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & 1023];
    F o[3]{};
    if constexpr (K == kernel::clarke) textbook<F>::clarke(x[0], x[1], x[2], o[0], o[1]);
    if constexpr (K == kernel::clarke2) textbook<F>::clarke2(x[0], x[1], o[0], o[1]);
    if constexpr (K == kernel::inverse_clarke) textbook<F>::inverse_clarke(x[0], x[1], o[0], o[1], o[2]);
    if constexpr (K == kernel::park) textbook<F>::park(x[0], x[1], x[3], x[4], o[0], o[1]);
    if constexpr (K == kernel::inverse_park) textbook<F>::inverse_park(x[0], x[1], x[3], x[4], o[0], o[1]);
    if constexpr (K == kernel::park_at_angle) textbook<F>::park(x[0], x[1], std::sin(x[5]), std::cos(x[5]), o[0], o[1]);
    benchmark::DoNotOptimize(o);
  }
  dqfx_bench::record_baseline(std::string{family(K)} + (sizeof(F) == 4 ? "float" : "double"), timer.ns_per_call(state));
}

template <class T, kernel K> void bench_dqfx(benchmark::State& state) {
  const auto in = prepare<T>();
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & 1023];
    benchmark::DoNotOptimize(x);
    if constexpr (K == kernel::clarke) benchmark::DoNotOptimize(dqfx::clarke(x.abc));
    if constexpr (K == kernel::clarke2) benchmark::DoNotOptimize(dqfx::clarke(x.abc.a, x.abc.b));
    if constexpr (K == kernel::inverse_clarke)
      benchmark::DoNotOptimize(dqfx::inverse_clarke(dqfx::stationary<T>{x.abc.a, x.abc.b}));
    if constexpr (K == kernel::park) benchmark::DoNotOptimize(dqfx::park(dqfx::stationary<T>{x.abc.a, x.abc.b}, x.sc));
    if constexpr (K == kernel::inverse_park)
      benchmark::DoNotOptimize(dqfx::inverse_park(dqfx::rotating<T>{x.abc.a, x.abc.b}, x.sc));
    if constexpr (K == kernel::park_at_angle)
      benchmark::DoNotOptimize(dqfx::park(dqfx::stationary<T>{x.abc.a, x.abc.b}, dqfx::sincos_of<T>(x.theta)));
  }
  dqfx_bench::report_ratios(state, family(K), timer.ns_per_call(state));
}

template <kernel K> void register_kernel() {
  dqfx_bench::register_family(
      family(K), [](auto tag) { return &bench_textbook<decltype(tag), K>; },
      [](auto tag) { return &bench_dqfx<decltype(tag), K>; });
}

[[maybe_unused]] const bool registered = [] {
  register_kernel<kernel::clarke>();
  register_kernel<kernel::clarke2>();
  register_kernel<kernel::inverse_clarke>();
  register_kernel<kernel::park>();
  register_kernel<kernel::inverse_park>();
  register_kernel<kernel::park_at_angle>();
  return true;
}();

}  // namespace
