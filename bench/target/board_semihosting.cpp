// SPDX-License-Identifier: MIT
// The board under QEMU: console and exit status through Arm semihosting (QEMU option
// -semihosting-config enable=on,target=native). Operation numbers and the exit reason
// code are those of Arm's "Semihosting for AArch32 and AArch64" specification (Arm IHI
// 0087): SYS_WRITE0 = 0x04, SYS_EXIT = 0x18, SYS_EXIT_EXTENDED = 0x20,
// ADP_Stopped_ApplicationExit = 0x20026.
#include <cstdint>

#include "board.hpp"

namespace dqfx_target {
namespace {

// On M-profile cores a semihosting call is BKPT 0xAB with the operation in r0 and a
// pointer to its argument in r1; the result comes back in r0.
std::uintptr_t semihost(std::uintptr_t operation, const void* argument) noexcept {
  std::uintptr_t result;
  asm volatile(
      "mov r0, %1\n\t"
      "mov r1, %2\n\t"
      "bkpt 0xab\n\t"
      "mov %0, r0"
      : "=r"(result)
      : "r"(operation), "r"(argument)
      : "r0", "r1", "memory");
  return result;
}

constexpr std::uintptr_t sys_write0 = 0x04;
constexpr std::uintptr_t sys_exit_extended = 0x20;
constexpr std::uint32_t application_exit = 0x20026;

}  // namespace

void board_init() noexcept {}

void board_write(const char* text) noexcept { semihost(sys_write0, text); }

void board_exit(int status) noexcept {
  // SYS_EXIT_EXTENDED takes {reason, status}: QEMU exits with `status`.
  const std::uint32_t block[2] = {application_exit, static_cast<std::uint32_t>(status)};
  semihost(sys_exit_extended, block);
  for (;;) {
  }
}

}  // namespace dqfx_target
