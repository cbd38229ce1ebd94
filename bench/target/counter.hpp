// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// The counter the harness reads, chosen at compile time with DQFX_TARGET_COUNTER:
///   - `DQFX_COUNTER_SYSTICK_ICOUNT` (default): SysTick at the core clock under QEMU with
///     `-icount shift=0`, where virtual time advances a fixed amount per executed
///     instruction, so ticks times a start-up calibration on NOPs are instructions;
///   - `DQFX_COUNTER_DWT`: the DWT cycle counter of a Cortex-M3/M4/M7 chip (cycles);
///   - `DQFX_COUNTER_SYSTICK_CYCLES`: SysTick at the core clock on a chip without a DWT
///     cycle counter, such as the Cortex-M0 (cycles).
/// Register addresses are architectural (Armv7-M / Armv6-M Architecture Reference
/// Manuals: SysTick at 0xE000E010, DWT at 0xE0001000, DEMCR at 0xE000EDFC).

#include <cstdint>

#define DQFX_COUNTER_SYSTICK_ICOUNT 1
#define DQFX_COUNTER_DWT 2
#define DQFX_COUNTER_SYSTICK_CYCLES 3
#ifndef DQFX_TARGET_COUNTER
#define DQFX_TARGET_COUNTER DQFX_COUNTER_SYSTICK_ICOUNT
#endif

namespace dqfx_target {

inline volatile std::uint32_t& reg(std::uintptr_t address) noexcept {
  return *reinterpret_cast<volatile std::uint32_t*>(address);
}

#if DQFX_TARGET_COUNTER == DQFX_COUNTER_DWT

inline constexpr const char* counter_name = "DWT cycle counter";
inline constexpr const char* counter_unit = "cycles";
/// Cycles need no calibration: one count is one cycle.
inline constexpr bool counter_needs_calibration = false;

inline void counter_start() noexcept {
  reg(0xE000EDFCu) |= 1u << 24;       // DEMCR.TRCENA: switch the DWT on
  reg(0xE0001FB0u) = 0xC5ACCE55u;     // DWT lock access (needed on the Cortex-M7)
  reg(0xE0001004u) = 0;               // CYCCNT
  reg(0xE0001000u) |= 1u;             // CTRL.CYCCNTENA
}
inline std::uint32_t counter_read() noexcept { return reg(0xE0001004u); }
/// Counts between two reads (the counter counts up and wraps at 2^32).
inline std::uint32_t counter_elapsed(std::uint32_t start, std::uint32_t end) noexcept {
  return end - start;
}

#else

#if DQFX_TARGET_COUNTER == DQFX_COUNTER_SYSTICK_ICOUNT
inline constexpr const char* counter_name = "SysTick under QEMU -icount shift=0";
inline constexpr const char* counter_unit = "instructions";
inline constexpr bool counter_needs_calibration = true;
#else
inline constexpr const char* counter_name = "SysTick at the core clock";
inline constexpr const char* counter_unit = "cycles";
inline constexpr bool counter_needs_calibration = false;
#endif

inline void counter_start() noexcept {
  reg(0xE000E010u) = 0;          // CSR: stop
  reg(0xE000E014u) = 0xFFFFFFu;  // RVR: full 24-bit range
  reg(0xE000E018u) = 0;          // CVR: any write clears it
  reg(0xE000E010u) = 5u;         // CSR: enable, core clock, no interrupt
}
inline std::uint32_t counter_read() noexcept { return reg(0xE000E018u); }
/// Counts between two reads (the counter counts down and wraps at 2^24).
inline std::uint32_t counter_elapsed(std::uint32_t start, std::uint32_t end) noexcept {
  return (start - end) & 0xFFFFFFu;
}

#endif

}  // namespace dqfx_target
