# SPDX-License-Identifier: MIT
# ctest script (cmake -P): the layering check must fail on a deliberately wrong include.
# Copies INCLUDE_DIR to WORK_DIR, makes number.hpp (layer 1) include current_loop.hpp
# (layer 4), and runs check_layers.cmake on the copy, expecting its failure message.
cmake_minimum_required(VERSION 3.20)
get_filename_component(INCLUDE_DIR "${INCLUDE_DIR}" ABSOLUTE)
file(REMOVE_RECURSE ${WORK_DIR})
file(COPY ${INCLUDE_DIR}/dqfx DESTINATION ${WORK_DIR})
file(APPEND ${WORK_DIR}/dqfx/number.hpp "#include \"dqfx/current_loop.hpp\"\n")
execute_process(COMMAND ${CMAKE_COMMAND} -DINCLUDE_DIR=${WORK_DIR} -P ${CMAKE_CURRENT_LIST_DIR}/check_layers.cmake
  RESULT_VARIABLE rc ERROR_VARIABLE err OUTPUT_QUIET)
if(rc EQUAL 0 OR NOT err MATCHES "number.hpp \\(layer 1\\) includes current_loop.hpp \\(layer 4\\)")
  message(FATAL_ERROR "the layering check did not catch number.hpp including current_loop.hpp:\n${err}")
endif()
message(STATUS "the layering check caught the wrong include:\n${err}")
