// SPDX-License-Identifier: MIT
// The whole current-loop step per type, beside the textbook float/double step of
// tests/reference (std::sin/std::cos from the angle, std::sqrt limit, sector SVM).
// Both get the same 1024 varied periods; the dqfx step also computes sincos_of<T>. The
// textbook rows run first and each dqfx row reports x_float / x_double: its time per call
// over the textbook step's, measured in the same run (ratios, not absolute times).
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>
#include <string>

#include "baseline_ratio.hpp"

#include "dqfx/current_loop.hpp"
#include "dqfx/sincos.hpp"
#include "reference/current_loop_reference.hpp"

namespace {

// Invented drive and motor (not a real product), as in the tests.
constexpr double two_pi = 6.283185307179586477;
constexpr dqfx::per_unit_base drive{20.0, 60.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data motor{0.1, 0.15e-3, 0.2e-3, 0.004};
constexpr dqfx::current_loop_parameters parameters =
    dqfx::design_current_loop(drive, motor, two_pi * 500, 50e-6);

struct period {
  double ia, ib, ic, theta, speed, id_ref, iq_ref, vdc;
};

// Balanced currents at a lagging angle, speed and set-points that vary; every 8th
// period asks for more voltage than the bus gives, so the limit path is timed too.
std::array<period, 1024> periods() {
  std::array<period, 1024> p{};
  for (std::size_t k = 0; k < p.size(); ++k) {
    const double theta = two_pi * static_cast<double>(k) * 0.0137;
    const double amplitude = 0.2 + 0.5 * static_cast<double>(k % 7) / 7;
    p[k] = {amplitude * std::cos(theta + 0.3), amplitude * std::cos(theta + 0.3 - two_pi / 3),
            amplitude * std::cos(theta + 0.3 + two_pi / 3), std::remainder(theta, two_pi),
            0.6 * static_cast<double>(k % 11) / 11, -0.1, k % 8 == 0 ? 0.95 : 0.4, k % 8 == 0 ? 0.3 : 0.8};
  }
  return p;
}

template <class T> void bench_dqfx_step(benchmark::State& state) {
  struct prepared {
    dqfx::phases<T> current;
    dqfx::angle rotor;
    T speed;
    dqfx::rotating<T> setpoint;
    T bus;
  };
  std::array<prepared, 1024> in{};
  const auto p = periods();
  for (std::size_t k = 0; k < in.size(); ++k) {
    in[k] = {{dqfx::from_double<T>(p[k].ia), dqfx::from_double<T>(p[k].ib), dqfx::from_double<T>(p[k].ic)},
             dqfx::angle::from_radians(p[k].theta),
             dqfx::from_double<T>(p[k].speed),
             {dqfx::from_double<T>(p[k].id_ref), dqfx::from_double<T>(p[k].iq_ref)},
             dqfx::from_double<T>(p[k].vdc)};
  }
  dqfx::current_loop<T> loop{parameters};
  std::size_t k = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const prepared& x = in[k++ & 1023];
    dqfx::current_loop_input<T> step_in{x.current, dqfx::sincos_of<T>(x.rotor), x.speed, x.setpoint, x.bus};
    benchmark::DoNotOptimize(step_in);
    const dqfx::current_loop_output<T> out = loop.step(step_in);
    benchmark::DoNotOptimize(out);
  }
  dqfx_bench::report_ratios(state, "current_loop/textbook_", timer.ns_per_call(state));
}

template <class F> void bench_textbook_step(benchmark::State& state) {
  const auto p = periods();
  reference::current_loop<F> loop;
  loop.kp_d = F(parameters.d.kp);
  loop.ki_d = F(parameters.d.ki);
  loop.kt_d = F(parameters.d.kt);
  loop.kp_q = F(parameters.q.kp);
  loop.ki_q = F(parameters.q.ki);
  loop.kt_q = F(parameters.q.kt);
  loop.ld = F(parameters.ld);
  loop.lq = F(parameters.lq);
  loop.flux = F(parameters.flux);
  std::size_t k = 0;
  const dqfx_bench::loop_timer timer;
  for (auto _ : state) {
    const period& x = p[k++ & 1023];
    F in[8] = {F(x.ia), F(x.ib), F(x.ic), F(x.theta), F(x.speed), F(x.id_ref), F(x.iq_ref), F(x.vdc)};
    benchmark::DoNotOptimize(in);
    const auto out = loop.step_at(in[0], in[1], in[2], in[3], in[4], in[5], in[6], in[7]);
    benchmark::DoNotOptimize(out);
  }
  dqfx_bench::record_baseline(std::string{"current_loop/textbook_"} + (sizeof(F) == 4 ? "float" : "double"),
                              timer.ns_per_call(state));
}

}  // namespace

// The baselines first: their times are the ratios' denominators.
BENCHMARK_TEMPLATE(bench_textbook_step, float)->Name("current_loop/textbook_float");
BENCHMARK_TEMPLATE(bench_textbook_step, double)->Name("current_loop/textbook_double");
BENCHMARK_TEMPLATE(bench_dqfx_step, dqfx::q15)->Name("current_loop/q15");
BENCHMARK_TEMPLATE(bench_dqfx_step, dqfx::q31)->Name("current_loop/q31");
BENCHMARK_TEMPLATE(bench_dqfx_step, float)->Name("current_loop/float");
BENCHMARK_TEMPLATE(bench_dqfx_step, double)->Name("current_loop/double");
