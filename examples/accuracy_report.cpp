// SPDX-License-Identifier: MIT
// Prints, for every kernel and number type, the max and RMS error against the
// independent long double reference of tests/reference/. docs/accuracy.md holds this
// program's output (`cmake/run.sh docs` writes it; the docs.table tests compare it).

#include <cstdio>

#include "accuracy/trig.hpp"
#if __has_include("accuracy/transforms.hpp")
#include "accuracy/transforms.hpp"
#define DQFX_REPORT_TRANSFORMS 1
#endif

int main() {
  std::printf("# dqfx accuracy report\n");
  dqfx_report::report_trig();
#ifdef DQFX_REPORT_TRANSFORMS
  dqfx_report::report_transforms();
#endif
  return 0;
}
