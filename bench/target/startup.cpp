// SPDX-License-Identifier: MIT
// Start-up for the Cortex-M harness: vector table, reset handler, fault handler, and
// the one system call newlib's exit() needs. The linker script (mps2.ld, or a board's
// own) provides the symbols declared below.
#include <cstdint>
#include <cstring>

#include "board.hpp"

extern "C" {
extern std::uint32_t __stack_top[];
extern const unsigned char __data_load[];
extern unsigned char __data_start[], __data_end[], __bss_start[], __bss_end[];
extern void (*const __init_array_start[])();
extern void (*const __init_array_end[])();

void dqfx_reset_handler();
void dqfx_fault_handler();
void dqfx_fault_report(const std::uint32_t* frame);
void _exit(int status);
void _fini();
}

namespace {

void write_hex(std::uint32_t v) noexcept {
  char text[11] = "0x";
  for (int i = 0; i < 8; ++i) {
    const unsigned nibble = (v >> (28 - 4 * i)) & 0xFu;
    text[2 + i] = static_cast<char>(nibble < 10 ? '0' + nibble : 'a' + (nibble - 10));
  }
  text[10] = '\0';
  dqfx_target::board_write(text);
}

// Any exception other than reset means the harness is broken: there are no interrupts.
using vector = void (*)();
constexpr int vector_count = 16;

}  // namespace

// Cortex-M vector table: initial stack pointer, then the system exception handlers.
__attribute__((section(".vectors"), used)) const vector dqfx_vectors[vector_count] = {
    reinterpret_cast<vector>(__stack_top),  // initial main stack pointer
    dqfx_reset_handler,                      // reset
    dqfx_fault_handler,                      // NMI
    dqfx_fault_handler,                      // HardFault
    dqfx_fault_handler,                      // MemManage
    dqfx_fault_handler,                      // BusFault
    dqfx_fault_handler,                      // UsageFault
    nullptr, nullptr, nullptr, nullptr,      // reserved
    dqfx_fault_handler,                      // SVCall
    dqfx_fault_handler,                      // DebugMonitor
    nullptr,                                 // reserved
    dqfx_fault_handler,                      // PendSV
    dqfx_fault_handler,                      // SysTick (never enabled)
};

void dqfx_reset_handler() {
#if defined(__ARM_FP)
  // Grant full access to coprocessors 10 and 11 (the FPU) before any float instruction,
  // then make sure the write has taken effect (Armv7-M Architecture Reference Manual,
  // CPACR). This function itself must not touch a float register before it.
  volatile std::uint32_t& cpacr = *reinterpret_cast<volatile std::uint32_t*>(0xE000ED88u);
  cpacr = cpacr | (0xFu << 20);
  asm volatile("dsb\n\tisb" ::: "memory");
#endif
  std::memcpy(__data_start, __data_load, static_cast<std::size_t>(__data_end - __data_start));
  std::memset(__bss_start, 0, static_cast<std::size_t>(__bss_end - __bss_start));
  for (auto* f = __init_array_start; f != __init_array_end; ++f) (*f)();
  dqfx_target::board_init();
  // main()'s status goes to exit() in r0. (C++ forbids calling main, hence the asm.)
  asm volatile(
      "bl main\n\t"
      "bl exit");
  __builtin_unreachable();
}

// Passes the stacked exception frame (r0-r3, r12, lr, pc, xpsr) to the report. The harness
// runs on the main stack only, so MSP holds the frame.
__attribute__((naked)) void dqfx_fault_handler() {
  asm volatile(
      "mrs r0, msp\n\t"
      "ldr r1, =dqfx_fault_report\n\t"
      "bx r1\n\t"
      ".ltorg");
}

void dqfx_fault_report(const std::uint32_t* frame) {
  volatile const std::uint32_t& icsr = *reinterpret_cast<volatile const std::uint32_t*>(0xE000ED04u);
  dqfx_target::board_write("dqfx harness: fault, exception ");
  write_hex(icsr & 0x1FFu);
  dqfx_target::board_write(" at pc ");
  write_hex(frame[6]);
  dqfx_target::board_write("\n");
  dqfx_target::board_exit(3);
}

// newlib's exit() runs the atexit handlers and the .fini_array, calls _fini() (the
// crti/crtn epilogue that -nostartfiles leaves out, empty here) and then _exit().
void _fini() {}
void _exit(int status) { dqfx_target::board_exit(status); }
