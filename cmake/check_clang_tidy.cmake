# SPDX-License-Identifier: MIT
# ctest script (cmake -P): clang-tidy with the checked-in configuration, warnings as
# errors. SOURCE is one translation unit (found configurations: the nearest .clang-tidy
# above it); without SOURCE a translation unit including every header under
# INCLUDE_DIR/dqfx (found when the test runs) is checked with CONFIG.
#   CLANG_TIDY  the clang-tidy program
#   FLAGS       compiler flags, '|'-separated
#   WORK_DIR    scratch directory
cmake_minimum_required(VERSION 3.20)
string(REPLACE "|" ";" flags "${FLAGS}")
set(config "")
if(NOT DEFINED SOURCE)
  file(GLOB_RECURSE headers RELATIVE ${INCLUDE_DIR} ${INCLUDE_DIR}/dqfx/*.hpp)
  list(SORT headers)
  file(MAKE_DIRECTORY ${WORK_DIR})
  set(SOURCE ${WORK_DIR}/all_headers.cpp)
  set(text "")
  foreach(h IN LISTS headers)
    string(APPEND text "#include <${h}>\n")
  endforeach()
  file(WRITE ${SOURCE} "${text}")
  set(config --config-file=${CONFIG})
endif()
execute_process(COMMAND ${CLANG_TIDY} ${config} --quiet ${SOURCE} -- ${flags}
                RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "clang-tidy finds problems in ${SOURCE}:\n${out}\n${err}")
endif()
message(STATUS "clang-tidy: ${SOURCE} is clean")
