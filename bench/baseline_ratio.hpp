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

}  // namespace dqfx_bench
