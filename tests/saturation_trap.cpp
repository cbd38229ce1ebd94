// SPDX-License-Identifier: MIT
// Built with DQFX_TRAP_SATURATION: `dqfx_saturation_trap clean` runs operations that stay
// in range and exits 0; `dqfx_saturation_trap saturate` must stop at its first clamp. The
// trap raises SIGILL (x86) or SIGTRAP (Arm hosts); the handler reports it and exits 0.
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <cstring>

#include "dqfx/number.hpp"

extern "C" void on_trap(int) {
  std::fputs("trapped at the first saturation\n", stdout);
  std::fflush(stdout);
  std::_Exit(0);
}

int main(int argc, char** argv) {
  static_assert(dqfx::saturation_checking, "this program belongs to the trap build");
  std::signal(SIGILL, on_trap);
  std::signal(SIGTRAP, on_trap);
  const bool saturate = argc > 1 && std::strcmp(argv[1], "saturate") == 0;
  volatile double input = saturate ? 0.75 : 0.25;
  const auto x = dqfx::from_double<dqfx::q15>(input);
  const auto y = dqfx::sum_of_products(x, x, x, x) + x;  // 0.375, or 1.875: saturates
  std::printf("no trap: %d\n", y.raw());
  return y.raw() == 12288 ? 0 : 1;
}
