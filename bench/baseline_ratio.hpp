// SPDX-License-Identifier: MIT
#pragma once
// Ratios to a textbook baseline as benchmark counters: a baseline benchmark records its
// time per call under a name, and a kernel benchmark registered after it reports
// `x_<name>` = its own time per call / the baseline's (below 1 is faster). Times are the
// thread's CPU time around the timing loop of the final run (POSIX clock_gettime), so a
// busy machine slows both sides alike.

#include <benchmark/benchmark.h>

#include <time.h>

#include <map>
#include <string>

#include "dqfx/fixed.hpp"

namespace dqfx_bench {

inline std::map<std::string, double>& baseline_times() {
  static std::map<std::string, double> times;
  return times;
}

/// Measures the time per iteration of the loop that runs between construction and
/// `ns_per_call()`.
class loop_timer {
 public:
  loop_timer() : start_{now_ns()} {}
  double ns_per_call(const benchmark::State& state) const {
    const double ns = now_ns() - start_;
    return state.iterations() > 0 ? ns / static_cast<double>(state.iterations()) : 0.0;
  }

 private:
  static double now_ns() {
    timespec t{};
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
    return static_cast<double>(t.tv_sec) * 1e9 + static_cast<double>(t.tv_nsec);
  }
  double start_;
};

inline void record_baseline(const std::string& name, double ns_per_call) { baseline_times()[name] = ns_per_call; }

/// Sets x_<baseline> counters for every baseline whose name starts with `family`.
inline void report_ratios(benchmark::State& state, const std::string& family, double ns_per_call) {
  for (const auto& [name, ns] : baseline_times())
    if (name.rfind(family, 0) == 0 && ns > 0) state.counters["x_" + name.substr(family.size())] = ns_per_call / ns;
}

/// Registers a kernel family: the two textbook baselines first (their times are the
/// ratios' denominators), then dqfx in all four types. `textbook(tag)` and `library(tag)`
/// return the benchmark function for the type of `tag`.
template <class Textbook, class Library>
void register_family(const std::string& family, Textbook textbook, Library library) {
  benchmark::RegisterBenchmark((family + "textbook_float").c_str(), textbook(float{}));
  benchmark::RegisterBenchmark((family + "textbook_double").c_str(), textbook(double{}));
  benchmark::RegisterBenchmark((family + "q15").c_str(), library(dqfx::q15{}));
  benchmark::RegisterBenchmark((family + "q31").c_str(), library(dqfx::q31{}));
  benchmark::RegisterBenchmark((family + "float").c_str(), library(float{}));
  benchmark::RegisterBenchmark((family + "double").c_str(), library(double{}));
}

}  // namespace dqfx_bench
