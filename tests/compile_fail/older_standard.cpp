// SPDX-License-Identifier: MIT
// An older standard (-std=gnu++14 is a common vendor-IDE default) stops with one message
// that names C++17 (include/dqfx/detail/language.hpp).
// expect: dqfx needs C++17
// fail-flags: -std=gnu++14
#include "dqfx/dqfx.hpp"
