// SPDX-License-Identifier: MIT
// Torque command to current set-points per type, beside the textbook double computation
// of tests/reference (closed-form MTPA, Newton's method on iq, std::sqrt limits). Both get
// the same 1024 varied calls: torque beyond the peak now and then, speeds up to 2.5 times
// base speed (so the voltage ellipse cuts in), bus voltage varying.
#include <benchmark/benchmark.h>

#include <array>
#include <cmath>
#include <cstddef>

#include "dqfx/field_weakening.hpp"
#include "reference/setpoint_reference.hpp"

namespace {

// The simulator demo's invented motor on invented bases, 30 A limit (as in the tests).
constexpr double two_pi = 6.283185307179586477;
constexpr dqfx::per_unit_base base{40.0, 80.0, two_pi * 1000, 4};
constexpr dqfx::pm_motor_data motor{0.12, 180e-6, 260e-6, 0.011};
constexpr dqfx::torque_setpoint_parameters parameters = dqfx::design_torque_setpoint(base, motor, 30.0);

struct call {
  double torque, speed, bus, vd, vq;
};

std::array<call, 1024> calls() {
  std::array<call, 1024> c{};
  for (std::size_t k = 0; k < c.size(); ++k) {
    const double x = static_cast<double>(k);
    c[k] = {0.75 * std::sin(0.37 * x), 0.9 * std::fabs(std::sin(0.011 * x)), 0.55 + 0.05 * std::cos(0.05 * x),
            -0.2 * std::fabs(std::sin(0.013 * x)), 0.33 * std::fabs(std::cos(0.017 * x))};
  }
  return c;
}

template <class T> struct prepared {
  T torque, speed, bus;
  dqfx::rotating<T> voltage;
};

template <class T> std::array<prepared<T>, 1024> prepare() {
  std::array<prepared<T>, 1024> p{};
  const auto c = calls();
  for (std::size_t k = 0; k < p.size(); ++k) {
    using dqfx::from_double;
    p[k] = {from_double<T>(c[k].torque), from_double<T>(c[k].speed), from_double<T>(c[k].bus),
            {from_double<T>(c[k].vd), from_double<T>(c[k].vq)}};
  }
  return p;
}

template <class T> void bench_torque_setpoint(benchmark::State& state) {
  const auto in = prepare<T>();
  const dqfx::torque_setpoint<T> sp{parameters};
  std::size_t k = 0;
  for (auto _ : state) {
    const prepared<T>& x = in[k++ & 1023];
    benchmark::DoNotOptimize(x);
    const dqfx::current_setpoint<T> out = sp(x.torque, x.speed, x.bus);
    benchmark::DoNotOptimize(out);
  }
}

template <class T> void bench_field_weakening(benchmark::State& state) {
  const auto in = prepare<T>();
  dqfx::field_weakening<T> fw{parameters, {0.02, 0.9}};
  const T limit = dqfx::from_double<T>(0.33);
  std::size_t k = 0;
  for (auto _ : state) {
    const prepared<T>& x = in[k++ & 1023];
    benchmark::DoNotOptimize(x);
    const dqfx::current_setpoint<T> out = fw.step(x.torque, x.speed, x.bus, x.voltage, limit);
    benchmark::DoNotOptimize(out);
  }
}

void bench_textbook_setpoint(benchmark::State& state) {
  const auto in = calls();
  const reference::textbook_setpoint book{{parameters.ld, parameters.lq, parameters.flux, parameters.current_limit},
                                          parameters.voltage_use};
  std::size_t k = 0;
  for (auto _ : state) {
    const call& x = in[k++ & 1023];
    benchmark::DoNotOptimize(x);
    const reference::current_point out = book(x.torque, x.speed, x.bus);
    benchmark::DoNotOptimize(out);
  }
}

}  // namespace

BENCHMARK_TEMPLATE(bench_torque_setpoint, dqfx::q15);
BENCHMARK_TEMPLATE(bench_torque_setpoint, dqfx::q31);
BENCHMARK_TEMPLATE(bench_torque_setpoint, float);
BENCHMARK_TEMPLATE(bench_torque_setpoint, double);
BENCHMARK_TEMPLATE(bench_field_weakening, dqfx::q15);
BENCHMARK_TEMPLATE(bench_field_weakening, dqfx::q31);
BENCHMARK_TEMPLATE(bench_field_weakening, float);
BENCHMARK_TEMPLATE(bench_field_weakening, double);
BENCHMARK(bench_textbook_setpoint);
