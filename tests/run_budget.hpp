// SPDX-License-Identifier: MIT
#pragma once
// Sanitized builds run the same tests on sparser grids: ASan and UBSan make the dense
// sweeps about ten times slower, and their job there is to find undefined behaviour,
// which the sparser grids still reach in every branch. The optimised builds keep the
// dense sweeps that prove the bounds.

#if defined(__SANITIZE_ADDRESS__)
#define DQFX_TEST_SANITIZED 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(undefined_behavior_sanitizer)
#define DQFX_TEST_SANITIZED 1
#endif
#endif

namespace dqfx_test {
#ifdef DQFX_TEST_SANITIZED
inline constexpr bool sanitized = true;
#else
inline constexpr bool sanitized = false;
#endif
/// Stride for a dense sweep: `dense` in optimised builds, `factor` times coarser when
/// sanitized.
constexpr int sweep_stride(int dense, int factor = 8) { return sanitized ? dense * factor : dense; }
}  // namespace dqfx_test
