# SPDX-License-Identifier: MIT
# ctest script (cmake -P) for one compile-fail case. The case file names the diagnostic
# it expects on lines `// expect: <text>` (each must appear) and guards the offending code
# with `#ifdef DQFX_SHOULD_FAIL`. The case must compile without that macro (so the failure
# is not a typo elsewhere) and must fail with it, printing the expected texts. An optional
# line `// fail-flags: <flags>` adds flags to the failing compile only (e.g. an older -std).
#   COMPILER     the C++ compiler
#   FLAGS        '|'-separated compile flags
#   INCLUDE_DIR  the include/ directory
#   SOURCE       the case file
cmake_minimum_required(VERSION 3.20)
foreach(var COMPILER FLAGS INCLUDE_DIR SOURCE)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "check_compile_fail.cmake: ${var} is not set")
  endif()
endforeach()
string(REPLACE "|" ";" flags "${FLAGS}")

file(STRINGS ${SOURCE} expect_lines REGEX "^// expect: ")
if(NOT expect_lines)
  message(FATAL_ERROR "${SOURCE}: no '// expect: <text>' line")
endif()
# Every `// expect:` line must appear in the diagnostics (e.g. a quantity and its value).
list(TRANSFORM expect_lines REPLACE "^// expect: " "")

file(STRINGS ${SOURCE} fail_flag_lines REGEX "^// fail-flags: ")
set(fail_flags "")
if(fail_flag_lines)
  list(GET fail_flag_lines 0 fail_flags)
  string(REGEX REPLACE "^// fail-flags: " "" fail_flags "${fail_flags}")
  separate_arguments(fail_flags UNIX_COMMAND "${fail_flags}")
endif()
set(compile ${COMPILER} ${flags} -I${INCLUDE_DIR} -fsyntax-only ${SOURCE})
execute_process(COMMAND ${compile} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "the case does not compile even without DQFX_SHOULD_FAIL:\n${out}")
endif()

execute_process(COMMAND ${compile} -DDQFX_SHOULD_FAIL ${fail_flags} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
if(rc EQUAL 0)
  message(FATAL_ERROR "compiled, but must not: ${SOURCE}")
endif()
foreach(expected IN LISTS expect_lines)
  string(FIND "${out}" "${expected}" at)
  if(at EQUAL -1)
    message(FATAL_ERROR "failed to compile as it should, but without the expected message\n"
                        "expected: ${expected}\ncompiler output:\n${out}")
  endif()
endforeach()
message(STATUS "fails to compile as expected: ${expect_lines}")
