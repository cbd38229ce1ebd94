# SPDX-License-Identifier: MIT
# ctest script (cmake -P): proves a program's fixed-point paths need no libm. Compiles
# SOURCE for a Cortex-M core, links it with the C driver and neither libm nor libstdc++
# (the link must succeed), and checks that no undefined symbol of the object is one
# that the core's libm.a defines.
#   COMPILER     the arm-none-eabi C++ compiler (the C driver and nm are found beside it)
#   CPU_FLAGS    '|'-separated -mcpu/-mthumb/-mfloat-abi flags
#   FLAGS        '|'-separated compile flags (standard, warnings)
#   INCLUDE_DIR  the include/ directory
#   SOURCE       the program
#   WORK_DIR     scratch directory
cmake_minimum_required(VERSION 3.20)
foreach(var COMPILER CPU_FLAGS FLAGS INCLUDE_DIR SOURCE WORK_DIR)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "check_no_libm.cmake: ${var} is not set")
  endif()
endforeach()

find_program(cxx NAMES ${COMPILER} NO_CACHE)
if(NOT cxx)
  message(FATAL_ERROR "check_no_libm.cmake: '${COMPILER}' not found (cmake/run.sh test installs gcc-arm-none-eabi)")
endif()
string(REGEX REPLACE "g\\+\\+$" "gcc" cc ${cxx})
string(REGEX REPLACE "g\\+\\+$" "nm" nm ${cxx})
string(REPLACE "|" ";" cpu_flags "${CPU_FLAGS}")
string(REPLACE "|" ";" flags "${FLAGS}")

file(REMOVE_RECURSE ${WORK_DIR})
file(MAKE_DIRECTORY ${WORK_DIR})

function(run what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${what} failed:\n${ARGN}\n${out}")
  endif()
  set(out "${out}" PARENT_SCOPE)
endfunction()

run("compile" ${cxx} ${cpu_flags} ${flags} -ffunction-sections -fdata-sections -I${INCLUDE_DIR}
    -c ${SOURCE} -o ${WORK_DIR}/program.o)
# The C driver adds neither -lstdc++ nor -lm: only libc (newlib nano), libgcc and the
# system-call stubs of nosys.
run("link without libm" ${cc} ${cpu_flags} --specs=nano.specs --specs=nosys.specs
    -Wl,--gc-sections -Wl,-Map=${WORK_DIR}/program.map ${WORK_DIR}/program.o -o ${WORK_DIR}/program.elf)

run("nm" ${nm} --undefined-only --format=posix ${WORK_DIR}/program.o)
string(REGEX MATCHALL "[^\n]+" lines "${out}")
set(undefined "")
foreach(line IN LISTS lines)
  string(REGEX REPLACE " .*" "" symbol "${line}")
  list(APPEND undefined ${symbol})
endforeach()

run("locate libm.a" ${cc} ${cpu_flags} -print-file-name=libm.a)
string(STRIP "${out}" libm)
if(NOT EXISTS ${libm})
  message(FATAL_ERROR "check_no_libm.cmake: libm.a for ${CPU_FLAGS} not found (${libm})")
endif()
run("nm libm.a" ${nm} --defined-only --format=posix ${libm})
string(REGEX MATCHALL "[\n^][A-Za-z_][A-Za-z0-9_]* [TtWw] " libm_entries "\n${out}")
set(from_libm "")
foreach(entry IN LISTS libm_entries)
  string(REGEX REPLACE "^[\n]?([A-Za-z0-9_]+) .*" "\\1" symbol "${entry}")
  if(symbol IN_LIST undefined)
    list(APPEND from_libm ${symbol})
  endif()
endforeach()
list(LENGTH libm_entries n_libm)
if(n_libm LESS 100)
  message(FATAL_ERROR "check_no_libm.cmake: read only ${n_libm} functions from ${libm}")
endif()
if(from_libm)
  list(REMOVE_DUPLICATES from_libm)
  message(FATAL_ERROR "fixed-point paths need libm functions: ${from_libm}")
endif()
message(STATUS "undefined symbols (libgcc/libc only): ${undefined}")
message(STATUS "none of the ${n_libm} functions of ${libm} is needed; linked without libm")
