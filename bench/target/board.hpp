// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// What the harness needs from a board. The QEMU build supplies these through
/// semihosting (board_semihosting.cpp); on a real board supply the same three functions
/// (clock set-up, a character output, a way to stop) and keep everything else.

namespace dqfx_target {

/// Called by the reset handler before main(): clocks, console, nothing else.
void board_init() noexcept;
/// Writes a NUL-terminated string to the console (no newline added).
void board_write(const char* text) noexcept;
/// Stops the program with an exit status (0 = success); does not return.
[[noreturn]] void board_exit(int status) noexcept;

}  // namespace dqfx_target
