// SPDX-License-Identifier: MIT
#pragma once
/// \file
/// dqfx needs C++17 (inline variables, if constexpr, std::is_same_v, ...). Every dqfx header
/// includes this one first, so an older standard (a common vendor-IDE default such as
/// -std=gnu++14) stops with one clear message instead of a hundred unrelated errors.
/// MSVC reports its standard in _MSVC_LANG (__cplusplus stays 199711L without /Zc:__cplusplus).

#if defined(_MSVC_LANG) && _MSVC_LANG > __cplusplus
#define DQFX_DETAIL_CPLUSPLUS _MSVC_LANG
#else
#define DQFX_DETAIL_CPLUSPLUS __cplusplus
#endif
#if DQFX_DETAIL_CPLUSPLUS < 201703L
#error "dqfx needs C++17 or later: compile with -std=c++17 (or gnu++17, c++20; MSVC /std:c++17)"
#endif
#undef DQFX_DETAIL_CPLUSPLUS
