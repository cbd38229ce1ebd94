# SPDX-License-Identifier: MIT
# ctest script (cmake -P): compiles every header under INCLUDE_DIR/dqfx on its own, as
# one translation unit each, and fails listing the headers that do not compile cleanly.
# Headers are found when the test runs, so a new header is checked without any edit here.
#   COMPILER     compiler name or path (looked up on PATH)
#   FLAGS        compiler flags separated by '|'
#   INCLUDE_DIR  the include/ directory
#   WORK_DIR     scratch directory for the generated translation units
cmake_minimum_required(VERSION 3.20)
foreach(var COMPILER FLAGS INCLUDE_DIR WORK_DIR)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "check_headers.cmake: ${var} is not set")
  endif()
endforeach()

find_program(compiler_path NAMES ${COMPILER} NO_CACHE)
if(NOT compiler_path)
  message(FATAL_ERROR "check_headers.cmake: compiler '${COMPILER}' not found (cmake/run.sh test installs it)")
endif()
string(REPLACE "|" ";" flags "${FLAGS}")

file(GLOB_RECURSE headers RELATIVE ${INCLUDE_DIR} ${INCLUDE_DIR}/dqfx/*.hpp)
list(SORT headers)
if(NOT headers)
  message(FATAL_ERROR "check_headers.cmake: no headers under ${INCLUDE_DIR}/dqfx")
endif()

file(REMOVE_RECURSE ${WORK_DIR})
file(MAKE_DIRECTORY ${WORK_DIR})
set(failed "")
foreach(header IN LISTS headers)
  string(MAKE_C_IDENTIFIER ${header} stem)
  set(tu ${WORK_DIR}/${stem}.cpp)
  # Included twice: the second inclusion must be harmless (#pragma once).
  file(WRITE ${tu} "#include <${header}>\n#include <${header}>\n")
  execute_process(
    COMMAND ${compiler_path} ${flags} -I${INCLUDE_DIR} -c ${tu} -o ${WORK_DIR}/${stem}.o
    RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
  if(rc EQUAL 0)
    message(STATUS "ok      ${header}")
  else()
    message("FAILED  ${header}\n${out}")
    list(APPEND failed ${header})
  endif()
endforeach()

list(LENGTH headers n)
if(failed)
  message(FATAL_ERROR "${COMPILER} ${FLAGS}: these headers do not compile on their own: ${failed}")
endif()
message(STATUS "${n} headers compile on their own with ${COMPILER}")
