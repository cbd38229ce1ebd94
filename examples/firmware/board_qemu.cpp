// SPDX-License-Identifier: MIT
// The board under QEMU (mps2 machines): SysTick plays the PWM timer's period interrupt,
// the console and the exit status go through Arm semihosting (QEMU option
// -semihosting-config enable=on,target=native). SysTick registers from the Armv7-M
// Architecture Reference Manual (0xE000E010..18); semihosting operations from Arm's
// "Semihosting for AArch32 and AArch64" (Arm IHI 0087): SYS_WRITE0 = 0x04,
// SYS_EXIT_EXTENDED = 0x20 with reason ADP_Stopped_ApplicationExit = 0x20026.
#include <cstdint>

#include "board.hpp"
#include "control.hpp"

namespace board {

volatile registers peripherals{};

namespace {

// Functions, not references initialised at start-up: the image has no static constructor.
volatile std::uint32_t& systick_control() noexcept { return *reinterpret_cast<volatile std::uint32_t*>(0xE000E010u); }
volatile std::uint32_t& systick_reload() noexcept { return *reinterpret_cast<volatile std::uint32_t*>(0xE000E014u); }
volatile std::uint32_t& systick_value() noexcept { return *reinterpret_cast<volatile std::uint32_t*>(0xE000E018u); }

// QEMU's mps2 core clock is 25 MHz: 1250 ticks are one 50 us PWM period.
constexpr std::uint32_t period_ticks = 1250;

volatile bool period_pending = false;
volatile std::uint32_t overruns = 0;
std::uint32_t instructions_per_tick = 1;
std::uint64_t handler_ticks_total = 0;
std::uint32_t handler_ticks_max = 0;
std::uint32_t handler_calls = 0;

std::uintptr_t semihost(std::uintptr_t operation, const void* argument) noexcept {
  std::uintptr_t result;
  asm volatile("mov r0, %1\n\tmov r1, %2\n\tbkpt 0xab\n\tmov %0, r0"
               : "=r"(result)
               : "r"(operation), "r"(argument)
               : "r0", "r1", "memory");
  return result;
}

// With QEMU's -icount shift=0 every instruction advances the virtual clock by the same
// amount: count the ticks of a block of NOPs once to turn ticks into instructions.
// A function of its own: the caller's literal pool stays within reach.
__attribute__((noinline)) void nop_block() noexcept { asm volatile(".rept 1000\n\tnop\n\t.endr"); }

void calibrate_ticks() noexcept {
  systick_control() = 0;
  systick_reload() = 0xFFFFFFu;
  systick_value() = 0;
  systick_control() = 5u;  // enable, core clock, no interrupt
  const std::uint32_t start = systick_value();
  nop_block();
  const std::uint32_t ticks = (start - systick_value()) & 0xFFFFFFu;
  constexpr std::uint32_t instructions = 1002;  // bl, 1000 nops, bx lr
  instructions_per_tick = ticks > 0 ? (instructions + ticks / 2) / ticks : 1;
  systick_control() = 0;
}

}  // namespace

void start_period_interrupt() noexcept {
  calibrate_ticks();
  systick_reload() = period_ticks - 1;
  systick_value() = 0;
  systick_control() = 7u;  // enable, core clock, interrupt
}

void stop_period_interrupt() noexcept { systick_control() = 0; }

bool wait_for_period() noexcept {
  // Interrupts masked between the test and the sleep, so that a period cannot slip in
  // between them; WFI still wakes on the pending interrupt, which runs after cpsie.
  asm volatile("cpsid i" ::: "memory");
  while (!period_pending) asm volatile("wfi\n\tcpsie i\n\tisb\n\tcpsid i" ::: "memory");
  period_pending = false;
  asm volatile("cpsie i" ::: "memory");
  return overruns == 0;
}

std::uint32_t handler_instructions_mean() noexcept {
  return handler_calls ? static_cast<std::uint32_t>(handler_ticks_total * instructions_per_tick / handler_calls) : 0;
}
std::uint32_t handler_instructions_max() noexcept { return handler_ticks_max * instructions_per_tick; }

void write(const char* text) noexcept { semihost(0x04, text); }

void write(std::int32_t value) noexcept {
  char text[12];
  char* p = text + sizeof text;
  *--p = '\0';
  const bool negative = value < 0;
  std::uint32_t v = negative ? 0u - static_cast<std::uint32_t>(value) : static_cast<std::uint32_t>(value);
  do {
    *--p = static_cast<char>('0' + v % 10);
    v /= 10;
  } while (v != 0);
  if (negative) *--p = '-';
  write(p);
}

void exit(int status) noexcept {
  const std::uint32_t block[2] = {0x20026u, static_cast<std::uint32_t>(status)};
  semihost(0x20, block);
  for (;;) {
  }
}

}  // namespace board

// SysTick: the period interrupt, timed in SysTick ticks (it counts down from the reload).
extern "C" void period_interrupt() {
  const std::uint32_t start = board::systick_value();
  pwm_period_handler();
  const std::uint32_t end = board::systick_value();
  // Down-counter: from `start` down to `end`, through one reload if it wrapped.
  const std::uint32_t ticks = start >= end ? start - end : start + board::period_ticks - end;
  if (board::period_pending) board::overruns = board::overruns + 1;
  board::period_pending = true;
  board::handler_ticks_total += ticks;
  board::handler_ticks_max = ticks > board::handler_ticks_max ? ticks : board::handler_ticks_max;
  ++board::handler_calls;
}
