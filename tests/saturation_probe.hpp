// SPDX-License-Identifier: MIT
#pragma once
// Compile-time probe: does this build declare dqfx::saturation_events()? The fallback
// below and dqfx are both found by one unqualified lookup; overload resolution prefers
// dqfx's non-template function when it exists, so `events_type` is `absent` only in a
// build without the counter.

#include "dqfx/saturation.hpp"

namespace saturation_probe_fallback {
struct absent {};
template <class = void> absent saturation_events() noexcept;
}  // namespace saturation_probe_fallback

namespace saturation_probe {
using namespace dqfx;
using namespace saturation_probe_fallback;
using absent = saturation_probe_fallback::absent;
using events_type = decltype(saturation_events());
}  // namespace saturation_probe
