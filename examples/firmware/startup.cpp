// SPDX-License-Identifier: MIT
// Reset and exception handling for any Cortex-M: the vector table, copying .data and
// clearing .bss, running static constructors (none in this firmware), enabling the FPU
// where there is one, then main(). Addresses and bits from the Armv6-M and Armv7-M
// Architecture Reference Manuals (vector table, CPACR).
#include <cstdint>
#include <cstring>

#include "board.hpp"

extern "C" {
extern std::uint32_t __stack_top[];
extern const unsigned char __data_load[];
extern unsigned char __data_start[], __data_end[], __bss_start[], __bss_end[];
extern void (*const __init_array_start[])();
extern void (*const __init_array_end[])();
void reset_handler();
void fault_handler();
void period_interrupt();  // board_qemu.cpp: SysTick stands in for the PWM timer
int main();
}

using handler = void (*)();

// Initial stack pointer, then the 15 system exceptions. A chip adds its peripheral
// interrupts after these (the PWM timer's update interrupt among them).
__attribute__((section(".vectors"), used)) const handler vectors[16] = {
    reinterpret_cast<handler>(__stack_top),
    reset_handler,
    fault_handler,  // NMI
    fault_handler,  // HardFault
    fault_handler,  // MemManage
    fault_handler,  // BusFault
    fault_handler,  // UsageFault
    nullptr, nullptr, nullptr, nullptr,
    fault_handler,  // SVCall
    fault_handler,  // DebugMonitor
    nullptr,
    fault_handler,  // PendSV
    period_interrupt,  // SysTick
};

void reset_handler() {
#if defined(__ARM_FP)
  // Full access to the FPU (coprocessors 10 and 11) before any float instruction.
  volatile std::uint32_t& cpacr = *reinterpret_cast<volatile std::uint32_t*>(0xE000ED88u);
  cpacr = cpacr | (0xFu << 20);
  asm volatile("dsb\n\tisb" ::: "memory");
#endif
  std::memcpy(__data_start, __data_load, static_cast<std::size_t>(__data_end - __data_start));
  std::memset(__bss_start, 0, static_cast<std::size_t>(__bss_end - __bss_start));
  for (auto* f = __init_array_start; f != __init_array_end; ++f) (*f)();
  // C++ does not allow calling main() from C++ code.
  int status;
  asm volatile("bl main\n\tmov %0, r0" : "=r"(status) : : "r0", "r1", "r2", "r3", "r12", "lr", "memory", "cc");
  board::exit(status);
}

void fault_handler() {
  board::write("firmware: fault\n");
  board::exit(3);
}
