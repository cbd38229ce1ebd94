# SPDX-License-Identifier: MIT
# ctest script (cmake -P): every header under INCLUDE_DIR/dqfx includes only dqfx headers
# of its own layer or a lower one (DEVELOPERS.md, "Layers"). A header missing from the
# table fails too: place each new header on a layer here.
#   INCLUDE_DIR  the include/ directory
cmake_minimum_required(VERSION 3.20)
get_filename_component(INCLUDE_DIR "${INCLUDE_DIR}" ABSOLUTE)
if(NOT DEFINED INCLUDE_DIR)
  message(FATAL_ERROR "check_layers.cmake: INCLUDE_DIR is not set")
endif()

# 1 numbers, 2 functions and design data, 3 kernels, 4 composed, 5 drive, 6 the umbrella.
set(layer_1 detail/language saturation fixed number extended frames detail/square_root detail/estimation)
set(layer_2 angle sincos polar gain_design per_unit)
set(layer_3 transforms svm pwm current_sensing pi_regulator)
set(layer_4 current_loop torque_setpoint field_weakening encoder hall hall_learner tracking_pll
  flux_observer open_loop_start)
set(layer_5 speed_regulator protection drive_sequence drive)
set(layer_6 dqfx)
foreach(n RANGE 1 6)
  foreach(h IN LISTS layer_${n})
    set(layer_of_${h} ${n})
  endforeach()
endforeach()

file(GLOB_RECURSE headers RELATIVE ${INCLUDE_DIR}/dqfx ${INCLUDE_DIR}/dqfx/*.hpp)
list(SORT headers)
set(problems "")
foreach(header IN LISTS headers)
  string(REGEX REPLACE "\\.hpp$" "" name "${header}")
  if(NOT DEFINED layer_of_${name})
    string(APPEND problems "\n  ${header}: not on any layer (add it to cmake/check_layers.cmake)")
    continue()
  endif()
  file(STRINGS ${INCLUDE_DIR}/dqfx/${header} includes REGEX "^#include \"dqfx/")
  foreach(line IN LISTS includes)
    string(REGEX REPLACE "^#include \"dqfx/([a-z_/]+)\\.hpp\".*" "\\1" used "${line}")
    if(NOT DEFINED layer_of_${used})
      string(APPEND problems "\n  ${header} includes ${used}.hpp, which is not on any layer")
    elseif(layer_of_${used} GREATER layer_of_${name})
      string(APPEND problems
        "\n  ${header} (layer ${layer_of_${name}}) includes ${used}.hpp (layer ${layer_of_${used}})")
    endif()
  endforeach()
endforeach()
if(problems)
  message(FATAL_ERROR "include layering broken:${problems}")
endif()
list(LENGTH headers count)
message(STATUS "include layering holds for ${count} headers")
