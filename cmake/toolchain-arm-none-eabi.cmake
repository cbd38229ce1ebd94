# SPDX-License-Identifier: MIT
# Cross compiling for bare-metal Arm Cortex-M with Debian's gcc-arm-none-eabi and newlib.
# The CPU flags are not set here: each Cortex-M image chooses its own (see
# bench/target/CMakeLists.txt), so that one build directory can hold several cores.
set(CMAKE_SYSTEM_NAME Generic)
set(CMAKE_SYSTEM_PROCESSOR arm)

set(CMAKE_C_COMPILER arm-none-eabi-gcc)
set(CMAKE_CXX_COMPILER arm-none-eabi-g++)
set(CMAKE_ASM_COMPILER arm-none-eabi-gcc)

# Bare metal has no default start-up code or system calls: test the compiler on a static
# library instead of a linked program.
set(CMAKE_TRY_COMPILE_TARGET_TYPE STATIC_LIBRARY)

set(CMAKE_FIND_ROOT_PATH_MODE_PROGRAM NEVER)
set(CMAKE_FIND_ROOT_PATH_MODE_LIBRARY ONLY)
set(CMAKE_FIND_ROOT_PATH_MODE_INCLUDE ONLY)
set(CMAKE_FIND_ROOT_PATH_MODE_PACKAGE ONLY)

# No exceptions, no RTTI, no unwinding tables: what firmware builds use.
set(CMAKE_CXX_FLAGS_INIT "-fno-exceptions -fno-rtti -fno-unwind-tables -fno-asynchronous-unwind-tables -ffunction-sections -fdata-sections")
