# SPDX-License-Identifier: MIT
# Compiler and linker flags per Cortex-M core for arm-none-eabi-gcc/g++, installed with
# the package (find_package(dqfx) and add_subdirectory(dqfx) both provide them):
#
#   dqfx_cortex_m_flags(<core> <variable>)   the flags as a list, e.g. for a toolchain file
#   dqfx_target_cortex_m(<target> <core>)    compiles and links <target> for <core>
#
# <core>: m0, m0plus (ARMv6-M, no FPU), m3 (ARMv7-M, no FPU), m4f (single-precision FPU),
# m7 (double-precision FPU), m33 (ARMv8-M mainline, single-precision FPU). The FPU cores
# use the hard-float calling convention; link every object of an image with the same
# core. Cores whose FPU is optional on silicon (M4, M7, M33 without it) use the m3 flags
# with their own -mcpu.
include_guard(GLOBAL)

set(DQFX_CORTEX_M_CORES m0 m0plus m3 m4f m7 m33)

# The table lives inside the function, so that it does not depend on the variable scope
# the file was included from.
function(dqfx_cortex_m_flags core variable)
  set(m0 -mcpu=cortex-m0 -mthumb -mfloat-abi=soft)
  set(m0plus -mcpu=cortex-m0plus -mthumb -mfloat-abi=soft)
  set(m3 -mcpu=cortex-m3 -mthumb -mfloat-abi=soft)
  set(m4f -mcpu=cortex-m4 -mthumb -mfpu=fpv4-sp-d16 -mfloat-abi=hard)
  set(m7 -mcpu=cortex-m7 -mthumb -mfpu=fpv5-d16 -mfloat-abi=hard)
  set(m33 -mcpu=cortex-m33 -mthumb -mfpu=fpv5-sp-d16 -mfloat-abi=hard)
  if(NOT core MATCHES "^(m0|m0plus|m3|m4f|m7|m33)$")
    message(FATAL_ERROR "dqfx: unknown Cortex-M core '${core}' (one of: m0 m0plus m3 m4f m7 m33)")
  endif()
  set(${variable} ${${core}} PARENT_SCOPE)
endfunction()

function(dqfx_target_cortex_m target core)
  dqfx_cortex_m_flags(${core} flags)
  target_compile_options(${target} PRIVATE ${flags})
  target_link_options(${target} PRIVATE ${flags})
endfunction()
