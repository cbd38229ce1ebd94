// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// Opt-in saturation checking for host builds.
///
/// Define DQFX_COUNT_SATURATION before including any dqfx header (or with -D) and every
/// saturation event in the number layer (a clamped sum, product, conversion or
/// accumulator) increments `dqfx::saturation_events()`. Define DQFX_TRAP_SATURATION
/// instead to stop at the first event (`__builtin_trap`), so a debugger or a death test
/// shows where the scaling overflowed. With neither defined the hook is empty and the
/// optimiser removes it. Events during constant evaluation are not counted. Saturation
/// is the defined answer in every mode; checking only reports it.

#include <cstdint>

#include "dqfx/detail/language.hpp"

namespace dqfx {

#if defined(DQFX_COUNT_SATURATION) || defined(DQFX_TRAP_SATURATION)
inline constexpr bool saturation_checking = true;
#else
inline constexpr bool saturation_checking = false;
#endif

#if defined(DQFX_COUNT_SATURATION)
namespace detail {
inline std::uint64_t saturation_counter = 0;  // host test builds only; not thread-safe
}
/// Number of saturation events since the last reset (DQFX_COUNT_SATURATION builds).
inline std::uint64_t saturation_events() noexcept { return detail::saturation_counter; }
inline void reset_saturation_events() noexcept { detail::saturation_counter = 0; }
#endif

namespace detail {

constexpr void note_saturation() noexcept {
#if defined(DQFX_COUNT_SATURATION) || defined(DQFX_TRAP_SATURATION)
  if (__builtin_is_constant_evaluated()) return;
#if defined(DQFX_TRAP_SATURATION)
  __builtin_trap();
#else
  ++saturation_counter;
#endif
#endif
}

}  // namespace detail
}  // namespace dqfx
