// SPDX-License-Identifier: MIT
#pragma once
// Shared pieces of the accuracy report: error statistics and one table row per
// kernel and type. Each kernel family adds examples/accuracy/<family>.hpp with a
// `report_<family>()` function that accuracy_report.cpp calls.

#include <cmath>
#include <cstddef>
#include <cstdio>

namespace dqfx_report {

/// Running max and RMS of an absolute error.
struct error_stats {
  double max_abs = 0.0;
  double sum_sq = 0.0;
  std::size_t count = 0;
  void add(double error) {
    const double e = std::fabs(error);
    if (e > max_abs || std::isnan(e)) max_abs = e;
    sum_sq += e * e;
    ++count;
  }
  double rms() const { return count ? std::sqrt(sum_sq / static_cast<double>(count)) : 0.0; }
};

inline void print_header(const char* title) {
  std::printf("\n%s\n\n", title);
  std::printf("| kernel | type | inputs | max error (unit) | RMS error (unit) | max error (abs) | documented bound |\n");
  std::printf("|---|---|---:|---:|---:|---:|---|\n");
}

/// One markdown row. `unit` is the size of the unit the bound is quoted in (an LSB of
/// the type, a turn fraction, ...) and `unit_name` its short name.
inline void print_row(const char* kernel, const char* type, const error_stats& s, double unit,
                      const char* unit_name, const char* bound) {
  std::printf("| %s | %s | %zu | %.3f %s | %.3f %s | %.3g | %s |\n", kernel, type, s.count,
              s.max_abs / unit, unit_name, s.rms() / unit, unit_name, s.max_abs, bound);
}

}  // namespace dqfx_report
