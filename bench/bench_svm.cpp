// SPDX-License-Identifier: MIT
// Space-vector modulation per type and scheme, beside a textbook sector-based modulator
// in float and double (sector from the signs of three projections, dwell times of the
// two adjacent active vectors, switching states; over-modulation by scaling the dwell
// times). The same 1024 commands for all, one in eight beyond the hexagon. Counters
// x_textbook_float and x_textbook_double give the time relative to the textbook version.
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>
#include <random>
#include <string>

#include "baseline_ratio.hpp"
#include "dqfx/current_sensing.hpp"
#include "dqfx/pwm.hpp"
#include "dqfx/svm.hpp"

namespace {

struct command {
  double alpha, beta, bus;
};

std::array<command, 1024> commands() {
  std::array<command, 1024> out{};
  std::mt19937 rng{2};
  std::uniform_real_distribution<double> turn{0.0, 6.283185307179586}, inside{0.0, 0.57}, beyond{0.6, 0.75},
      bus{0.7, 0.95};
  for (std::size_t i = 0; i < out.size(); ++i) {
    const double t = turn(rng), m = i % 8 == 0 ? beyond(rng) : inside(rng);
    out[i] = {m * std::cos(t), m * std::sin(t), bus(rng)};
  }
  return out;
}

/// The textbook modulator, duties relative to a bus of 1 (or of `bus`, by one division).
template <class F> void textbook_svm(F alpha, F beta, F bus, F duty[3]) {
  constexpr F sqrt3 = F(1.7320508075688772935);
  alpha /= bus;
  beta /= bus;
  const int code = (beta > F(0) ? 1 : 0) + (sqrt3 * alpha - beta > F(0) ? 2 : 0) + (-sqrt3 * alpha - beta > F(0) ? 4 : 0);
  static constexpr int sector_of_code[8] = {1, 2, 6, 1, 4, 3, 5, 1};
  const int k = sector_of_code[code];
  // Unit vectors of the active vectors V_k (at (k-1)*60 deg) and V_k+1 (at k*60 deg).
  static constexpr F c60[7] = {F(1), F(0.5), F(-0.5), F(-1), F(-0.5), F(0.5), F(1)};
  static constexpr F s60[7] = {F(0), F(0.86602540378443864676), F(0.86602540378443864676), F(0),
                               F(-0.86602540378443864676), F(-0.86602540378443864676), F(0)};
  static constexpr int on[6][3] = {{1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0, 1, 1}, {0, 0, 1}, {1, 0, 1}};
  F t1 = sqrt3 * (s60[k] * alpha - c60[k] * beta);
  F t2 = sqrt3 * (c60[k - 1] * beta - s60[k - 1] * alpha);
  const F active = t1 + t2;
  if (active > F(1)) {
    t1 /= active;
    t2 /= active;
  }
  const F t0 = F(1) - t1 - t2;
  for (int p = 0; p < 3; ++p) duty[p] = F(0.5) * t0 + t1 * F(on[k - 1][p]) + t2 * F(on[k % 6][p]);
}

template <class F> void bench_textbook(benchmark::State& state) {
  const auto c = commands();
  std::array<std::array<F, 3>, 1024> in{};
  for (std::size_t i = 0; i < in.size(); ++i) in[i] = {F(c[i].alpha), F(c[i].beta), F(c[i].bus)};
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & 1023];
    F d[3];
    textbook_svm(x[0], x[1], x[2], d);
    benchmark::DoNotOptimize(d);
  }
  dqfx_bench::record_baseline(std::string{"svm/textbook_"} + (sizeof(F) == 4 ? "float" : "double"), timer.ns_per_call(state));
}

template <class T, class Scheme, bool with_bus> void bench_dqfx(benchmark::State& state) {
  const auto c = commands();
  std::array<std::array<T, 3>, 1024> in{};
  for (std::size_t i = 0; i < in.size(); ++i)
    in[i] = {dqfx::from_double<T>(c[i].alpha), dqfx::from_double<T>(c[i].beta), dqfx::from_double<T>(c[i].bus)};
  std::size_t i = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const auto& x = in[i++ & 1023];
    benchmark::DoNotOptimize(x);
    if constexpr (with_bus) {
      benchmark::DoNotOptimize(dqfx::svm<Scheme>(dqfx::stationary<T>{x[0], x[1]}, x[2]));
    } else {
      benchmark::DoNotOptimize(dqfx::svm<Scheme>(dqfx::stationary<T>{x[0], x[1]}));
    }
  }
  dqfx_bench::report_ratios(state, "svm/", timer.ns_per_call(state));
}

template <class T> void bench_compare(benchmark::State& state) {
  const auto c = commands();
  std::array<dqfx::phases<T>, 1024> in{};
  for (std::size_t i = 0; i < in.size(); ++i) in[i] = dqfx::svm(dqfx::stationary<T>{dqfx::from_double<T>(c[i].alpha), dqfx::from_double<T>(c[i].beta)}).duty;
  const dqfx::centre_aligned_pwm pwm{4250, 12};
  std::size_t i = 0;
  for (auto _ : state) {
    const auto& d = in[i++ & 1023];
    benchmark::DoNotOptimize(d);
    benchmark::DoNotOptimize(pwm.compare(d));
  }
}

template <class T> void bench_three_shunt(benchmark::State& state) {
  const auto c = commands();
  const auto channel = dqfx::current_channel<T>::from_amplifier(dqfx::adc_format{12, 4}, -0.0161, 20.0);
  const dqfx::three_shunt<T> sensor{{channel, channel, channel}, dqfx::from_double<T>(0.05)};
  std::array<dqfx::phases<T>, 1024> duty{};
  std::array<dqfx::phases<dqfx::adc_sample>, 1024> codes{};
  for (std::size_t i = 0; i < duty.size(); ++i) {
    duty[i] = dqfx::svm(dqfx::stationary<T>{dqfx::from_double<T>(c[i].alpha), dqfx::from_double<T>(c[i].beta)}).duty;
    codes[i] = {{static_cast<std::uint16_t>(2048 + 500 * c[i].alpha), true},
                {static_cast<std::uint16_t>(2048 + 500 * c[i].beta), true},
                {static_cast<std::uint16_t>(2048 - 500 * (c[i].alpha + c[i].beta)), true}};
  }
  std::size_t i = 0;
  for (auto _ : state) {
    const std::size_t k = i++ & 1023;
    benchmark::DoNotOptimize(codes[k]);
    benchmark::DoNotOptimize(sensor.reconstruct(codes[k], duty[k]));
  }
}

namespace mod = dqfx::modulation;

template <class T> void register_type(const std::string& type) {
  benchmark::RegisterBenchmark(("svm/" + type).c_str(), bench_dqfx<T, mod::centred, false>);
  benchmark::RegisterBenchmark(("svm/" + type + "/with_bus").c_str(), bench_dqfx<T, mod::centred, true>);
  benchmark::RegisterBenchmark(("svm/" + type + "/sinusoidal").c_str(), bench_dqfx<T, mod::sinusoidal, false>);
  benchmark::RegisterBenchmark(("svm/" + type + "/clamp_low").c_str(), bench_dqfx<T, mod::clamp_low, false>);
  benchmark::RegisterBenchmark(("svm/" + type + "/clamp_peak").c_str(), bench_dqfx<T, mod::clamp_peak, false>);
  benchmark::RegisterBenchmark(("pwm_compare/" + type).c_str(), bench_compare<T>);
  benchmark::RegisterBenchmark(("three_shunt/" + type).c_str(), bench_three_shunt<T>);
}

[[maybe_unused]] const bool registered = [] {
  benchmark::RegisterBenchmark("svm/textbook_float", bench_textbook<float>);
  benchmark::RegisterBenchmark("svm/textbook_double", bench_textbook<double>);
  register_type<dqfx::q15>("q15");
  register_type<dqfx::q31>("q31");
  register_type<float>("float");
  register_type<double>("double");
  return true;
}();

}  // namespace
